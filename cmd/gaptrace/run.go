package main

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"

	"gocv.io/x/gocv"

	"gaptrace/calib/atomicfile"
	"gaptrace/profile"
	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
	"gaptrace/track/frames"
)

func init() {
	commands["run"] = command{
		summary: "the whole chain: calibration, tracking, profiles, verdicts and the report",
		run:     runRun,
	}
}

// runOptions are the flags of run and demo.
type runOptions struct {
	expPath, outDir, input string
	force, progress        bool
	noJitter               bool
	bins                   int
	windows                windowList
	seed                   uint64
}

func runRun(args []string, stderr io.Writer) error {
	fs := newFlags("run", "INPUT", stderr)
	var o runOptions
	fs.StringVar(&o.expPath, "e", "", "experiment file (YAML)")
	fs.StringVar(&o.outDir, "o", "", "output folder (must be empty unless --force)")
	fs.BoolVar(&o.force, "force", false, "write into a folder that is not empty, replacing earlier results")
	fs.BoolVar(&o.progress, "progress", false, "show progress even when stderr is not a terminal")
	fs.BoolVar(&o.noJitter, "no-jitter", false, "do not measure and remove the camera's frame-to-frame jitter (a rigidly mounted camera)")
	fs.IntVar(&o.bins, "bins", 0, "number of layers across the gap (0: the default)")
	fs.Var(&o.windows, "window", "time window START:END in s for a profile; repeat for more (default: the second half of each shear phase)")
	fs.Uint64Var(&o.seed, "seed", 1, "seed of the bootstrap's random numbers")
	if err := parseFlags(fs, args); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return badInputf("run needs one INPUT (video, folder or glob of frames), got %d", fs.NArg())
	}
	o.input = fs.Arg(0)
	_, err := runChain(o, stderr)
	return err
}

// runFiles are the result files of run, removed before a forced run so
// that a failure cannot leave an old summary beside new tracks.
var runFiles = []string{"summary.json", "calibration.json", "tracks.csv", profileTableName, afterStopTableName, report.FileName}

// runChain runs every stage and writes every file of run into o.outDir;
// summary.json is written last, so it exists only for a complete run.
func runChain(o runOptions, stderr io.Writer) (*summary.Summary, error) {
	if o.bins < 0 {
		return nil, badInputf("--bins %d: must be positive", o.bins)
	}
	exp, err := loadExperiment(o.expPath)
	if err != nil {
		return nil, err
	}
	yaml, _ := os.ReadFile(o.expPath)
	if err := prepareOutDir(o.outDir, o.force); err != nil {
		return nil, err
	}
	removeStale(o.outDir, runFiles...)
	// Figures of an earlier run that this one may not draw.
	if old, _ := filepath.Glob(filepath.Join(o.outDir, "figure_*")); len(old) > 0 {
		for _, f := range old {
			os.Remove(f)
		}
	}
	c := &chain{expPath: o.expPath, exp: exp, input: o.input, progress: o.progress, stderr: stderr, noJitter: o.noJitter}
	defer c.close()
	med, err := c.calibrate()
	if err != nil {
		return nil, err
	}
	med.Close()
	dets, err := c.detectAll()
	if err != nil {
		return nil, err
	}
	pts, _, err := c.linkAll(dets)
	if err != nil {
		return nil, err
	}
	detected, phaseWarnings := c.detectPhases(pts, len(dets))
	if err := writeCalibJSON(filepath.Join(o.outDir, "calibration.json"), c.cal); err != nil {
		return nil, err
	}
	if err := writeTracks(filepath.Join(o.outDir, "tracks.csv"), pts); err != nil {
		return nil, err
	}
	r, err := profile.Analyze(pts, exp, c.cal, profile.Options{Bins: o.bins, Windows: o.windows, Seed: o.seed, Phases: detected})
	if err != nil {
		return nil, badInput(err)
	}
	s := summary.New()
	s.Experiment = exp.Name
	s.Input = summary.Input{Path: o.input, Frames: len(dets), FPS: c.info.FPS, WidthPx: c.info.WidthPx, HeightPx: c.info.HeightPx}
	s.Calibration = c.cal
	s.Tracking = profile.TrackingCounts(pts)
	s.Tracking.Detections = c.detections
	s.Warnings = append(s.Warnings, c.cal.Warnings...)
	s.Warnings = append(s.Warnings, phaseWarnings...)
	r.Fill(s)
	if err := atomicfile.WriteBytes(filepath.Join(o.outDir, profileTableName), r.ProfilesCSV()); err != nil {
		return nil, err
	}
	if err := atomicfile.WriteBytes(filepath.Join(o.outDir, afterStopTableName), r.AfterStopCSV()); err != nil {
		return nil, err
	}
	d := report.FromAnalysis(s, exp, r)
	d.ExperimentYAML = string(yaml)
	d.Detection = &figure.Detection{SNR: c.snr, FracXPx: c.fracX, FracYPx: c.fracY, SNRThreshold: c.minSNR}
	t0, t1 := overlayWindow(s)
	frame, err := c.readFrame8((t0 + t1) / 2)
	if err == nil {
		defer frame.Close()
		d.Overlay = &figure.Overlay{Frame: frame, Calibration: c.cal, Tracks: trackPaths(pts, t0, t1)}
		d.OverlayFrameS, d.OverlayWindowS = (t0+t1)/2, [2]float64{t0, t1}
	} else {
		s.Warnings = append(s.Warnings, fmt.Sprintf("no overlay figure: %v", err))
	}
	if _, err := report.Write(o.outDir, d); err != nil {
		return nil, fmt.Errorf("report: %w", err)
	}
	if err := s.Write(filepath.Join(o.outDir, "summary.json")); err != nil {
		return nil, err
	}
	return s, nil
}

// readFrame8 reads the frame nearest tS as an 8-bit grey Mat.
func (c *chain) readFrame8(tS float64) (gocv.Mat, error) {
	f := int(math.Round(tS * c.info.FPS))
	if c.info.Frames > 0 {
		f = min(max(f, 0), c.info.Frames-1)
	}
	src, err := frames.Open(c.input, c.exp.Camera.FPS, frames.Range{First: f, Last: f, Step: 1})
	if err != nil {
		return gocv.Mat{}, err
	}
	defer src.Close()
	m := gocv.NewMat()
	if _, err := src.Next(&m); err != nil {
		m.Close()
		return gocv.Mat{}, fmt.Errorf("reading frame %d: %w", f, err)
	}
	if m.Type() == gocv.MatTypeCV8UC1 {
		return m, nil
	}
	m8 := gocv.NewMat()
	// 16-bit frames: keep the top byte.
	m.ConvertToWithParams(&m8, gocv.MatTypeCV8UC1, 1.0/256, 0)
	m.Close()
	return m8, nil
}
