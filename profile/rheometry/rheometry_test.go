package rheometry

import (
	"math"
	"testing"

	"gaptrace/calib/geometry"
	"gaptrace/profile/layers"
)

// bins returns 40 exact layers of v(y) with a 1 um/s error each.
func bins(h float64, v func(y float64) float64) []layers.Bin {
	var b []layers.Bin
	for i := range 40 {
		y := (float64(i) + 0.5) * h / 40
		b = append(b, layers.Bin{FromUM: y - h/80, ToUM: y + h/80, YUM: y, Value: v(y), Err: 1, N: 100, Groups: 20})
	}
	return b
}

func TestDecomposeSigns(t *testing.T) {
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: 800}
	cases := []struct {
		name               string
		v                  float64 // wall speed
		v0, vh             float64 // fluid speed at the walls
		slipS, slipM, frac float64
		wallSlip           bool
		verdict            string
	}{
		{"no slip", 1200, 0, 1200, 0, 0, 0, false, Homogeneous},
		{"slip at both", 1200, 180, 900, 180, 300, 0.4, true, WallSlip},
		// The contract's formulas along +x: a reversed phase has negative
		// slips (and still positive slip lengths).
		{"reversed", -1200, -180, -900, -180, -300, 0.4, true, WallSlip},
		{"slip below the fraction", 1200, 12, 1200, 12, 0, 0.01, false, Homogeneous},
	}
	for _, c := range cases {
		d, err := Decompose(bins(800, func(y float64) float64 { return c.v0 + (c.vh-c.v0)*y/800 }), plates, c.v, Options{})
		if err != nil {
			t.Fatal(err)
		}
		near := func(a, b float64) bool { return math.Abs(a-b) < 1e-6*math.Max(1, math.Abs(b)) }
		if !near(d.SlipStationaryUMPerS, c.slipS) || !near(d.SlipMovingUMPerS, c.slipM) || !near(d.SlipFraction, c.frac) ||
			d.WallSlip != c.wallSlip || d.Verdict != c.verdict || !near(d.BulkRatePerS, (c.vh-c.v0)/800) {
			t.Errorf("%s: slips %g, %g, fraction %g, rate %g, wall slip %v, verdict %s", c.name,
				d.SlipStationaryUMPerS, d.SlipMovingUMPerS, d.SlipFraction, d.BulkRatePerS, d.WallSlip, d.Verdict)
		}
		if c.slipS != 0 && (!near(d.SlipLengthStationaryUM, c.slipS/d.BulkRatePerS) || d.SlipLengthStationaryUM < 0) {
			t.Errorf("%s: slip length %g um, want v_s / rate = %g > 0", c.name, d.SlipLengthStationaryUM, c.slipS/d.BulkRatePerS)
		}
	}
}

// couetteBSL is the Newtonian concentric-cylinder profile written out from
// Bird, Stewart & Lightfoot (2002, Transport Phenomena, 2nd ed., example
// 3.6-3; from memory): v(r) = A r + B / r with A = (Vo Ro - Vi Ri) / (Ro^2 -
// Ri^2) and B = Ri Ro (Vi Ro - Vo Ri) / (Ro^2 - Ri^2) for wall speeds Vi at
// Ri and Vo at Ro; here one cylinder turns at speed v, the other stands,
// and y (um) runs from the standing one. It is written here, not taken
// from geometry.Reference, so that the test does not check the code
// against itself.
func couetteBSL(g geometry.Geometry, y, v float64) float64 {
	ri, ro := g.InnerRadiusMM*1000, g.OuterRadiusMM*1000
	vi, vo, r := v, 0.0, ro-y // inner turns: y from the outer wall
	if g.Rotating == geometry.OuterRotates {
		vi, vo, r = 0, v, ri+y
	}
	a := (vo*ro - vi*ri) / (ro*ro - ri*ri)
	b := ri * ro * (vi*ro - vo*ri) / (ro*ro - ri*ri)
	return a*r + b/r
}

// The Newtonian concentric-cylinder profile (couetteBSL) is one band in the
// Newtonian coordinate, with either cylinder rotating.
func TestCouetteCoordinate(t *testing.T) {
	for _, rot := range []string{geometry.InnerRotates, geometry.OuterRotates} {
		g := geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 5, OuterRadiusMM: 6, Rotating: rot}
		h := g.Gap()
		d, err := Decompose(bins(h, func(y float64) float64 { return couetteBSL(g, y, 1000) }), g, 1000, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if d.Banded || math.Abs(d.SlipStationaryUMPerS) > 1e-6 || math.Abs(d.SlipMovingUMPerS) > 1e-6 || d.Model.Chi2 > 1e-9 {
			t.Errorf("rotating %s: %d bands, slips %g, %g, chi2 %g", rot, len(d.Bands), d.SlipStationaryUMPerS, d.SlipMovingUMPerS, d.Model.Chi2)
		}
		for _, y := range []float64{0, 1, 333, 999.5, h} {
			if got := yOfU(g, newtonianU(g, y)); math.Abs(got-y) > 1e-6 {
				t.Errorf("rotating %s: y %g -> u -> y %g", rot, y, got)
			}
		}
	}
}

func TestDecomposeErrors(t *testing.T) {
	g := geometry.Geometry{Kind: geometry.Plates, GapUM: 800}
	if _, err := Decompose(bins(800, func(float64) float64 { return 0 }), g, 0, Options{}); err == nil {
		t.Error("zero wall speed accepted")
	}
	if _, err := Decompose(nil, g, 100, Options{}); err == nil {
		t.Error("no layers accepted")
	}
}

// Navier's slip condition v_s = b * (shear rate at the wall) (Navier 1823;
// Lauga, Brenner & Stone 2007, Handbook of Experimental Fluid Mechanics,
// ch. 19; from memory): the rate is the fluid's own next to each wall, not
// the mean rate. Two bands between plates, and a Couette cell, where the
// shear rate r d(v/r)/dr is differentiated here numerically from the
// profile itself.
func TestSlipLengthAtWallRate(t *testing.T) {
	near := func(a, b float64) bool { return math.Abs(a-b) < 1e-6*math.Max(1, math.Abs(b)) }
	// Plates: 50 um/s of slip under a band of 2.5/s up to 300 um, then
	// 0.5/s up to 800 um, and 200 um/s of slip at the moving wall.
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: 800}
	v := func(y float64) float64 { return 50 + 2.5*math.Min(y, 300) + 0.5*math.Max(0, y-300) }
	wall := v(800) + 200
	d, err := Decompose(bins(800, v), plates, wall, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !near(d.SlipLengthStationaryUM, 50/2.5) || !near(d.SlipLengthMovingUM, 200/0.5) || !(d.SlipLengthStationaryErrUM > 0) {
		t.Errorf("plates, two bands: slip lengths %g ± %g, %g ± %g um, want 20 and 400", d.SlipLengthStationaryUM,
			d.SlipLengthStationaryErrUM, d.SlipLengthMovingUM, d.SlipLengthMovingErrUM)
	}
	// Couette: either cylinder rotating at 1000 um/s, 100 um/s of slip at
	// the stationary wall and 150 um/s at the moving one.
	for _, rot := range []string{geometry.InnerRotates, geometry.OuterRotates} {
		g := geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 5, OuterRadiusMM: 6, Rotating: rot}
		h := g.Gap()
		prof := func(y float64) float64 { return 100 + couetteBSL(g, y, 1000-100-150) }
		radius := func(y float64) float64 { // y from the stationary wall
			if rot == geometry.InnerRotates {
				return 6000 - y
			}
			return 5000 + y
		}
		rate := func(y float64) float64 { // r d(v/r)/dy, signed like dv/dy
			const dy = 1e-3
			return radius(y) * (prof(y+dy)/radius(y+dy) - prof(y-dy)/radius(y-dy)) / (2 * dy)
		}
		d, err := Decompose(bins(h, prof), g, 1000, Options{})
		if err != nil {
			t.Fatal(err)
		}
		bs, bm := 100/rate(0), 150/rate(h)
		if math.Abs(d.SlipLengthStationaryUM/bs-1) > 1e-5 || math.Abs(d.SlipLengthMovingUM/bm-1) > 1e-5 {
			t.Errorf("Couette, %s rotating: slip lengths %g, %g um, want %g, %g", rot, d.SlipLengthStationaryUM, d.SlipLengthMovingUM, bs, bm)
		}
	}
}
