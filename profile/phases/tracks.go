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
	w := NewWallSteps(cal, nFrames)
	for i := 1; i < len(pts); i++ {
		p, q := pts[i-1], pts[i]
		if q.Track == tracks.Unlinked || q.Track != p.Track {
			continue
		}
		w.Step(&p, &q)
	}
	return w.Signal()
}

// WallSteps builds the signal of WallSignal from the steps of the tracks
// given one at a time, in any order; with EndFrame, from steps given frame
// by frame as a linker makes them, it holds one frame's steps only.
type WallSteps struct {
	cal    *calib.Calibration
	ex, ey float64 // unit vector along the walls, towards +x of the image
	steps  map[int][]float64
	sig    []float64
}

// NewWallSteps starts the signal of nFrames frames for the walls of cal.
func NewWallSteps(cal *calib.Calibration, nFrames int) *WallSteps {
	s := cal.StationaryWallPx
	ex, ey := s[1][0]-s[0][0], s[1][1]-s[0][1]
	n := math.Hypot(ex, ey)
	ex, ey = ex/n, ey/n
	if ex < 0 {
		ex, ey = -ex, -ey
	}
	return &WallSteps{cal: cal, ex: ex, ey: ey, steps: map[int][]float64{}, sig: make([]float64, max(nFrames, 0))}
}

// Step adds the step of one track from point p to point q, the next
// point of the same track; it counts when q is one frame after p and
// within the strip by the moving wall.
func (w *WallSteps) Step(p, q *tracks.Point) {
	if q.Frame != p.Frame+1 || q.YUM < (1-WallStripFraction)*w.cal.GapUM || q.Frame >= len(w.sig) || q.Frame < 0 {
		return
	}
	w.steps[q.Frame] = append(w.steps[q.Frame], (q.XPx-p.XPx)*w.ex+(q.YPx-p.YPx)*w.ey)
}

// EndFrame takes the median of the steps into frame and frees them: no
// step into frame may follow.
func (w *WallSteps) EndFrame(frame int) {
	if st, ok := w.steps[frame]; ok {
		slices.Sort(st)
		w.sig[frame] = st[len(st)/2]
		delete(w.steps, frame)
	}
}

// Signal ends every frame and returns the signal.
func (w *WallSteps) Signal() []float64 {
	for f := range w.steps {
		w.EndFrame(f)
	}
	return w.sig
}
