package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gaptrace/calib"
	"gaptrace/profile"
	"gaptrace/profile/pipeline"
)

func init() {
	commands["profile"] = command{
		summary: "velocity profiles, wall slip, bands and motion after cessation from tracks.csv",
		run:     runProfile,
	}
}

// windowList collects repeated --window T0:T1 flags.
type windowList []profile.Window

func (w *windowList) String() string {
	var s []string
	for _, x := range *w {
		s = append(s, fmt.Sprintf("%g:%g", x.T0S, x.T1S))
	}
	return strings.Join(s, ",")
}

func (w *windowList) Set(v string) error {
	a, b, ok := strings.Cut(v, ":")
	if !ok {
		return fmt.Errorf("window %q is not START:END in seconds", v)
	}
	t0, err0 := strconv.ParseFloat(a, 64)
	t1, err1 := strconv.ParseFloat(b, 64)
	if err0 != nil || err1 != nil || !(t1 > t0) {
		return fmt.Errorf("window %q is not START:END in seconds with END after START", v)
	}
	*w = append(*w, profile.Window{Name: fmt.Sprintf("user%d", len(*w)+1), T0S: t0, T1S: t1})
	return nil
}

// everyFlag is --every: a window length in s, or "auto" for the default
// chosen from the tracer density.
type everyFlag float64

func (e *everyFlag) String() string {
	switch {
	case *e == profile.EveryAuto:
		return "auto"
	case *e > 0:
		return strconv.FormatFloat(float64(*e), 'g', -1, 64)
	}
	return ""
}

func (e *everyFlag) Set(v string) error {
	if v == "auto" {
		*e = profile.EveryAuto
		return nil
	}
	s, err := strconv.ParseFloat(v, 64)
	if err != nil || !(s > 0) || math.IsInf(s, 0) {
		return fmt.Errorf("every %q is not a window length in seconds (a positive number) or auto", v)
	}
	*e = everyFlag(s)
	return nil
}

// everyUsage is the help line of --every.
const everyUsage = "time-resolved profiles in consecutive windows of SECONDS through every shear phase (auto: a length chosen from the tracer density)"

func runProfile(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("profile", "TRACKS.csv", stderr)
	expPath := fs.String("e", "", "experiment file (YAML)")
	out := fs.String("o", "", "output folder (made if missing; its summary.json, profiles.csv and after_stop.csv are replaced)")
	calPath := fs.String("calibration", "", "calibration.json (default: the one beside TRACKS.csv)")
	bins := fs.Int("bins", 0, "number of layers across the gap (0: 40)")
	var windows windowList
	fs.Var(&windows, "window", "time window START:END in s for a profile; repeat for more (default: the second half of each shear phase)")
	var every everyFlag
	fs.Var(&every, "every", everyUsage)
	seed := fs.Uint64("seed", 1, "seed of the bootstrap's random numbers")
	var lf logFlags
	lf.add(fs)
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("profile needs one TRACKS.csv, got %d arguments", fs.NArg())
	}
	if *bins < 0 {
		return badInputf("--bins %d: must be positive", *bins)
	}
	e, err := loadExperiment(*expPath)
	if err != nil {
		return err
	}
	rl, err := lf.load(e)
	if err != nil {
		return err
	}
	od, err := holdOutDir(*out, false, false, stderr)
	if err != nil {
		return err
	}
	defer od.release()
	removeStale(*out, summaryName, profileTableName, afterStopTableName)
	in := fs.Arg(0)
	if *calPath == "" {
		*calPath = filepath.Join(filepath.Dir(in), calibrationName)
	}
	c, err := calib.Load(*calPath)
	if err != nil {
		return badInput(err)
	}
	f, err := os.Open(in)
	if err != nil {
		return badInput(err)
	}
	defer f.Close()
	cfg := pipeline.Config{Experiment: e, ExperimentDir: filepath.Dir(*expPath), Bins: *bins, Windows: windows, EveryS: float64(every), Seed: *seed, Log: rl}
	t, err := pipeline.FromTracks(cfg, in, f, c)
	if err != nil {
		return stageErr(err)
	}
	defer t.Close()
	a, err := pipeline.Analyze(ctx, cfg, t)
	if err != nil {
		return stageErr(err)
	}
	if err := writeTables(*out, a); err != nil {
		return err
	}
	return a.Summary.Write(filepath.Join(*out, summaryName))
}
