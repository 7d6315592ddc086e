package cessation

import (
	"math"
	"math/rand/v2"
	"testing"

	"gaptrace/profile/velocity"
	"gaptrace/track/tracks"
)

func TestLogTimes(t *testing.T) {
	got := LogTimes(0.005, 1.5, 16)
	if got[0] != 0.005 || math.Abs(got[len(got)-1]-1.5) > 1e-9 {
		t.Errorf("times run from %g to %g s, want one frame to 1.5 s", got[0], got[len(got)-1])
	}
	for i := 1; i < len(got); i++ {
		if !(got[i] > got[i-1]) {
			t.Fatalf("times not increasing: %v", got)
		}
	}
	if len(got) < 12 {
		t.Errorf("only %d distinct frames of 16 times: %v", len(got), got)
	}
}

// final returns per-tracer displacements of the standard picture with noise.
func final(n int, h, noise float64, dx func(y float64) float64, rng *rand.Rand) []TracerDisplacement {
	var out []TracerDisplacement
	for i := range n {
		y := h * rng.Float64()
		out = append(out, TracerDisplacement{Track: i, YUM: y, DXUM: dx(y) + noise*rng.NormFloat64()})
	}
	return out
}

func TestFitPicture(t *testing.T) {
	const h, g, noise = 800.0, 0.05, 0.25
	cases := []struct {
		name     string
		dx       func(y float64) float64
		interior bool
		plane    float64
	}{
		{"still", func(float64) float64 { return 0 }, false, 0},
		{"plane", func(y float64) float64 {
			if y >= 0.6*h {
				return g * (h - y)
			}
			return -g * y
		}, true, 0.6 * h},
		{"stationary wall", func(y float64) float64 { return g * (h - y) }, false, 0},
		{"moving wall", func(y float64) float64 { return -g * y }, false, 0},
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range cases {
		for rep := range 10 {
			p, err := fitPicture(final(400, h, noise, c.dx, rng), h, noise)
			if err != nil {
				t.Fatal(err)
			}
			if p.Interior != c.interior {
				t.Fatalf("%s rep %d: interior jump %v (jump %g at %g um)", c.name, rep, p.Interior, p.JumpUM, p.PlaneUM)
			}
			if c.interior && math.Abs(p.PlaneUM-c.plane) > 0.01*h {
				t.Errorf("%s: plane at %.1f um, truth %.1f", c.name, p.PlaneUM, c.plane)
			}
			if c.name != "still" && math.Abs(-p.Slope/g-1) > 0.02 {
				t.Errorf("%s: slope %.5f, truth %.5f", c.name, p.Slope, -g)
			}
		}
	}
}

func TestVerdict(t *testing.T) {
	cases := []struct {
		name   string
		p      Picture
		moving bool
		mode   string
		wall   string
	}{
		{"still", Picture{GapUM: 800, OffsetUM: 0.01, OffsetErrUM: 0.02, Slope: 1e-5, SlopeErr: 5e-5}, false, "", ""},
		{"slip at the stationary wall", Picture{GapUM: 800, OffsetUM: 24, OffsetErrUM: 0.05, Slope: -0.03, SlopeErr: 1e-4}, true, ModeWall, WallStationary},
		{"slip at the moving wall", Picture{GapUM: 800, OffsetUM: 0, OffsetErrUM: 0.05, Slope: -0.03, SlopeErr: 1e-4}, true, ModeWall, WallMoving},
		{"plane", Picture{GapUM: 800, Interior: true, JumpUM: 40, JumpErrUM: 0.1, PlaneUM: 480, Slope: -0.05}, true, ModeBulk, ""},
		// A significant jump (5.9 standard errors) no larger than the floor
		// of the picture's errors at the walls (3 x 0.1 um), as on a
		// quiescent sample under H.264 CRF 28 in the coverage sweep (case 31).
		{"jump below the floor", Picture{GapUM: 800, Interior: true, JumpUM: 0.29, JumpErrUM: 0.049, PlaneUM: 700, OffsetErrUM: 0.1, SlopeErr: 1e-5}, false, "", ""},
		// Significant but below the noise floor of one tracer (0.3 um).
		{"tiny drift", Picture{GapUM: 800, OffsetUM: 0.2, OffsetErrUM: 0.01}, false, "", ""},
	}
	for _, c := range cases {
		r := &Result{Picture: c.p, NoiseFloorUM: 0.3}
		r.verdict()
		if r.Moving != c.moving || r.Mode != c.mode || r.Wall != c.wall {
			t.Errorf("%s: moving %v, mode %q, wall %q", c.name, r.Moving, r.Mode, r.Wall)
		}
	}
}

func TestCurve(t *testing.T) {
	r := &Result{Picture: Picture{GapUM: 800, Interior: true, PlaneUM: 480, JumpUM: 40, Slope: -0.05},
		Amplitude: []AmplitudePoint{{0.005, 0, 0}, {0.01, 0.5, 0}, {0.015, 1, 0}}}
	c := r.Curve(0.0101)
	want := []CurvePoint{{0, 0}, {480, -12}, {480, 8}, {800, 0}}
	for i := range want {
		if math.Abs(c[i].YUM-want[i].YUM) > 1e-9 || math.Abs(c[i].DXUM-want[i].DXUM) > 1e-9 {
			t.Fatalf("curve %v, want %v", c, want)
		}
	}
	if r.AmplitudeAt(0.001) != 0 || r.AmplitudeAt(1) != 1 {
		t.Errorf("amplitude %g before the first frame, %g after the last", r.AmplitudeAt(0.001), r.AmplitudeAt(1))
	}
}

func TestStitchAtTheStop(t *testing.T) {
	// A tracer sheared at 1000 um/s until the stop at 1 s, then still; its
	// track breaks at the stop and goes on under a new id.
	const dt, stop = 0.005, 1.0
	var before, after velocity.Track
	before.ID, after.ID = 1, 2
	for f := 150; f <= 260; f++ {
		ts := float64(f) * dt
		x := 1000 * math.Min(ts, stop)
		p := tracks.Point{Frame: f, TS: ts, XUM: x, YUM: 700}
		if ts <= stop+1e-9 {
			p.Track = 1
			before.Points = append(before.Points, p)
		} else {
			p.Track = 2
			after.Points = append(after.Points, p)
		}
	}
	placed := place([]velocity.Track{before, after}, Options{StopS: stop, EndS: 1.3, DtS: dt, SigmaUM: 0.1, GapUM: 800})
	if len(placed) != 1 || len(placed[0].after) != len(after.Points) || math.Abs(placed[0].xRef-1000) > 1e-6 {
		t.Fatalf("placed %d tracers; want the one, stitched across the stop at x = 1000 um", len(placed))
	}
}

// TestOnsetFit fits the onset of amplitudes that rise from a baseline as
// 1 - exp(-(t - t0)/tau) after t0, with noise, a baseline offset and a
// settling transient after the stop (a codec's, as on the coverage
// sweep's H.264 renders): the onset found lies within 4 of its standard
// uncertainties (statistical and model) of t0, and within two frames.
func TestOnsetFit(t *testing.T) {
	const dt = 0.005
	cases := []struct {
		name             string
		t0, tau          float64
		noise, base      float64
		settle           float64 // amplitude of a transient decaying over 5 frames after the stop
		framesObservedAt int
	}{
		{"sharp rise at 0.1 s", 0.1, 0.2, 0.0005, 0, 0, 300},
		{"offset baseline", 0.1, 0.2, 0.0007, 0.0015, 0, 300},
		{"settling after the stop", 0.05, 0.15, 0.004, 0, -0.05, 300},
		{"between frames", 0.0525, 0.15, 0.002, 0, 0, 300},
		{"slow rise", 0.08, 1.0, 0.001, 0, 0, 300},
		{"at once", 0, 0.2, 0.001, 0, 0, 300},
	}
	for _, c := range cases {
		rng := rand.New(rand.NewPCG(7, uint64(len(c.name))))
		var a []AmplitudePoint
		fin := -math.Expm1(-(float64(c.framesObservedAt)*dt - c.t0) / c.tau)
		i0 := -1
		run := 0
		for k := 1; k <= c.framesObservedAt; k++ {
			ts := float64(k) * dt
			v := c.base + c.settle*math.Exp(-ts/(5*dt)) + c.noise*rng.NormFloat64()
			if ts > c.t0 {
				v += -math.Expm1(-(ts-c.t0)/c.tau) / fin
			}
			a = append(a, AmplitudePoint{TAfterS: ts, A: v, AErr: c.noise})
			// The sight of motion as amplitude marks it.
			if i0 < 0 && v > MovingSigma*c.noise && v > onsetSeenFraction {
				if run++; run == confirmFrames {
					i0 = len(a) - confirmFrames
				}
			} else if i0 < 0 {
				run = 0
			}
		}
		got, stat, model := onsetFit(a, i0, dt)
		u := math.Hypot(stat, model)
		if !(math.Abs(got-c.t0) <= 4*u) || math.Abs(got-c.t0) > 2*dt {
			t.Errorf("%s: onset %.5f ± %.5f s (statistical %.5f, model %.5f), truth %.5f", c.name, got, u, stat, model, c.t0)
		}
	}
	if o, _, _ := onsetFit(nil, 0, dt); !math.IsNaN(o) {
		t.Errorf("no amplitudes: onset %g, want NaN", o)
	}
}

// TestOnsetCurvature checks that the onset of a noise-free relaxation,
// 1 - exp(-(t - t0)/tau), is found where it starts: a straight line
// through the rise up to onsetRiseFraction would put it tau X^2 / 12
// early (X = 0.22; the least-squares line through x - x^2/2 on [0, X]),
// 0.7 ms for tau = 0.2 s, which the quadratic of hinge takes out.
func TestOnsetCurvature(t *testing.T) {
	const (
		dt = 0.005
		// curvatureTolS is a tenth of the straight line's bias at tau =
		// 0.2 s, and twice the trial grid (onsetSteps per frame).
		curvatureTolS = 0.07e-3
	)
	for _, c := range []struct{ t0, tau float64 }{{0.1, 0.2}, {0.05, 0.15}, {0.1, 0.5}} {
		var a []AmplitudePoint
		i0 := -1
		for k := 1; k <= 300; k++ {
			ts := float64(k) * dt
			v := 0.0
			if ts > c.t0 {
				v = -math.Expm1(-(ts - c.t0) / c.tau)
			}
			a = append(a, AmplitudePoint{TAfterS: ts, A: v})
			if i0 < 0 && v > onsetSeenFraction {
				i0 = len(a) - 1
			}
		}
		got, _, _ := onsetFit(a, i0, dt)
		if math.Abs(got-c.t0) > curvatureTolS {
			t.Errorf("onset %g s, tau %g s: found at %.5f s", c.t0, c.tau, got)
		}
	}
}
