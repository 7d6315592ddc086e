package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"gaptrace/calib/atomicfile"
	"gaptrace/profile/pipeline"
	"gaptrace/profile/report"
	"gaptrace/profile/summary"
)

func init() {
	commands["run"] = command{
		summary: "the whole chain: calibration, tracking, profiles, verdicts and the report",
		run:     runRun,
	}
}

// runOptions are the flags of run and demo.
type runOptions struct {
	stageOptions
	outDir  string
	force   bool
	holding bool // the caller holds outDir already
	bins    int
	windows windowList
	every   everyFlag
	seed    uint64
	// commandLine is the command as typed, for the report's lab record.
	commandLine []string
}

func runRun(ctx context.Context, args []string, stderr io.Writer) error {
	fs := newFlags("run", "INPUT", stderr)
	var o runOptions
	fs.StringVar(&o.expPath, "e", "", "experiment file (YAML)")
	fs.StringVar(&o.outDir, "o", "", "output folder (must be empty unless --force)")
	fs.BoolVar(&o.force, "force", false, "write into a folder that is not empty, replacing earlier results")
	fs.BoolVar(&o.progress, "progress", false, "show progress even when stderr is not a terminal")
	fs.BoolVar(&o.noJitter, "no-jitter", false, "do not measure and remove the camera's frame-to-frame jitter (a rigidly mounted camera)")
	fs.IntVar(&o.bins, "bins", 0, "number of layers across the gap (0: the default)")
	fs.Var(&o.windows, "window", "time window START:END in s for a profile; repeat for more (default: the second half of each shear phase)")
	fs.Var(&o.every, "every", everyUsage)
	fs.Uint64Var(&o.seed, "seed", 1, "seed of the bootstrap's random numbers")
	o.log.add(fs)
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("run needs one INPUT (video, folder or glob of frames), got %d", fs.NArg())
	}
	o.input = fs.Arg(0)
	o.commandLine = append([]string{argv0, "run"}, args...)
	s, err := runChain(ctx, o, stderr)
	if err != nil {
		return err
	}
	for _, l := range report.VerdictLines(s) {
		fmt.Fprintln(stdout, l)
	}
	fmt.Fprintln(stdout, filepath.Join(o.outDir, report.FileName))
	return nil
}

// digestResult is the input's digest, computed beside the chain.
type digestResult struct {
	d   *report.Digest
	err error
}

// startDigest reads the input once on its own goroutine for its size and
// SHA-256, while the chain decodes it.
func startDigest(input string) <-chan digestResult {
	ch := make(chan digestResult, 1)
	go func() {
		d, err := report.DigestInput(input)
		ch <- digestResult{d, err}
	}()
	return ch
}

// Files of run.
const (
	summaryName        = "summary.json"
	calibrationName    = "calibration.json"
	tracksName         = "tracks.csv"
	profileTableName   = "profiles.csv"
	afterStopTableName = "after_stop.csv"
)

// runFiles are the result files of run, removed before a forced run so
// that a failure cannot leave an old summary beside new tracks.
var runFiles = []string{summaryName, calibrationName, tracksName, profileTableName, afterStopTableName, report.FileName}

// runChain runs every stage and writes every file of run into o.outDir;
// summary.json is written last, so it exists only for a complete run.
func runChain(ctx context.Context, o runOptions, stderr io.Writer) (*summary.Summary, error) {
	if o.bins < 0 {
		return nil, badInputf("--bins %d: must be positive", o.bins)
	}
	exp, err := loadExperiment(o.expPath)
	if err != nil {
		return nil, err
	}
	if err := o.loadLog(exp); err != nil {
		return nil, err
	}
	yaml, _ := os.ReadFile(o.expPath)
	if !o.holding {
		od, err := holdOutDir(o.outDir, true, o.force, stderr)
		if err != nil {
			return nil, err
		}
		defer od.release()
	}
	removeStale(o.outDir, runFiles...)
	// Figures of an earlier run that this one may not draw.
	if old, _ := filepath.Glob(filepath.Join(o.outDir, "figure_*")); len(old) > 0 {
		for _, f := range old {
			os.Remove(f)
		}
	}
	started := time.Now()
	digest := startDigest(o.input)
	cfg := o.config(exp, stderr)
	cfg.Bins, cfg.Windows, cfg.EveryS, cfg.Seed = o.bins, o.windows, float64(o.every), o.seed
	rec, err := pipeline.Open(ctx, cfg)
	if err != nil {
		return nil, stageErr(err)
	}
	defer rec.Close()
	t, err := rec.Track(ctx)
	if err != nil {
		return nil, stageErr(err)
	}
	defer t.Close()
	if err := writeCalibJSON(filepath.Join(o.outDir, calibrationName), t.Calibration, t.PhasesFor(cfg)); err != nil {
		return nil, err
	}
	if err := atomicfile.Write(filepath.Join(o.outDir, tracksName), t.WriteTracks); err != nil {
		return nil, err
	}
	a, err := pipeline.Analyze(ctx, cfg, t)
	if err != nil {
		return nil, stageErr(err)
	}
	if err := writeTables(o.outDir, a); err != nil {
		return nil, err
	}
	d := a.Report(cfg, string(yaml))
	defer d.Close()
	wd, _ := os.Getwd()
	d.Record = &report.Record{CommandLine: o.commandLine, WorkDir: wd, AnalysedAt: started}
	if dr := <-digest; dr.err == nil {
		d.Record.Input = dr.d
	} else {
		a.Summary.Warnings = append(a.Summary.Warnings, fmt.Sprintf("no digest of the input for the lab record: %v", dr.err))
	}
	if _, err := report.Write(o.outDir, d); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if err := a.Summary.Write(filepath.Join(o.outDir, summaryName)); err != nil {
		return nil, err
	}
	return a.Summary, nil
}

// writeTables writes profiles.csv and after_stop.csv into dir.
func writeTables(dir string, a *pipeline.Analysis) error {
	if err := atomicfile.WriteBytes(filepath.Join(dir, profileTableName), a.Profile.ProfilesCSV()); err != nil {
		return err
	}
	return atomicfile.WriteBytes(filepath.Join(dir, afterStopTableName), a.Profile.AfterStopCSV())
}
