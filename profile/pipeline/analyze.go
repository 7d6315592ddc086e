package pipeline

import (
	"context"

	"gaptrace/calib"
	"gaptrace/profile"
	"gaptrace/profile/summary"
	"gaptrace/track/frames"
	"gaptrace/track/tracks"
)

// Analysis is the outcome of the whole chain: the tracks, the profile
// stage's result and summary.json.
type Analysis struct {
	Tracked *Tracked
	Profile *profile.Result
	Summary *summary.Summary
}

// TrackingVelocityRel is the relative standard uncertainty of the
// velocities of gaptrace's own tracks (detection and linking), passed to
// the profile stage as the budgets' "tracking" component: a Type B
// evaluation (GUM 4.3) from the renders of the coverage sweep
// (BenchmarkCoverage, issue 12), where the bulk rate, a slope that the
// walls and the scale do not touch, lies up to 0.6 %, in rms about 0.25 %,
// from the truth across codecs, blur and jitter.
const TrackingVelocityRel = 0.003

// Analyze runs the profile stage (package profile) on the tracks t and
// builds the summary.
func Analyze(ctx context.Context, cfg Config, t *Tracked) (*Analysis, error) {
	if err := cfg.check(); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	warn, err := checkRequest(cfg, t) // bounds.go
	if err != nil {
		return nil, err
	}
	t.Warnings = append(t.Warnings, warn...)
	cfg = t.logConfig(cfg)
	cfg.report(StageProfile, 0, 1)
	opt := profile.Options{Bins: cfg.Bins, Windows: cfg.Windows, EveryS: cfg.EveryS, Seed: cfg.Seed, Phases: t.Phases, Log: cfg.Log,
		VelocityRel: TrackingVelocityRel, LinkMaxStepUM: t.MaxStepUM}
	for _, d := range t.Disagreements {
		opt.PhaseDisagreements = append(opt.PhaseDisagreements, profile.PhaseDisagreement{Shear: d.Shear, Message: d.Advice()})
	}
	// Steps outside the recording are left out, with a warning.
	if prog, err := cfg.program(); err != nil {
		return nil, err
	} else if kept, w, changed := trimProgram(prog, t.durationS()); changed {
		t.Warnings = append(t.Warnings, w...)
		opt.Program = kept
	} else {
		t.Warnings = append(t.Warnings, w...)
	}
	if cfg.Log != nil {
		prog, err := cfg.program()
		if err != nil {
			return nil, err
		}
		if kept, _, changed := trimProgram(prog, t.durationS()); changed {
			prog = kept
		}
		opt.Program = prog
		if opt.Phases == nil && t.Info.FPS > 0 {
			opt.Phases = cfg.programPhases(prog, float64(t.Info.Frames)/t.Info.FPS)
		}
	}
	r, err := profile.Analyze(ctx, tracks.Slice(t.Points), cfg.Experiment, t.Calibration, opt)
	if err != nil {
		return nil, inputErr(err)
	}
	cfg.report(StageProfile, 1, 1)
	a := &Analysis{Tracked: t, Profile: r}
	a.Summary = a.buildSummary(cfg)
	return a, ctx.Err()
}

// Run opens, tracks and analyses cfg.Input.
func Run(ctx context.Context, cfg Config) (*Analysis, error) {
	rec, err := Open(ctx, cfg)
	if err != nil {
		return nil, err
	}
	defer rec.Close()
	t, err := rec.Track(ctx)
	if err != nil {
		return nil, err
	}
	return Analyze(ctx, cfg, t)
}

// buildSummary assembles summary.json from the stages' results; it is the
// one place that does.
func (a *Analysis) buildSummary(cfg Config) *summary.Summary {
	t, r := a.Tracked, a.Profile
	s := summary.New()
	s.Experiment = cfg.Experiment.Name
	fps := t.Info.FPS
	if !(fps > 0) && r.FrameIntervalS > 0 {
		fps = 1 / r.FrameIntervalS // from the tracks' times
	}
	s.Input = summary.Input{Path: t.Input, Frames: t.Info.Frames, FPS: fps, WidthPx: t.Info.WidthPx, HeightPx: t.Info.HeightPx}
	s.Calibration = t.Calibration
	n, tr, med := tracks.Count(t.Points)
	s.Tracking = summary.Tracking{Detections: n, Tracks: tr, MedianTrackFrames: med}
	if t.Detections > 0 {
		s.Tracking.Detections = t.Detections
	}
	s.Warnings = append(s.Warnings, t.Warnings...)
	r.Fill(s)
	return s
}

// FromTracks returns the Tracked of a tracks table pts (as read by
// tracks.ReadCSV) with calibration cal, for analysing tracks without their
// video. The frame rate is the experiment's, else the one the tracks'
// times imply; without a motion program the phases are found from the
// tracks next to the moving wall, as Track does. input names the table.
func FromTracks(cfg Config, input string, pts []tracks.Point, cal *calib.Calibration) (*Tracked, error) {
	if err := cfg.check(); err != nil {
		return nil, err
	}
	if len(pts) == 0 {
		return nil, inputErrf("%s: no detections", input)
	}
	maxFrame := 0
	for _, p := range pts {
		maxFrame = max(maxFrame, p.Frame)
	}
	fps := cfg.Experiment.Camera.FieldRate(cfg.Experiment.Camera.FPS)
	if !(fps > 0) {
		fps = fpsOf(pts)
	}
	t := &Tracked{Input: input, Calibration: cal, Points: pts,
		Info: frames.Info{FPS: fps, Frames: maxFrame + 1, WidthPx: cal.WidthPx, HeightPx: cal.HeightPx}}
	prog, err := cfg.program()
	if err != nil {
		return nil, err
	}
	prog, _, _ = trimProgram(prog, t.durationS()) // Analyze warns
	if (len(prog) == 0 || cfg.Log != nil) && fps > 0 {
		t.findPhases(&cfg, prog)
	}
	return t, nil
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
