package walls_test

import (
	"testing"

	"gaptrace/calib/walls"
	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gaptrace/track/synth/acceptance"
)

// restLinePx bounds the wall lines' error on the median of frames at rest,
// which holds the tracers: the bound of the sweep on moving tracers
// (acceptance.WallLinePx), since tracers left in the median must not move
// a line (calib/walls' package documentation).
const restLinePx = acceptance.WallLinePx

// TestFindTracersAtRest finds the walls of track/synth's near-wall scenario
// (a fifth of its tracers within 5 px of a wall line) on the median of its
// first frames, before the shear starts: the tracers are at rest, so all of
// them are in the median, many touching the walls. The renderer's wall
// lines are the truth.
func TestFindTracersAtRest(t *testing.T) {
	for _, c := range []struct {
		name    string
		tracers int
	}{{"no tracers", 0}, {"tracers", -1}} {
		t.Run(c.name, func(t *testing.T) {
			s, err := synth.Builtin("near-wall", 7)
			if err != nil {
				t.Fatal(err)
			}
			if c.tracers >= 0 {
				s.Tracers = c.tracers
			}
			// The first 31 frames, as profile/pipeline's head: all at rest.
			src := &synthSource{s: s, step: 1, limit: 31}
			med, err := frames.Median(src, 31)
			if err != nil {
				t.Fatal(err)
			}
			defer med.Close()
			r, err := walls.Find(med, walls.Options{})
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range lineErrors(r, s) {
				t.Logf("wall %d at x=%g: y off by %+.3f px", e.wall, e.xPx, e.dyPx)
				if e.dyPx < -restLinePx || e.dyPx > restLinePx {
					t.Errorf("wall %d at x=%g: y off by %+.3f px, limit %g", e.wall, e.xPx, e.dyPx, restLinePx)
				}
			}
		})
	}
}
