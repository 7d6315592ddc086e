package link

import (
	"math"
	"sort"

	"gaptrace/calib"
	"gaptrace/track/flowprior"
	"gaptrace/track/tracks"
)

// PriorWindowFrames is the window of the flow prior Link builds: long enough
// for a few hundred candidate pairs per gap bin with tens of tracers in a bin,
// short against a shear phase, so that start-up and cessation stay resolved
// to a fraction of a second at video rates (common practice).
const PriorWindowFrames = 50

// Link links a whole recording; frames[f] holds the detections of frame f.
// When opt.Prior is nil it builds one in two steps: a prior from the
// detections alone (flowprior.SeriesFromDetections, windows of
// PriorWindowFrames), a first linking pass with it, then a prior from those
// tracks (flowprior.SeriesFromTracks) for the final pass. Without a
// measurable prior it links on the tracks' own motion only. With
// MeasureCommonMode, the common-mode motion measured on the first pass's
// tracks (its fast part along the flow, jitterOnly) is removed in the final
// pass when its RMS exceeds JitterMinRMSPx; Stats.CommonMode holds what was
// removed.
func Link(frames [][]Detection, cal *calib.Calibration, opt Options) ([]tracks.Point, Stats, error) {
	if _, err := NewLinker(cal, opt); err != nil {
		return nil, Stats{}, err
	}
	if opt.Prior == nil || opt.MeasureCommonMode {
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
		built := opt.Prior == nil
		if built {
			if s, err := flowprior.SeriesFromDetections(pts, cal, flowprior.HistOptions{MaxStepPx: opt.MaxStepPx}, PriorWindowFrames); err == nil {
				opt.Prior = s
			}
		}
		first, _, err := linkAll(frames, cal, opt)
		if err != nil {
			return nil, Stats{}, err
		}
		if built {
			if s, err := flowprior.SeriesFromTracks(first, cal, flowprior.TrackOptions{}, len(frames), PriorWindowFrames); err == nil {
				opt.Prior = s
			}
		}
		if opt.MeasureCommonMode && len(frames) > 0 {
			cm, err := flowprior.CommonModeFromTracks(first, cal, len(frames))
			if err != nil {
				return nil, Stats{}, err
			}
			cm = jitterOnly(cm, JitterWindowFrames)
			if rx, ry := rmsShift(cm); math.Max(rx, ry) > JitterMinRMSPx {
				for f := range cm {
					if f < len(opt.CommonMode) {
						cm[f].DXPx += opt.CommonMode[f].DXPx
						cm[f].DYPx += opt.CommonMode[f].DYPx
					}
				}
				opt.CommonMode = cm
			}
		}
	}
	pts, st, err := linkAll(frames, cal, opt)
	st.CommonMode = opt.CommonMode
	return pts, st, err
}

// linkAll runs one Linker over all frames.
func linkAll(frames [][]Detection, cal *calib.Calibration, opt Options) ([]tracks.Point, Stats, error) {
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
