package pipeline

import (
	"context"
	"io"
	"math"
	"slices"

	"gaptrace/calib"
	"gaptrace/profile"
	"gaptrace/profile/phases"
	"gaptrace/profile/stillspots"
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
	// StillSpots are the spots left out of the profile analysis: still
	// through a shear phase while the fluid at their height moved.
	StillSpots *stillspots.Spots
}

// TrackingVelocityRel is the relative standard uncertainty of the
// velocities of gaptrace's own tracks (detection and linking), passed to
// the profile stage as the budgets' "tracking" component: a Type B
// evaluation (GUM 4.3) from the renders of the coverage sweep
// (BenchmarkCoverage, issue 12), where the bulk rate, a slope that the
// walls and the scale do not touch, lies 0.143 % in rms and up to 0.42 %
// from the truth across codecs, blur and jitter (36 renders with a given
// scale, tracks of 105064d, static spots left out; 0.3 % before, measured
// before the detection of bcc8997, gave a median |z| of the bulk rate of
// 0.27 where a right uncertainty gives 0.67).
const TrackingVelocityRel = 0.0015

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
			opt.Phases = cfg.programPhases(prog, t.durationS())
		}
	}
	spots, err := findStillSpots(ctx, cfg, t, opt)
	if err != nil {
		return nil, err
	}
	r, err := profile.Analyze(ctx, spots.Source(t.Tracks), cfg.Experiment, t.Calibration, opt)
	if err != nil {
		return nil, inputErr(err)
	}
	cfg.report(StageProfile, 1, 1)
	a := &Analysis{Tracked: t, Profile: r, StillSpots: spots}
	a.Summary = a.buildSummary(cfg)
	return a, ctx.Err()
}

// findStillSpots finds the spots of t that stay still through the shear
// phases the profile stage will use (opt's, else the program's) while the
// fluid at their height moves (package stillspots).
func findStillSpots(ctx context.Context, cfg Config, t *Tracked, opt profile.Options) (*stillspots.Spots, error) {
	if cfg.keepStillSpots {
		return nil, nil
	}
	ph := opt.Phases
	if ph == nil {
		prog := opt.Program
		if prog == nil {
			prog = cfg.Experiment.Program()
		}
		ph = phases.FromProgram(prog, t.durationS())
	}
	var shear []stillspots.Phase
	for _, p := range ph {
		if p.Kind == phases.Shear && p.EndS > p.StartS {
			shear = append(shear, stillspots.Phase{StartS: p.StartS, EndS: p.EndS})
		}
	}
	if t.Calibration == nil || !(t.Calibration.GapUM > 0) || !(t.Calibration.UMPerPx > 0) {
		return nil, nil // profile.Analyze reports the calibration
	}
	return stillspots.Find(ctx, t.Tracks, shear, t.Calibration)
}

// Run opens, tracks and analyses cfg.Input. The caller closes the
// Analysis's Tracked when done with its tracks.
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
	a, err := Analyze(ctx, cfg, t)
	if err != nil {
		t.Close()
		return nil, err
	}
	return a, nil
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
	if g := t.Info.Grey; g != nil {
		s.Input.Grey = &summary.Grey{Method: g.Method, WeightsBGR: g.WeightsBGR}
		if g.Measured {
			s.Input.Grey.LumaCNRFraction = &g.LumaFraction
		}
	}
	s.Calibration = t.Calibration
	n, tr, med := t.Tracks.Count()
	s.Tracking = summary.Tracking{Detections: n, Tracks: tr, MedianTrackFrames: med}
	if t.Detections > 0 {
		s.Tracking.Detections = t.Detections
	}
	s.Warnings = append(s.Warnings, t.Warnings...)
	if w := a.StillSpots.Warning(); w != "" {
		s.Warnings = append(s.Warnings, w)
	}
	r.Fill(s)
	return s
}

// FromTracks returns the Tracked of the tracks table tracks.csv read from
// r, with calibration cal, for analysing tracks without their video. The
// tracks go to a temporary file as they are read (tracks.SpoolCSV); the
// caller closes the Tracked. The frame rate is the experiment's, else the
// one the tracks' times imply; times that do not follow frame / rate (a
// camera whose rate varies) are kept as the frames' clock (FrameTimesS).
// Without a motion program the phases are found from the tracks next to
// the moving wall, as Track does. input names the table.
func FromTracks(cfg Config, input string, r io.Reader, cal *calib.Calibration) (*Tracked, error) {
	if err := cfg.check(); err != nil {
		return nil, err
	}
	var clock frameTimes
	sp, err := tracks.SpoolCSV(r, cfg.TempDir, clock.add)
	if err != nil {
		return nil, inputErrf("%s: %v", input, err)
	}
	t := &Tracked{Input: input, Calibration: cal, Tracks: sp}
	if sp.Points() == 0 {
		t.Close()
		return nil, inputErrf("%s: no detections", input)
	}
	fps := cfg.Experiment.Camera.FieldRate(cfg.Experiment.Camera.FPS)
	if !(fps > 0) {
		fps = clock.fps()
	}
	t.Info = frames.Info{FPS: fps, Frames: len(clock.ts), WidthPx: cal.WidthPx, HeightPx: cal.HeightPx}
	t.FrameTimesS = clock.varying(fps)
	prog, err := cfg.program()
	if err != nil {
		t.Close()
		return nil, err
	}
	prog, _, _ = trimProgram(prog, t.durationS()) // Analyze warns
	if (len(prog) == 0 || cfg.Log != nil) && fps > 0 {
		w := phases.NewWallSteps(cal, t.Info.Frames)
		err := sp.Each(func(tr []tracks.Point) error {
			for i := 1; i < len(tr); i++ {
				w.Step(&tr[i-1], &tr[i])
			}
			return nil
		})
		if err == nil {
			err = t.findPhases(&cfg, prog, w.Signal())
		}
		if err != nil {
			t.Close()
			return nil, err
		}
	}
	return t, nil
}

// frameTimes gathers, from the rows of a tracks table, each frame's time
// (that of its first row; NaN for a frame without one).
type frameTimes struct{ ts []float64 }

// add records a row's frame and time.
func (c *frameTimes) add(p tracks.Point) {
	for len(c.ts) <= p.Frame {
		c.ts = append(c.ts, math.NaN())
	}
	if math.IsNaN(c.ts[p.Frame]) {
		c.ts[p.Frame] = p.TS
	}
}

// fps returns the frame rate implied by the tracks' times, frame / t_s
// of the latest frame (0 when no frame past the first has a time).
func (c *frameTimes) fps() float64 {
	for f := len(c.ts) - 1; f > 0; f-- {
		if t := c.ts[f]; !math.IsNaN(t) {
			if !(t > 0) {
				return 0
			}
			return float64(f) / t
		}
	}
	return 0
}

// vfrTolFrames is how far, in frame intervals, a frame's time in a tracks
// table may lie from frame / rate before the table is taken to come from a
// camera whose rate varies: far above the rounding of t_s to a
// microsecond at any rate up to 10 000 frames/s, far below the 25 %
// spread of such a camera's intervals (synth's vfr scenario).
const vfrTolFrames = 0.01

// varying returns the frames' clock, s, when some frame's time lies
// farther than vfrTolFrames from frame / fps, with the frames without a
// time interpolated between their neighbours (and at 1/fps beyond the
// ends); nil when every time follows frame / fps, or the times do not
// increase.
func (c *frameTimes) varying(fps float64) []float64 {
	if !(fps > 0) {
		return nil
	}
	off := false
	for f, t := range c.ts {
		if !math.IsNaN(t) && math.Abs(t*fps-float64(f)) > vfrTolFrames {
			off = true
			break
		}
	}
	if !off {
		return nil
	}
	out := slices.Clone(c.ts)
	last := -1
	for f, t := range out {
		if math.IsNaN(t) {
			continue
		}
		if last >= 0 && !(t > out[last]) {
			return nil
		}
		if last < 0 {
			for k := 0; k < f; k++ {
				out[k] = t - float64(f-k)/fps
			}
		} else {
			for k := last + 1; k < f; k++ {
				out[k] = out[last] + (t-out[last])*float64(k-last)/float64(f-last)
			}
		}
		last = f
	}
	return out
}
