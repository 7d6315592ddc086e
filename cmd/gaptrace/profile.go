package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gaptrace/calib"
	"gaptrace/calib/atomicfile"
	"gaptrace/calib/experiment"
	"gaptrace/profile"
	"gaptrace/profile/phases"
	"gaptrace/profile/summary"
	"gaptrace/track/frames"
	"gaptrace/track/tracks"
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

// fpsOf returns the frame rate implied by the tracks' times, frame / t_s
// of the latest point (0 when no point is past the first frame).
func fpsOf(pts []tracks.Point) float64 {
	var last tracks.Point
	for _, p := range pts {
		if p.Frame > last.Frame {
			last = p
		}
	}
	if last.Frame == 0 || !(last.TS > 0) {
		return 0
	}
	return float64(last.Frame) / last.TS
}

// Files written by the profile stage.
const (
	profileSummaryName = "summary.json"
	profileTableName   = "profiles.csv"
	afterStopTableName = "after_stop.csv"
)

func runProfile(args []string, stderr io.Writer) error {
	fs := newFlags("profile", "TRACKS.csv", stderr)
	expPath := fs.String("e", "", "experiment file (YAML)")
	out := fs.String("o", "", "output folder (made if missing; its summary.json, profiles.csv and after_stop.csv are replaced)")
	calPath := fs.String("calibration", "", "calibration.json (default: the one beside TRACKS.csv)")
	bins := fs.Int("bins", 0, "number of layers across the gap (0: 40)")
	var windows windowList
	fs.Var(&windows, "window", "time window START:END in s for a profile; repeat for more (default: the second half of each shear phase)")
	seed := fs.Uint64("seed", 1, "seed of the bootstrap's random numbers")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("profile needs one TRACKS.csv, got %d arguments", fs.NArg())
	}
	if *expPath == "" {
		return badInputf("no experiment file: give -e EXPERIMENT.yaml")
	}
	if *bins < 0 {
		return badInputf("--bins %d: must be positive", *bins)
	}
	if err := ensureDir(*out); err != nil {
		return err
	}
	removeStale(*out, profileSummaryName, profileTableName, afterStopTableName)
	in := fs.Arg(0)
	e, err := experiment.Load(*expPath)
	if err != nil {
		return badInput(err)
	}
	if *calPath == "" {
		*calPath = filepath.Join(filepath.Dir(in), "calibration.json")
	}
	c, err := calib.Load(*calPath)
	if err != nil {
		return badInput(err)
	}
	f, err := os.Open(in)
	if err != nil {
		return badInput(err)
	}
	pts, err := tracks.ReadCSV(f)
	f.Close()
	if err != nil {
		return badInput(fmt.Errorf("%s: %w", in, err))
	}
	if len(pts) == 0 {
		return badInputf("%s: no detections", in)
	}
	maxFrame := 0
	for _, p := range pts {
		maxFrame = max(maxFrame, p.Frame)
	}
	fps := e.Camera.FPS
	if !(fps > 0) {
		fps = fpsOf(pts)
	}
	// Without a motion program the phases come from the tracks beside the
	// moving wall, as in run.
	var detected []phases.Phase
	var phaseWarnings []string
	if len(e.Program()) == 0 && fps > 0 {
		ch := &chain{exp: e, cal: c, info: frames.Info{FPS: fps}}
		detected, phaseWarnings = ch.detectPhases(pts, maxFrame+1)
	}
	r, err := profile.Analyze(pts, e, c, profile.Options{Bins: *bins, Windows: windows, Seed: *seed, Phases: detected})
	if err != nil {
		return badInput(err)
	}
	s := summary.New()
	s.Experiment = e.Name
	s.Calibration = c
	s.Tracking = profile.TrackingCounts(pts)
	s.Warnings = append(s.Warnings, phaseWarnings...)
	if !(fps > 0) {
		fps = 1 / r.FrameIntervalS
	}
	s.Input = summary.Input{Path: in, Frames: maxFrame + 1, FPS: fps, WidthPx: c.WidthPx, HeightPx: c.HeightPx}
	r.Fill(s)
	if err := atomicfile.WriteBytes(filepath.Join(*out, profileTableName), r.ProfilesCSV()); err != nil {
		return err
	}
	if err := atomicfile.WriteBytes(filepath.Join(*out, afterStopTableName), r.AfterStopCSV()); err != nil {
		return err
	}
	return s.Write(filepath.Join(*out, profileSummaryName))
}
