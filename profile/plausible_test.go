package profile

import (
	"context"
	"strings"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/profile/rheometry"
	"gaptrace/track/tracks"
)

// TestInconclusive renders a homogeneous shear at 1.5 /s between plates
// (rest 0.3 s, shear 1 s, 0.4 s after) and analyses it with experiment
// files or tracks that cannot be right: each makes the verdict
// inconclusive with a warning naming what to check; the file as it is
// stays homogeneous. The limits are physical ones: slip cannot exceed the
// wall's own speed nor run against it, the bulk rate follows the wall.
func TestInconclusive(t *testing.T) {
	s := plates(41, 0.3, 1, 0.4)
	pts := s.Observe(noisePx, breakPerFrame, 41)
	cal := s.Calibration()
	gap := s.Geometry.Gap()
	mirrored := make([]tracks.Point, len(pts))
	for i, p := range pts {
		p.YUM = gap - p.YUM
		mirrored[i] = p
	}
	var sparse []tracks.Point
	for _, p := range pts {
		if p.Track%150 == 0 {
			sparse = append(sparse, p)
		}
	}
	withRate := func(rate float64) *experiment.Experiment {
		e := s.Experiment()
		e.Motion = []experiment.Segment{{StartS: 0.3, EndS: 1.3, RatePerS: f64(rate)}}
		return e
	}
	for _, c := range []struct {
		name string
		pts  []tracks.Point
		e    *experiment.Experiment
		o    Options
		want []string // in the warnings; none: homogeneous
	}{
		{"as it is", pts, s.Experiment(), Options{}, nil},
		{"moving wall on the other side", mirrored, s.Experiment(), Options{}, []string{"set walls.moving: bottom"}},
		{"program against the motion", pts, withRate(-1.5), Options{}, []string{"bulk shear rate", "more than the wall moves"}},
		{"program at half the rate", pts, withRate(0.75), Options{}, []string{"negative slip at the moving wall"}},
		{"too few tracers", sparse, s.Experiment(), Options{}, []string{"layers across the gap hold enough tracers", "too few"}},
		{"beyond the linker", pts, s.Experiment(), Options{LinkMaxStepUM: 4}, []string{"beyond the 4 um per frame the linker followed"}},
		{"video against the program", pts, s.Experiment(), Options{PhaseDisagreements: []PhaseDisagreement{{Shear: 0, Message: "the phase starts at 0.3 s in the experiment file's motion program but at 0.32 s"}}},
			[]string{"but at 0.32 s"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			o := c.o
			o.Seed = 41
			r, err := Analyze(context.Background(), tracks.Slice(c.pts), c.e, cal, o)
			if err != nil {
				t.Fatal(err)
			}
			if len(r.ShearPhases) != 1 {
				t.Fatalf("%d shear phases", len(r.ShearPhases))
			}
			v := r.ShearPhases[0].Verdict
			all := strings.Join(r.Warnings, "\n")
			if c.want == nil {
				if v != rheometry.Homogeneous || strings.Contains(all, "inconclusive") {
					t.Errorf("verdict %s, warnings %q", v, all)
				}
				return
			}
			if v != rheometry.Inconclusive || r.Shear[0].Summary.Verdict != rheometry.Inconclusive {
				t.Errorf("verdict %s, want inconclusive; warnings %q", v, all)
			}
			for _, w := range c.want {
				if !strings.Contains(all, "inconclusive: ") || !strings.Contains(all, w) {
					t.Errorf("warnings %q, want %q", all, w)
				}
			}
		})
	}
}
