package pipeline

import (
	"fmt"
	"math"

	"gaptrace/calib/experiment"
)

// Bounds of what a user asks of the profile stage (the README's table).
const (
	// MaxBins bounds the layers across the gap: a thousand layers need
	// some hundred thousand tracer steps to be measured at all (a hundred
	// per layer, layers.DefaultMinSamples' order), more than a recording
	// holds, and each costs a bootstrap.
	MaxBins = 1000
	// MinLayerPx: a layer thinner than a pixel holds no information a
	// thicker one lacks, since a tracer image spans several pixels.
	MinLayerPx = 1.0
)

// checkRequest refuses what the tracks cannot answer: more layers than the
// gap has pixels (or MaxBins), and time windows wholly outside the
// recording; it returns warnings for windows partly outside it.
func checkRequest(cfg Config, t *Tracked) ([]string, error) {
	cal := t.Calibration
	if cfg.Bins > 0 && cal != nil {
		gapPx := cal.GapPx
		if !(gapPx > 0) && cal.UMPerPx > 0 {
			gapPx = cal.GapUM / cal.UMPerPx
		}
		limit := MaxBins
		if gapPx > 0 {
			limit = min(limit, int(math.Floor(gapPx/MinLayerPx)))
		}
		if cfg.Bins > limit {
			return nil, inputErrf("--bins %d: more layers than the %.0f px gap allows (at most %d: one per %g px, and no more than %d)", cfg.Bins, gapPx, limit, MinLayerPx, MaxBins)
		}
	}
	durS := t.durationS()
	if !(durS > 0) {
		return nil, nil
	}
	var warn []string
	for _, w := range cfg.Windows {
		switch {
		case w.T0S >= durS || w.T1S <= 0:
			return nil, inputErrf("--window %g:%g s lies outside the recording (0 to %.4g s)", w.T0S, w.T1S, durS)
		case w.T1S > durS || w.T0S < 0:
			warn = append(warn, fmt.Sprintf("window %g:%g s reaches past the recording (0 to %.4g s): only its part inside is analysed", w.T0S, w.T1S, durS))
		}
	}
	return warn, nil
}

// durationS is the recording's length, s: from its first frame to the end
// of its last frame interval (0 when the rate is unknown).
func (t *Tracked) durationS() float64 {
	if !(t.Info.FPS > 0) || t.Info.Frames <= 0 {
		return 0
	}
	if n := len(t.FrameTimesS); n > 0 {
		return t.FrameTimesS[n-1] + float64(t.Info.Frames-n+1)/t.Info.FPS
	}
	return float64(t.Info.Frames) / t.Info.FPS
}

// trimProgram returns the steps of the motion program p that begin inside
// a recording of durS seconds, and a warning for each step left out and
// for one that ends after the recording (analysed up to its end). Without
// a known duration p is returned as it is. changed reports whether a step
// was left out.
func trimProgram(p experiment.Program, durS float64) (kept experiment.Program, warn []string, changed bool) {
	if !(durS > 0) {
		return p, nil, false
	}
	kept = make(experiment.Program, 0, len(p))
	for i, s := range p {
		switch {
		case s.StartS >= durS:
			warn = append(warn, fmt.Sprintf("motion step %d (%g to %g s) begins after the recording ends (%.4g s): it is left out", i+1, s.StartS, s.EndS, durS))
			changed = true
			continue
		case s.EndS > durS:
			warn = append(warn, fmt.Sprintf("motion step %d (%g to %g s) ends after the recording (%.4g s): it is analysed up to the end of the recording", i+1, s.StartS, s.EndS, durS))
		}
		kept = append(kept, s)
	}
	if changed && len(kept) == 0 {
		warn = append(warn, "no step of the motion program lies inside the recording: the phases are taken from the video")
	}
	return kept, warn, changed
}
