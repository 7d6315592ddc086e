package link

import (
	"math"

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
// tracks is removed in the final pass; Stats.CommonMode holds what was
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
			for f := range cm {
				if f < len(opt.CommonMode) {
					cm[f].DXPx += opt.CommonMode[f].DXPx
					cm[f].DYPx += opt.CommonMode[f].DYPx
				}
			}
			opt.CommonMode = cm
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
	var out []tracks.Point
	for f, ds := range frames {
		if err := l.Add(f, ds); err != nil {
			return nil, Stats{}, err
		}
		out = append(out, l.Flush()...)
	}
	rest, st := l.Close()
	return append(out, rest...), st, nil
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
