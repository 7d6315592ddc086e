package walls_test

import (
	"fmt"
	"io"
	"math"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/calib/walls"
	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gaptrace/track/synth/acceptance"
)

// synthSource streams a synth scenario's frames as a frames.Source.
type synthSource struct {
	s     *synth.Scenario
	next  int
	step  int
	limit int
}

func (r *synthSource) Info() frames.Info {
	bd := r.s.BitDepth
	if bd == 0 {
		bd = 8
	}
	return frames.Info{Frames: r.s.Frames, FPS: r.s.FPS, WidthPx: r.s.WidthPx, HeightPx: r.s.HeightPx, BitDepth: bd}
}

func (r *synthSource) Next(dst *gocv.Mat) (int, error) {
	if r.next >= r.limit {
		return 0, io.EOF
	}
	i := r.next
	r.next += r.step
	return i, r.s.Render(i, dst)
}

func (r *synthSource) Close() error { return nil }

// medianOf returns the temporal median of n frames spread over the scenario.
func medianOf(t testing.TB, s *synth.Scenario, n int) gocv.Mat {
	t.Helper()
	src := &synthSource{s: s, step: max(1, s.Frames/n), limit: s.Frames}
	m, err := frames.Median(src, n)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestFindOnSynth checks the walls against the renderer's truth
// (track/synth) over tilts from -3 to +3 degrees, both polarities, 8 and 16
// bit, noise and camera jitter.
func TestFindOnSynth(t *testing.T) {
	type variant struct {
		scenario string
		tiltDeg  float64
		moving   string
		jitterPx float64
	}
	var cases []variant
	for _, tilt := range []float64{-3, -1.7, 0, 0.6, 2.2, 3} {
		cases = append(cases, variant{"homogeneous", tilt, "top", 0.2})
	}
	for _, tilt := range []float64{-3, -0.9, 1.4, 3} {
		cases = append(cases, variant{"dark", tilt, "bottom", 0.3}, variant{"dark", tilt, "bottom", 0})
	}
	var worstLine, worstTilt float64
	for i, c := range cases {
		t.Run(fmt.Sprintf("%s/tilt%+.1f", c.scenario, c.tiltDeg), func(t *testing.T) {
			s, err := synth.Builtin(c.scenario, int64(100+i))
			if err != nil {
				t.Fatal(err)
			}
			s.TiltDeg, s.MovingSide, s.JitterPx = c.tiltDeg, c.moving, c.jitterPx
			s.Frames = 60
			med := medianOf(t, s, 30)
			defer med.Close()
			r, err := walls.Find(med, walls.Options{})
			if err != nil {
				t.Fatal(err)
			}
			errs := lineErrors(r, s)
			for _, e := range errs {
				worstLine = math.Max(worstLine, math.Abs(e.dyPx))
				if math.Abs(e.dyPx) > acceptance.WallLinePx {
					t.Errorf("wall %d at x=%g: y off by %.3f px", e.wall, e.xPx, e.dyPx)
				}
			}
			if d := r.TiltDeg - c.tiltDeg; math.Abs(d) > acceptance.TiltDeg {
				t.Errorf("tilt %.4f deg, want %g", r.TiltDeg, c.tiltDeg)
			}
			worstTilt = math.Max(worstTilt, math.Abs(r.TiltDeg-c.tiltDeg))
			t.Logf("jitter %g: walls off by %+.3f, %+.3f px at the first end, gap %.3f px (truth %.3f), tilt %.4f, reflection %v/%v", c.jitterPx,
				errs[0].dyPx, errs[2].dyPx, r.GapPx, s.Calibration().GapPx, r.TiltDeg, r.Top.Reflection, r.Bottom.Reflection)
		})
	}
	t.Logf("worst wall error %.3f px (limit %g), worst tilt error %.4f deg (limit %g)", worstLine, acceptance.WallLinePx, worstTilt, acceptance.TiltDeg)
}

// lineError is a fitted wall line's error at one end of the renderer's
// true line: wall 0 is the upper wall in the image, 1 the lower.
type lineError struct {
	wall      int
	xPx, dyPx float64 // where along the row, and fitted y minus true y
}

// lineErrors compares r's two lines with the walls s renders, at both ends
// of each true line.
func lineErrors(r *walls.Result, s *synth.Scenario) []lineError {
	truth := s.Calibration()
	top, bot := truth.StationaryWallPx, truth.MovingWallPx
	if top[0][1] > bot[0][1] {
		top, bot = bot, top
	}
	var out []lineError
	for k, want := range []struct {
		got walls.Line
		l   [2][2]float64
	}{{r.Top.Line, top}, {r.Bottom.Line, bot}} {
		for _, p := range want.l {
			out = append(out, lineError{wall: k, xPx: p[0], dyPx: want.got.YAt(p[0]) - p[1]})
		}
	}
	return out
}
