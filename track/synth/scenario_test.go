package synth

import (
	"math"
	"reflect"
	"strings"
	"testing"
)

func mustBuiltin(t testing.TB, name string, seed int64) *Scenario {
	t.Helper()
	s, err := Builtin(name, seed)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestBuiltinCatalogue(t *testing.T) {
	want := []string{"homogeneous", "slip", "banded2", "banded3", "step-quiescent", "step-plane",
		"step-wallslip", "couette", "demo"}
	have := map[string]bool{}
	for _, n := range List() {
		have[n.Name] = true
		if n.Description == "" {
			t.Errorf("scenario %q has no description", n.Name)
		}
		s := mustBuiltin(t, n.Name, 1)
		if s.Name != n.Name || s.Description != n.Description {
			t.Errorf("Builtin(%q) is named %q", n.Name, s.Name)
		}
		// A spot is reliably found above a peak SNR of about 5 (common
		// practice); the built-ins stay well clear of it.
		if snr := s.PeakSNR(); snr < 8 {
			t.Errorf("%s: peak SNR %.1f, want at least 8", n.Name, snr)
		}
		t.Logf("%s: peak SNR %.1f", n.Name, s.PeakSNR())
		if got := len(s.Positions(0)); got < s.Tracers*3/4 || got > s.Tracers*5/4 {
			t.Errorf("%s: %d tracers in the first frame, want about %d", n.Name, got, s.Tracers)
		}
	}
	for _, n := range want {
		if !have[n] {
			t.Errorf("no built-in scenario %q", n)
		}
	}
	if _, err := Builtin("laminar", 1); err == nil || !strings.Contains(err.Error(), `"laminar"`) {
		t.Errorf("unknown scenario: error %v, want one naming it", err)
	}
}

func TestScenarioValidate(t *testing.T) {
	for _, c := range []struct {
		change func(s *Scenario)
		want   string
	}{
		{func(s *Scenario) { s.BitDepth = 12 }, "bit depth 12"},
		{func(s *Scenario) { s.FPS = 0 }, "fps 0"},
		{func(s *Scenario) { s.UMPerPx = 0.5 }, "does not fit"},
		{func(s *Scenario) { s.Polarity = "grey" }, `"grey"`},
		{func(s *Scenario) { s.MovingSide = "left" }, `"left"`},
		{func(s *Scenario) { s.Vignetting = 1 }, "vignetting 1"},
		{func(s *Scenario) { s.Profile.SlipMoving = 2 }, "exceed"},
		{func(s *Scenario) { s.Cessation = Cessation{Kind: "melt"} }, `"melt"`},
		{func(s *Scenario) { s.Geometry.GapUM = -1 }, "gap_um"},
	} {
		s := mustBuiltin(t, "homogeneous", 1)
		c.change(s)
		err := s.Validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("error %v, want one containing %q", err, c.want)
		}
	}
}

func TestPositionsDeterministic(t *testing.T) {
	a, b := mustBuiltin(t, "demo", 42), mustBuiltin(t, "demo", 42)
	p150 := a.Positions(150)
	_ = a.Positions(7)
	if !reflect.DeepEqual(p150, a.Positions(150)) || !reflect.DeepEqual(p150, b.Positions(150)) {
		t.Error("Positions(150) differs between calls or between scenarios of the same seed")
	}
	if reflect.DeepEqual(p150, mustBuiltin(t, "demo", 43).Positions(150)) {
		t.Error("seeds 42 and 43 give the same tracers")
	}
}

// byID indexes tracers by ID.
func byID(ts []Tracer) map[int]Tracer {
	m := make(map[int]Tracer, len(ts))
	for _, t := range ts {
		m[t.ID] = t
	}
	return m
}

// TestPositionsFollowFlow checks tracer displacements between frames against
// the flow written out independently here: v = V * v/V(y) during shear,
// with V = nominal rate x gap between plates.
func TestPositionsFollowFlow(t *testing.T) {
	for _, name := range []string{"homogeneous", "slip", "banded2", "banded3", "banded3-reversed"} {
		t.Run(name, func(t *testing.T) {
			s := mustBuiltin(t, strings.TrimSuffix(name, "-reversed"), 5)
			if strings.HasSuffix(name, "-reversed") {
				// Moving wall at the bottom travelling to -x in the image: gap
				// x still points the way the moving wall goes.
				s.MovingSide, s.FlowSign, s.TiltDeg = "bottom", -1, -2
			}
			h := s.GapUM()
			vWall := 1.0 * h // every one of these shears at a nominal 1/s
			periodUM := s.geom().periodPx * s.UMPerPx
			// Frames 40 (rest, 0.4 s) to 120 (shear, 1.2 s): 0.7 s of shear.
			for _, fr := range [][2]int{{40, 120}, {100, 101}, {10, 20}} {
				t0, t1 := float64(fr[0])/s.FPS, float64(fr[1])/s.FPS
				shear := max(0, min(t1, 2.0)-max(t0, 0.5))
				a, b := byID(s.Positions(fr[0])), byID(s.Positions(fr[1]))
				n := 0
				for id, p := range a {
					q, ok := b[id]
					if !ok {
						continue
					}
					n++
					if math.Abs(q.YUM-p.YUM) > 1e-9 {
						t.Fatalf("tracer %d changed height from %g to %g um", id, p.YUM, q.YUM)
					}
					want := vWall * s.Profile.Velocity(p.YUM/h) * shear
					d := q.XUM - p.XUM - want
					d -= periodUM * math.Round(d/periodUM) // it may have wrapped around
					if math.Abs(d) > 1e-6 {
						t.Fatalf("frames %v: tracer %d at y = %.1f um moved %.4f um, want %.4f (mod %.1f)",
							fr, id, p.YUM, q.XUM-p.XUM, want, periodUM)
					}
				}
				if n < s.Tracers/2 {
					t.Errorf("frames %v: only %d tracers in both", fr, n)
				}
			}
		})
	}
}

// TestPositionsAfterStop checks the after-stop field of step-plane against
// the failure-plane recoil written out here: below 0.6 H, dx = -g y; above,
// dx = g (H - y), g = 0.05 (1 - exp(-(t - 0.1)/0.2)).
func TestPositionsAfterStop(t *testing.T) {
	s := mustBuiltin(t, "step-plane", 9)
	h := s.GapUM()
	stop := 0.5
	f0, f1 := 100, 399 // the stop, the last frame
	t1 := float64(f1)/s.FPS - stop
	g := 0.05 * (1 - math.Exp(-(t1-0.1)/0.2))
	a, b := byID(s.Positions(f0)), byID(s.Positions(f1))
	n := 0
	periodUM := s.geom().periodPx * s.UMPerPx
	for id, p := range a {
		q, ok := b[id]
		if !ok {
			continue
		}
		want := -g * p.YUM
		if p.YUM >= 0.6*h {
			want = g * (h - p.YUM)
		}
		d := q.XUM - p.XUM - want
		d -= periodUM * math.Round(d/periodUM)
		if math.Abs(d) > 1e-6 {
			t.Fatalf("tracer %d at y = %.1f um moved %.4f um after the stop, want %.4f", id, p.YUM, q.XUM-p.XUM, want)
		}
		n++
	}
	if n < s.Tracers/2 {
		t.Errorf("only %d tracers in both frames", n)
	}
}

// TestWrapNeverInsideField follows every tracer through every frame and
// checks that its image position never jumps by more than the wall's travel
// in a frame while it is in the image: wrapping happens outside the field.
func TestWrapNeverInsideField(t *testing.T) {
	for _, c := range []struct {
		side  string
		sign  float64
		tilt  float64
		width int
	}{{"top", 1, 1.2, 640}, {"bottom", -1, -3, 640}, {"top", -1, 5, 300}} {
		s := mustBuiltin(t, "slip", 3)
		s.MovingSide, s.FlowSign, s.TiltDeg, s.WidthPx = c.side, c.sign, c.tilt, c.width
		s.Tracers = 150
		if err := s.Validate(); err != nil {
			t.Fatal(err)
		}
		maxStep := s.GapUM() * 1.0 / s.FPS / s.UMPerPx // wall travel per frame, px
		prev := byID(s.Positions(0))
		wrapped := 0
		for f := 1; f < s.Frames; f++ {
			cur := byID(s.Positions(f))
			for id, q := range cur {
				p, ok := prev[id]
				if !ok {
					continue
				}
				if d := math.Hypot(q.XPx-p.XPx, q.YPx-p.YPx); d > maxStep+1e-9 {
					t.Fatalf("%+v: tracer %d jumped %.1f px inside the image between frames %d and %d", c, id, d, f-1, f)
				}
			}
			for id := range prev {
				if _, ok := cur[id]; !ok {
					wrapped++
				}
			}
			prev = cur
		}
		if wrapped == 0 {
			t.Errorf("%+v: no tracer ever left the image; the test saw no wrap", c)
		}
	}
}

// TestTracersInGap checks every tracer's place against the true wall lines
// of the calibration: centred at least half a diameter inside the gap.
func TestTracersInGap(t *testing.T) {
	for _, name := range []string{"homogeneous", "demo", "couette"} {
		s := mustBuiltin(t, name, 2)
		c := s.Calibration()
		dist := func(l [2][2]float64, x, y float64) float64 { // unsigned distance to a line, px
			dx, dy := l[1][0]-l[0][0], l[1][1]-l[0][1]
			return math.Abs((x-l[0][0])*dy-(y-l[0][1])*dx) / math.Hypot(dx, dy)
		}
		tilt := math.Atan2(c.StationaryWallPx[1][1]-c.StationaryWallPx[0][1], c.StationaryWallPx[1][0]-c.StationaryWallPx[0][0])
		if math.Abs(tilt*180/math.Pi-s.TiltDeg) > 1e-9 {
			t.Errorf("%s: stationary wall tilted %g deg, want %g", name, tilt*180/math.Pi, s.TiltDeg)
		}
		if gap := dist(c.StationaryWallPx, c.MovingWallPx[0][0], c.MovingWallPx[0][1]); math.Abs(gap-s.GapPx()) > 1e-9 {
			t.Errorf("%s: walls %g px apart, want %g", name, gap, s.GapPx())
		}
		if c.MovingWallPx[0][1] > c.StationaryWallPx[0][1] {
			t.Errorf("%s: moving wall below the stationary one, want it on top", name)
		}
		edge := s.DiameterPx/2 - 1e-9
		for _, f := range []int{0, s.Frames / 2, s.Frames - 1} {
			for _, p := range s.Positions(f) {
				ds, dm := dist(c.StationaryWallPx, p.XPx, p.YPx), dist(c.MovingWallPx, p.XPx, p.YPx)
				if ds < edge || dm < edge || ds+dm > s.GapPx()+1e-6 {
					t.Fatalf("%s frame %d: tracer %d at (%.1f, %.1f) is %.2f px from the stationary and %.2f from the moving wall",
						name, f, p.ID, p.XPx, p.YPx, ds, dm)
				}
				if math.Abs(p.YUM-ds*s.UMPerPx) > 1e-6 {
					t.Fatalf("%s: tracer %d has y_um %g but lies %g um from the stationary wall", name, p.ID, p.YUM, ds*s.UMPerPx)
				}
			}
		}
	}
}

func TestJitterAndDrop(t *testing.T) {
	still := mustBuiltin(t, "homogeneous", 4)
	shaky := mustBuiltin(t, "homogeneous", 4)
	shaky.JitterPx = 0.5
	a, b := byID(still.Positions(77)), byID(shaky.Positions(77))
	jx, jy := shaky.JitterAt(77)
	if jx == 0 || jy == 0 {
		t.Fatal("no jitter drawn")
	}
	for id, p := range a {
		q, ok := b[id]
		if !ok {
			continue
		}
		if math.Abs(q.XPx-p.XPx-jx) > 1e-9 || math.Abs(q.YPx-p.YPx-jy) > 1e-9 || q.XUM != p.XUM || q.YUM != p.YUM {
			t.Fatalf("tracer %d: jitter (%g, %g) moved it from %+v to %+v", id, jx, jy, p, q)
		}
	}
	drop := mustBuiltin(t, "homogeneous", 4)
	drop.DropFraction = 0.2
	kept, all := 0, 0
	for f := range 50 {
		kept += len(drop.Positions(f))
		all += len(still.Positions(f))
	}
	// Binomial: sd of the kept fraction sqrt(0.2 x 0.8 / n); allow 5 sd.
	frac := float64(kept) / float64(all)
	if tol := 5 * math.Sqrt(0.16/float64(all)); math.Abs(frac-0.8) > tol {
		t.Errorf("kept %.4f of the tracers with drop fraction 0.2, want 0.8 within %.4f", frac, tol)
	}
}

// TestStepAndCouetteDisplacement checks two more flows against formulas
// written out here: a step strain of 0.5 moves the layer at y by 0.5 y
// between plates; a Couette cell moves it by the concentric-cylinder
// profile (geometry.Reference, Bird, Stewart & Lightfoot 2002, ex. 3.6-3)
// times the wall speed and the time sheared.
func TestStepAndCouetteDisplacement(t *testing.T) {
	step := mustBuiltin(t, "step-quiescent", 2)
	cou := mustBuiltin(t, "couette", 2)
	vc := cou.Geometry.WallSpeed(1)
	for _, c := range []struct {
		s      *Scenario
		f0, f1 int
		want   func(yUM float64) float64
	}{
		{step, 40, 120, func(y float64) float64 { return 0.5 * y }}, // 0.2 s to 0.6 s spans the step
		{cou, 60, 110, func(y float64) float64 { return cou.Geometry.Reference(y, vc) * 0.5 }},
	} {
		periodUM := c.s.geom().periodPx * c.s.UMPerPx
		a, b := byID(c.s.Positions(c.f0)), byID(c.s.Positions(c.f1))
		n := 0
		for id, p := range a {
			q, ok := b[id]
			if !ok {
				continue
			}
			d := q.XUM - p.XUM - c.want(p.YUM)
			d -= periodUM * math.Round(d/periodUM)
			if math.Abs(d) > 1e-6 {
				t.Fatalf("%s: tracer %d at y = %.1f um moved %.4f um, want %.4f", c.s.Name, id, p.YUM, q.XUM-p.XUM, c.want(p.YUM))
			}
			n++
		}
		if n < c.s.Tracers/2 {
			t.Errorf("%s: only %d tracers compared", c.s.Name, n)
		}
	}
}

// TestPopulation checks the drawn tracers' statistics against the
// scenario: the out-of-focus fraction (binomial sd), and the in-focus
// photons' mean and relative sd (log-normal with mean Photons; the sd of
// the sample mean is sd/sqrt(n), of the sample sd about sd/sqrt(2n)).
func TestPopulation(t *testing.T) {
	s := mustBuiltin(t, "homogeneous", 6)
	s.Tracers = 20000
	s.BrightnessSpread = 0.3
	pop := s.population(s.geom())
	var oof int
	var in []float64
	for _, m := range pop {
		if !m.inFocus {
			oof++
			if m.sigmaPx != s.SigmaPx()*defaultOutOfFocusBlur {
				t.Fatalf("out-of-focus sigma %g", m.sigmaPx)
			}
			continue
		}
		in = append(in, m.photons)
	}
	n := float64(len(pop))
	if frac, tol := float64(oof)/n, 5*math.Sqrt(0.1*0.9/n); math.Abs(frac-0.1) > tol {
		t.Errorf("out-of-focus fraction %.4f, want 0.1 within %.4f", frac, tol)
	}
	var mean, v float64
	for _, p := range in {
		mean += p
	}
	mean /= float64(len(in))
	for _, p := range in {
		v += (p - mean) * (p - mean)
	}
	sd := math.Sqrt(v/float64(len(in)-1)) / mean
	// Log-normal: relative sd sqrt(exp(s^2) - 1) for log-sd s (from memory).
	wantSD := math.Sqrt(math.Exp(0.09) - 1)
	if tol := 5 * wantSD / math.Sqrt(float64(len(in))); math.Abs(mean/s.Photons-1) > tol {
		t.Errorf("mean photons %.1f, want %g within %.1f%%", mean, s.Photons, 100*tol)
	}
	if tol := 5 * wantSD / math.Sqrt(2*float64(len(in))) * 2; math.Abs(sd-wantSD) > tol {
		t.Errorf("relative sd of photons %.4f, want %.4f within %.4f", sd, wantSD, tol)
	}
}

func TestResize(t *testing.T) {
	s := mustBuiltin(t, "homogeneous", 1)
	gapShare := s.GapPx() / float64(s.HeightPx)
	s.Resize(1280, 960)
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	if got := s.GapPx() / float64(s.HeightPx); math.Abs(got-gapShare) > 1e-12 || s.UMPerPx != 1 || s.Tracers != 1600 {
		t.Errorf("after Resize: gap share %g (want %g), %g um/px, %d tracers", got, gapShare, s.UMPerPx, s.Tracers)
	}
}
