package geometry

import (
	"math"
	"testing"
)

// TestCouetteRateAt checks the Couette conventions against the Newtonian
// concentric-cylinder flow, rate(r) = 2 omega Ri^2 Ro^2 / ((Ro^2 - Ri^2)
// r^2) (Bird, Stewart & Lightfoot, Transport Phenomena, 2nd ed. 2002,
// example 3.6-3), written out here: inner and outer are that rate at each
// cylinder, and the representative rate of DIN 53019-1 / ISO 3219,
// omega (1 + delta^2) / (delta^2 - 1), is the mean of the two.
func TestCouetteRateAt(t *testing.T) {
	const ri, ro, omega = 10e3, 11e3, 0.3 // um, um, rad/s
	rate := func(r float64) float64 { return 2 * omega * ri * ri * ro * ro / ((ro*ro - ri*ri) * r * r) }
	v := omega * ri // the inner cylinder's speed, um/s
	for _, c := range []struct {
		at   string
		want float64
	}{{RateAtInner, rate(ri)}, {RateAtOuter, rate(ro)}, {RateAtRepresentative, (rate(ri) + rate(ro)) / 2}, {"", (rate(ri) + rate(ro)) / 2}} {
		g := Geometry{Kind: Couette, InnerRadiusMM: 10, OuterRadiusMM: 11, RateAt: c.at}
		if err := g.Validate(); err != nil {
			t.Fatal(err)
		}
		if got := g.NominalRate(v); math.Abs(got/c.want-1) > 1e-12 {
			t.Errorf("rate_at %q: %g /s, want %g", c.at, got, c.want)
		}
		if got := g.WallSpeed(c.want); math.Abs(got/v-1) > 1e-12 {
			t.Errorf("rate_at %q: wall speed %g um/s, want %g", c.at, got, v)
		}
		// The same rates follow from the profile's own local rate.
		if c.at == RateAtInner && math.Abs(g.LocalRate(g.Gap(), v)/c.want-1) > 1e-9 { // y = gap: the rotating (inner) cylinder
			t.Errorf("local rate at the inner cylinder %g, want %g", g.LocalRate(g.Gap(), v), c.want)
		}
	}
}

// TestConeAngleRad: a cone given in radians has the gap R tan(a) at its
// rim (plane trigonometry).
func TestConeAngleRad(t *testing.T) {
	g := Geometry{Kind: ConePlate, RadiusMM: 25, ConeAngleRad: 0.0698}
	if err := g.Validate(); err != nil {
		t.Fatal(err)
	}
	if want := 25e3 * math.Tan(0.0698); math.Abs(g.Gap()/want-1) > 1e-12 {
		t.Errorf("gap %g um, want %g", g.Gap(), want)
	}
}
