package cessation

import (
	"fmt"
	"math"

	"gaptrace/profile/velocity"
)

// Search and fit spans of RefineStop, in frames.
const (
	// StopSearchFrames is how far from the given stop the refined one is
	// sought: a detected stop lies within two frames of the true one
	// (calib/phases.MaxDisagreeFrames), and one more frame of margin.
	StopSearchFrames = 3
	// stopBeforeFrames frames before the stop fix each tracer's speed;
	// stopAfterFrames after it show the tracer at rest, few enough that an
	// elastic recoil has hardly begun.
	stopBeforeFrames = 10
	stopAfterFrames  = 4
	// stopSteps is the number of trial stops per frame: a twentieth of a
	// frame is finer than the stop is known from tracers moving a few
	// localization errors per frame.
	stopSteps = 20
)

// minStopTracers is the fewest tracers moving at least
// stopMinTravelSigmas localization errors per frame that RefineStop
// needs.
const (
	minStopTracers      = 5
	stopMinTravelSigmas = 2
)

// RefineStop returns the moment the sample stopped, found from the tracks
// within StopSearchFrames frames of stopS (a stop found in the video to
// about a frame): the time tS of a kink common to all tracers, each
// following x(t) = a + v min(t - tS, 0) around it, that fits their points
// best in least squares. Positions are in um, times in s; dtS is the frame
// interval and sigmaUM the localization noise. A place at the stop that is
// a frame off errs by the wall's travel in a frame, which the analysis
// after the stop would read as recoil, hence the refinement. It fails when
// too few tracers move fast enough across the stop to show it.
func RefineStop(ts []velocity.Track, stopS, dtS, sigmaUM float64) (float64, error) {
	type seg struct{ t, x []float64 }
	var segs []seg
	t0 := stopS - float64(StopSearchFrames+stopBeforeFrames)*dtS
	t1 := stopS + float64(StopSearchFrames+stopAfterFrames)*dtS
	for _, tr := range ts {
		var s seg
		for _, p := range tr.Points {
			if p.TS >= t0-dtS/2 && p.TS <= t1+dtS/2 {
				s.t = append(s.t, p.TS)
				s.x = append(s.x, p.XUM)
			}
		}
		n := len(s.t)
		if n < stopBeforeFrames || s.t[0] > stopS-float64(StopSearchFrames+stopBeforeFrames/2)*dtS || s.t[n-1] < stopS+float64(StopSearchFrames)*dtS {
			continue
		}
		// Moving before the stop: the first half's net travel per frame.
		h := n / 2
		if math.Abs(s.x[h]-s.x[0])/((s.t[h]-s.t[0])/dtS) < stopMinTravelSigmas*sigmaUM {
			continue
		}
		segs = append(segs, s)
	}
	if len(segs) < minStopTracers {
		return 0, fmt.Errorf("cessation: only %d tracers move across the stop near %g s (need %d) to place it from the tracks", len(segs), stopS, minStopTracers)
	}
	best, bestRSS := stopS, math.Inf(1)
	for k := -StopSearchFrames * stopSteps; k <= StopSearchFrames*stopSteps; k++ {
		tS := stopS + float64(k)*dtS/stopSteps
		var rss float64
		for _, s := range segs {
			rss += kinkRSS(s.t, s.x, tS)
		}
		if rss < bestRSS {
			best, bestRSS = tS, rss
		}
	}
	return best, nil
}

// kinkRSS returns the residual sum of squares of the least-squares fit of
// x = a + v u with u = min(t - tS, 0).
func kinkRSS(t, x []float64, tS float64) float64 {
	var n, su, sx, suu, sux, sxx float64
	for i := range t {
		u := math.Min(t[i]-tS, 0)
		n++
		su += u
		sx += x[i]
		suu += u * u
		sux += u * x[i]
		sxx += x[i] * x[i]
	}
	cuu := suu - su*su/n
	cux := sux - su*sx/n
	cxx := sxx - sx*sx/n
	if cuu <= 0 {
		return cxx
	}
	return cxx - cux*cux/cuu
}
