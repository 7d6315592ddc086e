package profile

import (
	"context"
	"gaptrace/track/tracks"
	"math"
	"slices"
	"testing"

	"gaptrace/profile/layers"
	"gaptrace/profile/phases"
)

// The space-time map must have a value wherever there are tracers, at rest
// and after the stop too, and read zero within its errors where nothing
// moves. Made-up scenario: 0.5 s of rest, 1.5 s of shear at 1.5/s, 1 s of
// quiescent rest after the stop, 200 frames/s, so that the 40 map windows
// are 15 frames each.
func TestMapComplete(t *testing.T) {
	s := plates(1100, 0.5, 1.5, 1.0)
	pts := s.Observe(noisePx, breakPerFrame, 1100)
	r, err := Analyze(context.Background(), tracks.Slice(pts), s.Experiment(), s.Calibration(), Options{Seed: 1100})
	if err != nil {
		t.Fatal(err)
	}
	m := r.Map
	gap := s.GapUM()
	layerUM := gap / float64(len(m.YUM))
	restEnd, stop := 0.5, 2.0
	// whole[k][j] counts the tracks present in every frame of map window
	// k while in layer j: a layer with at least layers.DefaultMinGroups of
	// them has tracers enough for a value (each gives about half the
	// window's frames as samples, so the samples are enough too).
	winFrames := make([]int, len(m.TS))
	whole := make([][]int, len(m.TS))
	seen := map[[2]int]struct {
		n    int
		ySum float64
	}{}
	halfW := (m.TS[1] - m.TS[0]) / 2
	for k, tc := range m.TS {
		whole[k] = make([]int, len(m.YUM))
		clear(seen)
		frames := map[int]bool{}
		for _, p := range pts {
			if p.TS < tc-halfW || p.TS > tc+halfW {
				continue
			}
			frames[p.Frame] = true
			q := seen[[2]int{p.Track, 0}]
			q.n++
			q.ySum += p.YUM
			seen[[2]int{p.Track, 0}] = q
		}
		winFrames[k] = len(frames)
		for _, q := range seen {
			if q.n < winFrames[k] {
				continue
			}
			if j := int(q.ySum / float64(q.n) / layerUM); j >= 0 && j < len(m.YUM) {
				whole[k][j]++
			}
		}
	}

	holes, cells := 0, 0
	var pulls []float64
	for k, tc := range m.TS {
		for j := range m.YUM {
			if whole[k][j] >= layers.DefaultMinGroups {
				cells++
				if math.IsNaN(m.VUMPerS[k][j]) {
					holes++
					t.Errorf("map window %d (%.3f s) has no value at %.0f um though %d tracks cover its %d frames there (%d samples)",
						k+1, tc, m.YUM[j], whole[k][j], winFrames[k], m.N[k][j])
				}
			}
		}
		// Windows wholly inside a phase without motion: 0 within the
		// errors.
		if tc+halfW > restEnd && tc-halfW < stop {
			continue
		}
		for j, v := range m.VUMPerS[k] {
			if !math.IsNaN(v) {
				pulls = append(pulls, v/r.Profiles[mapIndex(r, k)].Bins[j].Err)
			}
		}
	}
	if len(pulls) < 10*len(m.YUM) {
		t.Fatalf("only %d resting map cells have a value", len(pulls))
	}
	var mean float64
	far := 0
	abs := make([]float64, len(pulls))
	for i, p := range pulls {
		mean += p / float64(len(pulls))
		abs[i] = math.Abs(p)
		if abs[i] > farPull {
			far++
		}
	}
	slices.Sort(abs)
	med := abs[len(abs)/2]
	farFrac := float64(far) / float64(len(pulls))
	t.Logf("%d map cells with tracers, %d without a value; at rest %d cells: mean v/err %.3f, median |v/err| %.2f, %.1f%% beyond %g",
		cells, holes, len(pulls), mean, med, 100*farFrac, farPull)
	// Zero within the errors: no bias beyond 4 standard errors of the mean
	// pull, a median |pull| near the normal's, and few cells far out.
	if math.Abs(mean) > 4/math.Sqrt(float64(len(pulls))) || med < medPullLow || med > medPullHigh || farFrac > farPullFrac {
		t.Errorf("resting map cells: mean v/err %.3f, median |v/err| %.2f (want %g to %g), %.1f%% beyond %g (want at most %g%%)",
			mean, med, medPullLow, medPullHigh, 100*farFrac, farPull, 100*farPullFrac)
	}
	for _, ph := range r.Phases {
		if ph.Kind == phases.Rest && ph.EndS > restEnd+1e-9 {
			t.Errorf("rest phase %+v ends after %g s", ph, restEnd)
		}
	}
}

// The median |v/err| of a normal pull is 0.674; errors off by a third
// move it out of [medPullLow, medPullHigh]. Layers of a few tracks have a
// Student-like pull with heavier tails (three tracks and a fitted trend
// leave one degree of freedom), so up to farPullFrac of the cells may lie
// beyond farPull; for a normal pull it would be 6e-5 (common practice).
const (
	medPullLow, medPullHigh = 0.5, 0.9
	farPull                 = 4.0
	farPullFrac             = 0.02
)

// mapIndex returns the index in r.Profiles of map window k.
func mapIndex(r *Result, k int) int {
	return len(r.Profiles) - len(r.Map.TS) + k
}
