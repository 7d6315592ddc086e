package phases

import (
	"math"
	"slices"

	"gaptrace/calib"
	"gaptrace/track/tracks"
)

// WallStripFraction is the part of the gap next to the moving wall whose
// tracks give the wall-motion signal of FromTracks.
const WallStripFraction = 0.2

// WallSignal returns, for each of nFrames frames, the median displacement
// along the walls (px, towards +x of the image) since the previous frame of
// the tracks pts next to the moving wall (within WallStripFraction of the
// gap of cal), the signal Detect reads; 0 where no track crosses the strip.
// pts must be in the order of package tracks (by track, then frame).
func WallSignal(pts []tracks.Point, cal *calib.Calibration, nFrames int) []float64 {
	s := cal.StationaryWallPx
	ex, ey := s[1][0]-s[0][0], s[1][1]-s[0][1]
	n := math.Hypot(ex, ey)
	ex, ey = ex/n, ey/n
	if ex < 0 {
		ex, ey = -ex, -ey
	}
	steps := make([][]float64, nFrames)
	for i := 1; i < len(pts); i++ {
		p, q := pts[i-1], pts[i]
		if q.Track == tracks.Unlinked || q.Track != p.Track || q.Frame != p.Frame+1 ||
			q.YUM < (1-WallStripFraction)*cal.GapUM || q.Frame >= nFrames {
			continue
		}
		steps[q.Frame] = append(steps[q.Frame], (q.XPx-p.XPx)*ex+(q.YPx-p.YPx)*ey)
	}
	sig := make([]float64, nFrames)
	for f, st := range steps {
		if len(st) > 0 {
			slices.Sort(st)
			sig[f] = st[len(st)/2]
		}
	}
	return sig
}
