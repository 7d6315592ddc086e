package link

import (
	"context"
	"math"
	"sort"

	"gaptrace/calib"
	"gaptrace/calib/robust"
	"gaptrace/track/flowprior"
	"gaptrace/track/tracks"
)

// PriorWindowFrames is the longest window of the flow prior Link builds:
// long enough for a few hundred candidate pairs per gap bin with a few
// tracers in a bin, short against a shear phase, so that start-up and
// cessation stay resolved to a fraction of a second at video rates (common
// practice). Denser recordings get shorter windows (priorWindow).
const PriorWindowFrames = 50

// Settings of priorWindow.
const (
	// priorStepsPerBin is how many one-frame steps a gap bin of the prior
	// should hold in a window: the median of a hundred has an error of an
	// eighth of one step's scatter (1.25 sigma/sqrt(n), common practice),
	// and the detections' histogram peak of a hundred true pairs stands
	// far above the accidental ones.
	priorStepsPerBin = 100
	// minPriorWindowFrames is the shortest window: a start or stop of the
	// wall inside a window leaves it wrong for at most this many frames,
	// which tracks at rest carry across on their own motion (a window
	// holding a start in its middle made the tracks near the moving wall
	// lose their tracers for the rest of it: TestLinkBuiltins, vfr).
	minPriorWindowFrames = 5
)

// priorWindow returns the window of the prior for frames: enough frames
// for priorStepsPerBin detections per gap bin (flowprior.DefaultBins) at
// the recording's mean detections per frame, between minPriorWindowFrames
// and PriorWindowFrames.
func priorWindow(frames [][]Detection) int {
	n := 0
	for _, ds := range frames {
		n += len(ds)
	}
	if n == 0 {
		return PriorWindowFrames
	}
	perFrame := float64(n) / float64(len(frames))
	w := int(math.Ceil(priorStepsPerBin * flowprior.DefaultBins / perFrame))
	return min(max(w, minPriorWindowFrames), PriorWindowFrames)
}

// Link links a whole recording; frames[f] holds the detections of frame f.
// When opt.Prior is nil it builds one in two steps: a prior from the
// detections alone (flowprior.SeriesFromDetections, windows of priorWindow
// frames), a first linking pass with it, then a prior from those
// tracks (flowprior.SeriesFromTracks) for the final pass. Without a
// measurable prior it links on the tracks' own motion only. When the second
// prior agrees with the first within PriorReusePx and no common-mode motion
// is removed, the first pass is the result. With
// MeasureCommonMode, the common-mode motion measured on the first pass's
// tracks (its fast part along the flow, jitterOnly) is removed in the final
// pass when its RMS exceeds JitterMinRMSPx; Stats.CommonMode holds what was
// removed.
func Link(frames [][]Detection, cal *calib.Calibration, opt Options) ([]tracks.Point, Stats, error) {
	return LinkContext(context.Background(), frames, cal, opt)
}

// LinkContext is Link that stops, with ctx's error, soon after ctx is
// done: within cancelCheckFrames frames of either pass.
func LinkContext(ctx context.Context, frames [][]Detection, cal *calib.Calibration, opt Options) ([]tracks.Point, Stats, error) {
	if _, err := NewLinker(cal, opt); err != nil {
		return nil, Stats{}, err
	}
	slowDrift := 0.0 // Stats.SlowDriftPx
	if opt.Prior == nil || opt.MeasureCommonMode {
		built := opt.Prior == nil
		window := priorWindow(frames)
		if built {
			pts := make([][]flowprior.Point, len(frames))
			for f, ds := range frames {
				var sh flowprior.Shift
				if f < len(opt.CommonMode) {
					sh = opt.CommonMode[f]
				}
				pts[f] = make([]flowprior.Point, len(ds))
				for i, d := range ds {
					pts[f][i] = flowprior.Point{XPx: d.XPx - sh.DXPx, YPx: d.YPx - sh.DYPx}
				}
			}
			hist := flowprior.HistOptions{MaxStepPx: opt.MaxStepPx, Intervals: intervals(opt, len(frames))}
			if s, err := flowprior.SeriesFromDetections(pts, cal, hist, window); err == nil {
				opt.Prior = s
			}
		}
		first, firstSt, err := linkAll(ctx, frames, cal, opt)
		if err != nil {
			return nil, Stats{}, err
		}
		// The final pass repeats the first unless the prior or the
		// common-mode correction changes.
		same := true
		// The second prior and the common-mode motion both read the first
		// pass only: they are measured at the same time.
		var prior2 *flowprior.Series
		var prior2Err error
		done := make(chan struct{})
		go func() {
			defer close(done)
			if built {
				to := flowprior.TrackOptions{}
				if opt.FrameTimesS != nil {
					to.NominalIntervalS = 1 / opt.FPS
				}
				prior2, prior2Err = flowprior.SeriesFromTracks(first, cal, to, len(frames), window)
			}
		}()
		var cm []flowprior.Shift
		var cmErr error
		if opt.MeasureCommonMode && len(frames) > 0 && !steadyCamera(first, opt, len(frames)) {
			switch {
			case len(opt.FlowChangesS) > 0:
				// The cuts in the clock's units: frames at the nominal rate.
				cuts := make([]float64, len(opt.FlowChangesS))
				for i, t := range opt.FlowChangesS {
					cuts[i] = t * opt.FPS
				}
				var clock []float64
				if opt.FrameTimesS != nil {
					clock = clocks(opt, len(frames))
				}
				cm, cmErr = flowprior.CommonModeFromTracksCut(first, cal, len(frames), clock, cuts)
			case opt.FrameTimesS != nil:
				cm, cmErr = flowprior.CommonModeFromTracksAt(first, cal, clocks(opt, len(frames)))
			default:
				cm, cmErr = flowprior.CommonModeFromTracks(first, cal, len(frames))
			}
		}
		<-done
		if built && prior2Err == nil {
			same = priorsAgree(opt.Prior, prior2, PriorReusePx)
			opt.Prior = prior2
		}
		if cmErr != nil {
			return nil, Stats{}, cmErr
		}
		if cm != nil {
			var changed bool
			slowDrift, changed = addJitter(&opt, cm)
			same = same && !changed
		}
		if same {
			firstSt.CommonMode, firstSt.SlowDriftPx = opt.CommonMode, slowDrift
			return first, firstSt, nil
		}
	}
	if err := ctx.Err(); err != nil {
		return nil, Stats{}, err
	}
	pts, st, err := linkAll(ctx, frames, cal, opt)
	st.CommonMode = opt.CommonMode
	st.SlowDriftPx = slowDrift
	return pts, st, err
}

// PriorReusePx is how far, px per frame, the prior from the first pass's
// tracks may differ from the prior the first pass was linked with, at every
// height and window, for Link to keep the first pass as the final one: below
// a detection's localization noise at high SNR (about 0.05 px,
// track/detect's TestLocalizationPrecision), the change moves no prediction
// by more than the noise already in it.
const PriorReusePx = 0.05

// priorsAgree reports whether the flow priors a and b give displacements
// within tolPx of each other along both image axes, and know the same
// heights, in every window. Both are interpolated linearly between their
// bins, so comparing at every bin centre of either, in every window,
// finds the largest difference.
func priorsAgree(a, b flowprior.Field, tolPx float64) bool {
	sa, ok1 := a.(*flowprior.Series)
	sb, ok2 := b.(*flowprior.Series)
	if !ok1 || !ok2 || len(sa.Start) != len(sb.Start) {
		return false
	}
	for i, f := range sa.Start {
		if sb.Start[i] != f {
			return false
		}
		for _, s := range []*flowprior.Series{sa, sb} {
			for _, p := range s.Profiles {
				if p == nil {
					continue
				}
				for k, y := range p.YUM {
					if p.N[k] == 0 {
						continue
					}
					ax, ay, oka := sa.Step(f, y)
					bx, by, okb := sb.Step(f, y)
					if oka != okb || math.Abs(ax-bx) > tolPx || math.Abs(ay-by) > tolPx {
						return false
					}
				}
			}
		}
	}
	return true
}

// cancelCheckFrames is how often, in frames, a pass looks at its context:
// a few milliseconds of linking, so that an interrupt stops it at once.
const cancelCheckFrames = 64

// linkAll runs one Linker over all frames.
func linkAll(ctx context.Context, frames [][]Detection, cal *calib.Calibration, opt Options) ([]tracks.Point, Stats, error) {
	l, err := NewLinker(cal, opt)
	if err != nil {
		return nil, Stats{}, err
	}
	// Every detection becomes one point: the output is sized once and the
	// finished tracks are taken at the end.
	n := 0
	for _, ds := range frames {
		n += len(ds)
	}
	l.done = make([]tracks.Point, 0, n)
	for f, ds := range frames {
		if f%cancelCheckFrames == 0 {
			if err := ctx.Err(); err != nil {
				return nil, Stats{}, err
			}
		}
		if err := l.Add(f, ds); err != nil {
			return nil, Stats{}, err
		}
	}
	out, st := l.Close()
	return out, st, nil
}

// JitterWindowFrames is the running-median window that splits the measured
// common-mode motion along the flow into slow drift and frame-to-frame
// jitter: camera vibration changes within a few frames, while a slow
// uniform motion of the tracers along the flow cannot be told from wall slip
// without a textured wall, and tracks measured during shear confound it with
// the flow (it showed as a false uniform displacement after cessation).
const JitterWindowFrames = 11

// JitterMinRMSPx is the camera jitter worth removing, px RMS: below it the
// shake is smaller than one tracer's localization noise at high SNR (about
// 0.05 px, track/detect's TestLocalizationPrecision), and a correction would
// mostly add the estimator's own error, which shows as a uniform
// displacement after cessation.
const JitterMinRMSPx = 0.05

// QuickJitterFraction is how far below JitterMinRMSPx the cheap estimate of
// the common-mode motion (flowprior.QuickCommonMode) must stay for Link to
// skip the full measurement: a factor of two leaves room for the estimate's
// own error against CommonModeFromTracks (TestSteadyCamera).
const QuickJitterFraction = 0.5

// steadyCamera reports whether the first pass's tracks show so little
// common-mode motion that measuring it in full (flowprior.
// CommonModeFromTracks) would find less than JitterMinRMSPx: the cheap
// estimate against the flow prior stays below QuickJitterFraction of it.
// Only tracks whose positions carry no correction (no opt.CommonMode) and a
// known prior qualify.
// addJitter adds the camera's jitter in the measured common-mode shifts cm
// to opt.CommonMode, referred to opt.ReferenceFrames, when its rms exceeds
// JitterMinRMSPx, and reports whether it did. slowDriftPx is the rms of
// what jitterOnly leaves in along the flow: the slow part.
func addJitter(opt *Options, cm []flowprior.Shift) (slowDriftPx float64, changed bool) {
	jit := jitterOnly(cm, JitterWindowFrames)
	var ss float64
	for f := range cm {
		d := cm[f].DXPx - jit[f].DXPx
		ss += d * d
	}
	slowDriftPx = math.Sqrt(ss / float64(len(cm)))
	if rx, ry := rmsShift(jit); math.Max(rx, ry) <= JitterMinRMSPx {
		return slowDriftPx, false
	}
	for f := range jit {
		if f < len(opt.CommonMode) {
			jit[f].DXPx += opt.CommonMode[f].DXPx
			jit[f].DYPx += opt.CommonMode[f].DYPx
		}
	}
	opt.CommonMode = referTo(jit, opt.ReferenceFrames)
	return slowDriftPx, true
}

func steadyCamera(first []tracks.Point, opt Options, frames int) bool {
	if opt.Prior == nil || len(opt.CommonMode) > 0 {
		return false
	}
	field := opt.Prior
	if opt.FrameTimesS != nil {
		field = intervalField{opt.Prior, intervals(opt, frames)}
	}
	rx, ry := rmsShift(jitterOnly(flowprior.QuickCommonMode(first, field, frames), JitterWindowFrames))
	return math.Max(rx, ry) < QuickJitterFraction*JitterMinRMSPx
}

// rmsShift returns the root-mean-square common-mode shift along image x and
// y, px.
func rmsShift(cm []flowprior.Shift) (xPx, yPx float64) {
	if len(cm) == 0 {
		return 0, 0
	}
	for _, s := range cm {
		xPx += s.DXPx * s.DXPx
		yPx += s.DYPx * s.DYPx
	}
	n := float64(len(cm))
	return math.Sqrt(xPx / n), math.Sqrt(yPx / n)
}

// referTo subtracts from every shift of cm the median shift of its frames
// 0 to frames-1 (none when frames is not positive): the offsets then refer
// to the camera's median place over those frames instead of frame 0's.
func referTo(cm []flowprior.Shift, frames int) []flowprior.Shift {
	n := min(frames, len(cm))
	if n <= 0 {
		return cm
	}
	dx, dy := make([]float64, n), make([]float64, n)
	for f := range n {
		dx[f], dy[f] = cm[f].DXPx, cm[f].DYPx
	}
	mx, my := robust.Median(dx), robust.Median(dy)
	for f := range cm {
		cm[f].DXPx -= mx
		cm[f].DYPx -= my
	}
	return cm
}

// jitterOnly keeps the whole common-mode motion across the flow (image y,
// where the sample does not move) but only the part along the flow (image
// x) that changes faster than a running median over window frames.
func jitterOnly(cm []flowprior.Shift, window int) []flowprior.Shift {
	out := make([]flowprior.Shift, len(cm))
	buf := make([]float64, 0, window)
	for i := range cm {
		buf = buf[:0]
		for k := max(0, i-window/2); k <= min(len(cm)-1, i+window/2); k++ {
			buf = append(buf, cm[k].DXPx)
		}
		sort.Float64s(buf)
		med := buf[len(buf)/2]
		if len(buf)%2 == 0 {
			med = (buf[len(buf)/2-1] + buf[len(buf)/2]) / 2
		}
		out[i] = flowprior.Shift{DXPx: cm[i].DXPx - med, DYPx: cm[i].DYPx}
	}
	return out
}

// Settings of MaxStepFor.
const (
	// stepMargin is how much faster than the wall a tracer may appear to
	// move: elastic recoil after a stop and the localization noise of two
	// detections, as a fraction of the wall's own step.
	stepMargin = 1.5
	// stepSlackPx adds a few pixels for camera jitter and for slow flows,
	// whose step alone would make the search too tight.
	stepSlackPx = 3.0
)

// MaxStepFor returns a MaxStepPx for a recording whose fastest wall travels
// at wallSpeedUMPerS: half as much again as the wall's step per frame, plus
// a few pixels.
func MaxStepFor(wallSpeedUMPerS, fps, umPerPx float64) float64 {
	return stepMargin*math.Abs(wallSpeedUMPerS)/fps/umPerPx + stepSlackPx
}

// intervals returns, for a camera whose frame rate varies, the time from
// each of the first frames-1 frames to the next in nominal frame intervals
// (nil for a steady rate).
func intervals(opt Options, frames int) []float64 {
	if opt.FrameTimesS == nil || frames < 2 {
		return nil
	}
	iv := make([]float64, frames-1)
	for f := range iv {
		iv[f] = (frameTimeS(opt, f+1) - frameTimeS(opt, f)) * opt.FPS
	}
	return iv
}

// clocks returns the time of each frame in nominal frame intervals.
func clocks(opt Options, frames int) []float64 {
	c := make([]float64, frames)
	for f := range c {
		c[f] = frameTimeS(opt, f) * opt.FPS
	}
	return c
}

// intervalField is a prior per nominal interval scaled to the actual
// interval from each frame to the next.
type intervalField struct {
	f  flowprior.Field
	iv []float64 // per frame: the interval to the next frame, nominal intervals
}

// Step returns the prior's displacement from frame to frame+1, px.
func (s intervalField) Step(frame int, yUM float64) (dxPx, dyPx float64, ok bool) {
	dx, dy, ok := s.f.Step(frame, yUM)
	if frame >= 0 && frame < len(s.iv) {
		dx, dy = dx*s.iv[frame], dy*s.iv[frame]
	}
	return dx, dy, ok
}
