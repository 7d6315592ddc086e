package pipeline

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/calib/robust"
	"gaptrace/calib/walls"
	"gaptrace/profile/cessation"
	"gaptrace/profile/phases"
	"gaptrace/profile/velocity"
	"gaptrace/track/detect"
	"gaptrace/track/frames"
	"gaptrace/track/link"
	"gaptrace/track/tracks"
)

// DefaultDiameterPx is the tracer diameter assumed when the experiment file
// gives none: a typical seeded tracer a few pixels across (common practice).
const DefaultDiameterPx = 5

// maskMarginFactor keeps detections this many tracer radii away from each
// wall line: none, since the walls' profiles are subtracted next to them
// (detect.Options.Walls, which also leaves out a plate the profile does not
// model, such as a textured plate that moves) and a tracer touching a wall
// is where slip is read; those closer than tracks.NearWallRadii are
// flagged instead.
const maskMarginFactor = 0.0

// maskSlackPx admits centres this far beyond a wall line: none. A tracer
// touching a wall has its centre a radius inside the sample, so a centre on
// the far side of the line is an artefact of the wall's edge (compression,
// a colour sensor's demosaicing); admitting 0.5 px beyond it gave a false
// "moving" after the stop on a quiescent H.264 CRF 28 colour recording
// (TestNoFalseAlarmAfterStop: 1.95 um against a noise floor of 0.37 um).
const maskSlackPx = 0.0

// fastestTracerFraction: without a motion program the linker allows a
// wall speed that moves a tracer across this fraction of the image width
// per frame.
const fastestTracerFraction = 0.2

// Tracked is a recording's tracks in gap coordinates, with what the
// tracking found out on the way.
type Tracked struct {
	// Input is the recording's path and Info its frame rate and size;
	// Info.Frames is the number of frames read.
	Input string
	Info  frames.Info
	// Calibration maps pixels to gap coordinates; its FlowSign is set from
	// the motion in the video.
	Calibration *calib.Calibration
	// Tracks are the detections, one track (or one unlinked detection) at
	// a time in the order the tracks ended, with x_um positive in the
	// direction the moving wall travels in the first shear phase. They are
	// kept in a temporary file, not in memory; Close removes it.
	Tracks *tracks.Spool
	// Detections counts every detection, linked or not.
	Detections int
	Link       link.Stats
	// Diagnostics describes the detections, for the report.
	Diagnostics Diagnostics
	// FrameTimesS, when not nil, is the time of each frame, s, of a
	// camera whose frame rate varies (from the container); the points'
	// TS are these times, and Info.FPS is the nominal rate.
	FrameTimesS []float64
	// Phases, when not nil, are phases found in the video to use instead of
	// the motion program's (which has none).
	Phases []phases.Phase
	// LogShiftS is the offset, s, added to the rheometer log's times (on
	// top of any the Config's log already has) to put its phases on the
	// video's clock, found from the wall motion in the video
	// (phases.ClockShift); 0 when the clocks agreed or could not be
	// compared.
	LogShiftS float64
	// Warnings are doubts raised on the way, for the summary.
	Warnings []string
	// MaxStepUM is the largest displacement per frame the linker
	// followed, um (0 for tracks read from a file).
	MaxStepUM float64
	// Disagreements are the shear phases whose times in the video differ
	// from the program's or the log's by more than a frame.
	Disagreements []phases.Disagreement
}

// Diagnostics describes the detections: each one's signal-to-noise ratio
// and the fractional parts of its position (px), whose histogram shows
// pixel locking, and the detection threshold. A long recording's values
// are a systematic sample: every Stride-th detection, at most
// maxDiagnostics of them.
type Diagnostics struct {
	SNR          []float64
	FracX, FracY []float64
	MinSNR       float64
	// Stride is how many detections each value stands for (0 or 1: all
	// are kept).
	Stride int
	seen   int
}

// maxDiagnostics bounds the detections Diagnostics keeps: a million
// values (24 MiB) draw the histograms of the report as well as all of
// them, and a longer recording keeps every second, fourth ... one.
const maxDiagnostics = 1 << 20

// add keeps a detection's values when it falls on the stride, halving
// the sample and doubling the stride when it is full.
func (dg *Diagnostics) add(snr, xPx, yPx float64) {
	dg.Stride = max(dg.Stride, 1)
	dg.seen++
	if (dg.seen-1)%dg.Stride != 0 {
		return
	}
	if len(dg.SNR) == maxDiagnostics {
		for _, v := range []*[]float64{&dg.SNR, &dg.FracX, &dg.FracY} {
			w := (*v)[:0]
			for i := 0; i < len(*v); i += 2 {
				w = append(w, (*v)[i])
			}
			*v = w
		}
		dg.Stride *= 2
		if (dg.seen-1)%dg.Stride != 0 {
			return
		}
	}
	dg.SNR = append(dg.SNR, snr)
	dg.FracX = append(dg.FracX, xPx-math.Floor(xPx))
	dg.FracY = append(dg.FracY, yPx-math.Floor(yPx))
}

// Close removes the temporary file of the tracks; t's tracks cannot be
// read afterwards. It may be called more than once.
func (t *Tracked) Close() error {
	if t == nil || t.Tracks == nil {
		return nil
	}
	return t.Tracks.Close()
}

// Track detects the tracers in every frame inside the gap, links them into
// tracks, and finds the phases and the direction of the flow from the
// tracks next to the moving wall.
func (r *Recording) Track(ctx context.Context) (*Tracked, error) {
	t := &Tracked{Input: r.cfg.Input, Calibration: r.Calibration, Info: r.Info}
	dets, err := r.detectAll(ctx, t)
	if err != nil {
		return nil, err
	}
	signal, err := r.linkAll(ctx, t, dets)
	dets.Close()
	if err != nil {
		return nil, err
	}
	t.Warnings = append(t.Warnings, r.Calibration.Warnings...)
	prog, err := r.cfg.program()
	if err != nil {
		t.Close()
		return nil, err
	}
	prog, _, _ = trimProgram(prog, t.durationS()) // Analyze warns
	if err := t.findPhases(&r.cfg, prog, signal); err != nil {
		t.Close()
		return nil, err
	}
	return t, nil
}

// detectAll runs the detector over every frame, inside the gap, and
// returns the detections per frame index, spooled to a temporary file (the
// caller closes it).
func (r *Recording) detectAll(ctx context.Context, t *Tracked) (_ *link.FrameSpool, err error) {
	src, err := r.takeInput()
	if err != nil {
		return nil, err
	}
	defer src.Close()
	t.Info = src.Info()
	e := r.cfg.Experiment
	d := r.diameterPx()
	cal := r.Calibration
	opt := detect.Options{
		DiameterPx: d,
		Polarity:   e.PolarityHint(),
		Mask: &detect.Mask{Stationary: cal.StationaryWallPx, Moving: cal.MovingWallPx,
			MarginPx: maskMarginFactor*d/2 - maskSlackPx},
	}
	if opt.Walls, err = r.wallProfiles(d); err != nil {
		return nil, err
	}
	t.Diagnostics.MinSNR = detect.DefaultMinSNR
	out, err := link.NewFrameSpool(r.cfg.TempDir)
	if err != nil {
		return nil, err
	}
	defer func() {
		if err != nil {
			out.Close()
		}
	}()
	var ld []link.Detection
	n := 0
	// The detector's own band-pass removes the smooth background; a temporal
	// median is not subtracted because tracers at rest, before the shear and
	// after cessation, would be part of it and vanish.
	noBackground := gocv.NewMat()
	defer noBackground.Close()
	total := t.Info.Frames
	err = detect.Run(src, noBackground, opt, func(frame int, dets []detect.Detection) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		ld = ld[:0]
		for _, x := range dets {
			ld = append(ld, link.Detection{XPx: x.XPx, YPx: x.YPx, Brightness: x.Brightness, SizePx: x.SizePx})
			t.Diagnostics.add(x.SNR, x.XPx, x.YPx)
		}
		if err := out.Add(frame, ld); err != nil {
			return err
		}
		t.Detections += len(dets)
		n++
		r.cfg.report(StageDetect, n, total)
		return nil
	})
	var lost []string
	if de := (*frames.DamagedError)(nil); errors.As(err, &de) {
		// A recording damaged part-way is analysed up to the damage.
		if out.Len() < minSalvageFrames {
			return nil, inputErrf("input %s: only %d frames can be read before frame %d is damaged (%s), fewer than the %d an analysis needs",
				r.cfg.Input, out.Len(), de.Frame, de.Why, minSalvageFrames)
		}
		lost = append(lost, salvageWarning(de, out.Len()))
		err = nil
	}
	if err != nil {
		return nil, inputErr(err)
	}
	t.Warnings = append(t.Warnings, lost...)
	if n == 0 {
		return nil, inputErrf("input %s: no frames", r.cfg.Input)
	}
	t.Info.Frames = out.Len()
	var warn []string
	t.FrameTimesS, t.Info.FPS, warn = frameClock(src, t.Info, out.Len())
	t.Warnings = append(t.Warnings, warn...)
	t.Warnings = append(t.Warnings, inputNotes(src, t.Info, out.Len())...)
	t.Warnings = append(t.Warnings, r.fieldNotes()...)
	if t.Detections == 0 {
		return nil, inputErrf("no tracers found in %d frames of %s (tracer diameter %g px, polarity %s)", n, r.cfg.Input, d, opt.Polarity)
	}
	return out, nil
}

// minSalvageFrames is the fewest frames a damaged recording must keep to
// be analysed up to the damage: the frames the walls are found on
// (MedianFrames), so that the detections of the frames kept lie on
// the calibration's own images.
const minSalvageFrames = MedianFrames

// salvageWarning says which frames of a damaged recording are lost when
// the frames 0 to kept-1 are analysed.
func salvageWarning(de *frames.DamagedError, kept int) string {
	lostTo := "the end"
	if de.Of > kept {
		lostTo = fmt.Sprintf("%d (%d frames)", de.Of-1, de.Of-kept)
	}
	return fmt.Sprintf("the recording is damaged from frame %d on (%s): frames %d to %s are lost, and only frames 0 to %d are analysed",
		de.Frame, de.Why, kept, lostTo, kept-1)
}

// diameterPx returns the tracers' diameter of the experiment file, or
// DefaultDiameterPx.
func (r *Recording) diameterPx() float64 {
	if d := r.cfg.Experiment.Tracers.DiameterPx; d != 0 {
		return d
	}
	return DefaultDiameterPx
}

// markNearWall flags the points whose centre is closer to a wall line than
// tracks.NearWallRadii tracer radii.
func markNearWall(pts []tracks.Point, cal *calib.Calibration, diameterPx float64) {
	limUM := tracks.NearWallRadii * diameterPx / 2 * cal.UMPerPx
	for i := range pts {
		y := pts[i].YUM
		pts[i].NearWall = y < limUM || cal.GapUM-y < limUM
	}
}

// trackPass is a linking pass of Track (link.Pass): its tracks, flagged
// near the walls, go to a spool, and the steps by the moving wall make the
// signal the phases are found in (phases.WallSteps), one frame at a time.
type trackPass struct {
	*tracks.Spool
	wall       *phases.WallSteps
	cal        *calib.Calibration
	diameterPx float64
}

// Step implements link.Pass.
func (p *trackPass) Step(a, b *tracks.Point) { p.wall.Step(a, b) }

// EndFrame implements link.Pass.
func (p *trackPass) EndFrame(frame int) { p.wall.EndFrame(frame) }

// Track implements link.Pass.
func (p *trackPass) Track(pts []tracks.Point) error {
	markNearWall(pts, p.cal, p.diameterPx)
	return p.Add(pts)
}

// wallProfiles measures the static profile of each wall on the median
// image, for the detector to subtract next to the walls; none when there is
// no median image.
func (r *Recording) wallProfiles(diameterPx float64) ([]*walls.Profile, error) {
	if r.Median.Empty() {
		return nil, nil
	}
	var out []*walls.Profile
	for _, l := range []calib.Line{r.Calibration.StationaryWallPx, r.Calibration.MovingWallPx} {
		line, err := walls.LineThrough(l[0], l[1])
		if err != nil {
			return nil, err
		}
		p, err := walls.MeasureProfile(r.Median, line, detect.WallReachPx(diameterPx))
		if err != nil {
			return nil, inputErr(err)
		}
		out = append(out, p)
	}
	return out, nil
}

// flowChanges returns the times at which the program's wall speed changes,
// s: the starts and ends of its steps.
func flowChanges(p experiment.Program) []float64 {
	var out []float64
	for _, s := range p {
		out = append(out, s.StartS, s.EndS)
	}
	return out
}

// maxWallSpeed returns the largest moving-wall speed of the program, um/s.
func maxWallSpeed(p experiment.Program) float64 {
	v := 0.0
	for _, s := range p {
		v = math.Max(v, math.Abs(s.WallSpeedUMPerS))
	}
	return v
}

// linkAll links the detections into tracks in gap coordinates, kept in
// t.Tracks, and returns the motion by the moving wall (phases.WallSignal)
// of the tracks it kept.
func (r *Recording) linkAll(ctx context.Context, t *Tracked, dets *link.FrameSpool) ([]float64, error) {
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	r.cfg.report(StageLink, 0, 1)
	cal := r.Calibration
	prog, err := r.cfg.program()
	if err != nil {
		return nil, err
	}
	v := maxWallSpeed(prog)
	if v == 0 {
		v = fastestTracerFraction * float64(t.Info.WidthPx) * cal.UMPerPx * t.Info.FPS
	}
	// The camera's jitter is measured on the tracks of the linker's first
	// pass and removed in its final pass (link.Options.MeasureCommonMode,
	// which keeps only the fast part along the flow).
	opt := link.Options{FPS: t.Info.FPS, MaxStepPx: link.MaxStepFor(v, t.Info.FPS, cal.UMPerPx),
		GapFrames: link.DefaultGapFrames, MeasureCommonMode: !r.cfg.NoJitter, FrameTimesS: t.FrameTimesS,
		FlowChangesS: flowChanges(prog), ReferenceFrames: MedianFrames}
	d := r.diameterPx()
	newPass := func() (link.Pass, error) {
		sp, err := tracks.NewSpool(r.cfg.TempDir)
		if err != nil {
			return nil, err
		}
		return &trackPass{Spool: sp, wall: phases.NewWallSteps(cal, dets.Len()), cal: cal, diameterPx: d}, nil
	}
	p, st, err := link.LinkStream(ctx, dets, cal, opt, newPass)
	if err != nil {
		return nil, err
	}
	tp := p.(*trackPass)
	if st.Tracks == 0 {
		tp.Close()
		return nil, inputErrf("no tracks: %d detections in %d frames could not be linked", st.Detections, dets.Len())
	}
	t.Tracks, t.Link = tp.Spool, st
	if st.SlowDriftPx > slowDriftWarnPx {
		t.Warnings = append(t.Warnings, fmt.Sprintf("the whole image sways along the flow (%.2f px RMS beyond what the tracks' own motion absorbs), slower than the camera-shake correction follows (%d frames): "+
			"the tracers alone cannot tell a swaying camera from a uniform motion of the sample, so motion uniform across the gap at rest or after the stop may be the camera's, not slip",
			st.SlowDriftPx, link.JitterWindowFrames))
	}
	t.MaxStepUM = opt.MaxStepPx * cal.UMPerPx
	r.cfg.report(StageLink, 1, 1)
	if err := ctx.Err(); err != nil {
		t.Close()
		return nil, err
	}
	return tp.wall.Signal(), nil
}

// findPhases finds the phases of wall motion in the tracks, sets the
// direction of the flow from them (flipping x_um when the moving wall
// travels towards -x of the image), and reconciles them with the motion
// program: t.Phases is set to the detected phases when the program has
// none. signal is the motion by the moving wall (phases.WallSignal) of
// t's tracks. The error is one of reading the tracks.
func (t *Tracked) findPhases(cfg *Config, prog experiment.Program, signal []float64) error {
	det, err := phases.Detect(signal, t.Info.FPS)
	if err != nil {
		if len(prog) == 0 {
			t.Warnings = append(t.Warnings, fmt.Sprintf("no motion program and no wall motion detected in the video: %v", err))
		} else {
			t.Warnings = append(t.Warnings, fmt.Sprintf("phases not detected in the video: %v", err))
		}
		return nil
	}
	// The phases were timed at frame / FPS: a variable rate's frames are
	// put at their own times.
	if t.FrameTimesS != nil {
		for i := range det.Phases {
			det.Phases[i].StartS, det.Phases[i].EndS = t.clockS(det.Phases[i].StartS), t.clockS(det.Phases[i].EndS)
		}
		for i := range det.Segments {
			det.Segments[i].StartS, det.Segments[i].EndS = t.clockS(det.Segments[i].StartS), t.clockS(det.Segments[i].EndS)
		}
	}
	// +x of the gap is the direction the moving wall travels in the first
	// shear phase (the contract's convention).
	if det.FlowSign != 0 && det.FlowSign != t.Calibration.FlowSign {
		t.Calibration.FlowSign = det.FlowSign
		t.Tracks.NegateX()
	}
	durS := t.durationS()
	if cfg.Log != nil {
		logged := cfg.programPhases(prog, durS)
		if sh, ok := phases.ClockShift(logged, det.Phases, t.Info.FPS); ok {
			if sh, err = t.refineShift(logged, sh); err != nil {
				return err
			}
			t.LogShiftS = sh
			c := t.logConfig(*cfg)
			if p, err := c.program(); err == nil {
				prog, _, _ = trimProgram(p, durS) // Analyze warns
				t.Warnings = append(t.Warnings, fmt.Sprintf("phases: every shear phase of the rheometer log starts and ends %.3f s (%+.1f frames) %s than the video shows: "+
					"the log's clock is taken to be off by that much and its times are shifted by %+.3f s; give --log-offset to set the offset yourself",
					math.Abs(sh), sh*t.Info.FPS, map[bool]string{true: "earlier", false: "later"}[sh > 0], sh))
				cfg = &c
			}
		}
	}
	var progPhases []phases.Phase
	if len(prog) > 0 {
		progPhases = cfg.programPhases(prog, durS)
	}
	use, warn := phases.Reconcile(progPhases, det.Phases, t.Info.FPS)
	t.Warnings = append(t.Warnings, warn...)
	t.Disagreements = phases.Disagreements(progPhases, det.Phases, t.Info.FPS)
	if len(prog) == 0 {
		t.Phases = use
	}
	return nil
}

// PhasesFor returns the phases the profile stage uses for t under cfg: the
// ones found in the video when the program has none, else the program's
// (the rheometer log's, with source "log", when cfg has a log).
func (t *Tracked) PhasesFor(cfg Config) []phases.Phase {
	if t.Phases != nil {
		return t.Phases
	}
	cfg = t.logConfig(cfg)
	prog, err := cfg.program()
	if err != nil || !(t.Info.FPS > 0) {
		return nil
	}
	return cfg.programPhases(prog, t.durationS())
}

// refineShift sharpens the clock shift sh between the logged phases and
// the video (found to about a frame from the detected phases): each logged
// shear phase's end, shifted, is placed where the tracks stop
// (cessation.RefineStop, to a fraction of a frame) and the median of those
// offsets is taken. A stop placed a frame late would otherwise show as a
// displacement after cessation of the wall's travel in a frame. sh is
// returned as it is when no stop can be refined. The tracks are read into
// memory for this (only with a rheometer log whose clock is off).
func (t *Tracked) refineShift(logged []phases.Phase, sh float64) (float64, error) {
	pts, err := tracks.Collect(t.Tracks)
	if err != nil {
		return sh, err
	}
	ts := velocity.Group(pts)
	dt := 1 / t.Info.FPS
	sigma, err := velocity.NoiseUM(ts)
	if err != nil {
		return sh, nil
	}
	var offs []float64
	for _, p := range logged {
		if p.Kind != phases.Shear {
			continue
		}
		if stop, err := cessation.RefineStop(ts, p.EndS+sh, dt, sigma); err == nil {
			offs = append(offs, stop-p.EndS)
		}
	}
	if len(offs) == 0 {
		return sh, nil
	}
	return robust.Median(offs), nil
}

// logConfig returns cfg with its rheometer log on the video's clock: its
// times shifted by LogShiftS (cfg's own log is left as it is).
func (t *Tracked) logConfig(cfg Config) Config {
	if cfg.Log == nil || t.LogShiftS == 0 {
		return cfg
	}
	l := *cfg.Log
	l.TimeS = make([]float64, len(cfg.Log.TimeS))
	for i, v := range cfg.Log.TimeS {
		l.TimeS[i] = v + t.LogShiftS
	}
	cfg.Log = &l
	return cfg
}

// WriteTracks writes the tracks as tracks.csv (package tracks), streamed
// from their spool: the tracks in the order they ended.
func (t *Tracked) WriteTracks(w io.Writer) error { return tracks.WriteCSVFrom(w, t.Tracks) }

// clockS turns a time reckoned at frame / FPS into the time of the
// recording's own frame clock (FrameTimesS), interpolated between frames
// and continued at 1/FPS past its ends.
func (t *Tracked) clockS(nominalS float64) float64 {
	ts := t.FrameTimesS
	f := nominalS * t.Info.FPS
	if len(ts) == 0 || math.IsNaN(f) {
		return nominalS
	}
	if f <= 0 {
		return ts[0] + nominalS
	}
	i := int(f)
	if i >= len(ts)-1 {
		return ts[len(ts)-1] + (f-float64(len(ts)-1))/t.Info.FPS
	}
	w := f - float64(i)
	return ts[i] + w*(ts[i+1]-ts[i])
}
