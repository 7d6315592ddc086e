package geometry_test

import (
	"fmt"
	"math"
	"testing"

	"gaptrace/calib/geometry"
)

// relTol: the formulas are closed forms; only rounding separates them.
const relTol = 1e-12

func near(a, b float64) bool { return math.Abs(a-b) <= relTol*math.Max(math.Abs(a), math.Abs(b)) }

const degree = math.Pi / 180

// TestNominalRateHandbook checks each geometry's nominal shear rate against
// the textbook formula written out independently here.
func TestNominalRateHandbook(t *testing.T) {
	const omegaRadPerS = 0.3 // angular speed of the rotating tool
	cases := []struct {
		name   string
		g      geometry.Geometry
		vUMPS  float64 // the moving wall's speed at the observed rim, um/s
		want   float64 // 1/s
		gapUM  float64
		source string
	}{
		// Simple shear between sliding plates: rate = V / h (Macosko,
		// Rheology: Principles, Measurements and Applications, 1994,
		// ch. 1 (from memory)).
		{"plates", geometry.Geometry{Kind: geometry.Plates, GapUM: 800}, 1200, 1200.0 / 800, 800, "Macosko 1994"},
		// Cone and plate: rate = Omega / tan(alpha), uniform across the gap;
		// at the rim the wall speed is Omega R and the gap R tan(alpha)
		// (Macosko 1994, sec. 5.3 (from memory); Bird, Armstrong & Hassager,
		// Dynamics of Polymeric Liquids vol. 1, 1987 (from memory)).
		{"cone-plate", geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 4},
			omegaRadPerS * 25000, omegaRadPerS / math.Tan(4*degree), 25000 * math.Tan(4*degree), "Macosko 1994"},
		// Parallel plates: the rate at the rim radius R is Omega R / h
		// (Macosko 1994, sec. 5.2 (from memory)).
		{"parallel-plate", geometry.Geometry{Kind: geometry.ParallelPlate, RadiusMM: 20, GapUM: 1000},
			omegaRadPerS * 20000, omegaRadPerS * 20000 / 1000, 1000, "Macosko 1994"},
		// Concentric cylinders, inner rotating: the representative shear
		// rate of ISO 3219 / DIN 53019-1, omega (1 + delta^2) / (delta^2 - 1)
		// with delta = Ro / Ri (from memory); delta = 1.0847 is the ratio of
		// the standard's measuring system (from memory).
		{"couette, inner rotating", geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 12, OuterRadiusMM: 12 * 1.0847},
			omegaRadPerS * 12000, omegaRadPerS * (1 + 1.0847*1.0847) / (1.0847*1.0847 - 1), 12 * 0.0847 * 1000, "ISO 3219"},
		// Outer rotating: the same representative rate for the outer
		// cylinder's angular speed (ISO 3219 / DIN 53019-1 (from memory)).
		{"couette, outer rotating", geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 10, OuterRadiusMM: 11, Rotating: geometry.OuterRotates},
			omegaRadPerS * 11000, omegaRadPerS * (1 + 1.21) / (1.21 - 1), 1000, "ISO 3219"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if err := c.g.Validate(); err != nil {
				t.Fatal(err)
			}
			if got := c.g.Gap(); !near(got, c.gapUM) {
				t.Errorf("gap %.9g um, want %.9g", got, c.gapUM)
			}
			if got := c.g.NominalRate(c.vUMPS); !near(got, c.want) {
				t.Errorf("nominal rate %.9g 1/s, want %.9g (%s)", got, c.want, c.source)
			}
			if got := c.g.WallSpeed(c.want); !near(got, c.vUMPS) {
				t.Errorf("wall speed %.9g um/s for the rate, want %.9g", got, c.vUMPS)
			}
		})
	}
}

// TestReferenceProfileHandbook checks the Newtonian no-slip profiles.
func TestReferenceProfileHandbook(t *testing.T) {
	// Plates, cone and parallel plate at the rim: linear, v = V y / h.
	for _, g := range []geometry.Geometry{
		{Kind: geometry.Plates, GapUM: 800},
		{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 2},
		{Kind: geometry.ParallelPlate, RadiusMM: 20, GapUM: 500},
	} {
		h := g.Gap()
		for _, f := range []float64{0, 0.25, 0.5, 1} {
			if got := g.Reference(f*h, 1000); !near(got+1, 1000*f+1) {
				t.Errorf("%s: v(%g h) = %g, want %g", g.Kind, f, got, 1000*f)
			}
			if got := g.LocalRate(f*h, 1000); !near(got, 1000/h) {
				t.Errorf("%s: local rate %g, want %g", g.Kind, got, 1000/h)
			}
		}
	}
	// Concentric cylinders with the outer one rotating at Omega and the
	// inner one still: v(r) = Omega R (r/(kappa R) - kappa R/r) / (1/kappa - kappa)
	// with R the outer and kappa R the inner radius (Bird, Stewart &
	// Lightfoot, Transport Phenomena, 2nd ed., 2002, example 3.6-3, "tangential
	// annular flow" (from memory for the example number)).
	const omega = 0.5
	ri, ro := 10000.0, 11000.0
	kappa := ri / ro
	g := geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: ri / 1000, OuterRadiusMM: ro / 1000, Rotating: geometry.OuterRotates}
	vWall := omega * ro
	for _, y := range []float64{0, 100, 333, 500, 900, 1000} {
		// The stationary wall is the inner cylinder, so y = r - Ri.
		r := ri + y
		want := omega * ro * (r/(kappa*ro) - kappa*ro/r) / (1/kappa - kappa)
		if got := g.Reference(y, vWall); math.Abs(got-want) > 1e-9*vWall {
			t.Errorf("outer rotating: v(y=%g) = %.9g, want %.9g (BSL 2002)", y, got, want)
		}
	}
	// Inner rotating at Omega, outer still: the same solution of the
	// momentum equation, v = A r + B / r with v(Ri) = Omega Ri, v(Ro) = 0
	// (Bird, Stewart & Lightfoot 2002, sec. 3.6). Here y runs inwards
	// from the outer (stationary) wall.
	g = geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: ri / 1000, OuterRadiusMM: ro / 1000}
	vWall = omega * ri
	a := -omega * ri * ri / (ro*ro - ri*ri)
	b := omega * ri * ri * ro * ro / (ro*ro - ri*ri)
	for _, y := range []float64{0, 100, 500, 1000} {
		r := ro - y
		want := a*r + b/r
		if got := g.Reference(y, vWall); math.Abs(got-want) > 1e-9*vWall {
			t.Errorf("inner rotating: v(y=%g) = %.9g, want %.9g", y, got, want)
		}
		// The shear stress, and so the Newtonian rate r d(v/r)/dr, falls as
		// 1/r^2 (constant torque): rate = 2 B / r^2.
		if got, w := g.LocalRate(y, vWall), 2*b/(r*r); math.Abs(got-w) > 1e-9*w {
			t.Errorf("inner rotating: local rate at y=%g %.9g, want %.9g", y, got, w)
		}
	}
	// The representative rate of ISO 3219 is the Newtonian rate at the
	// radius r with r^2 = 2 Ri^2 Ro^2 / (Ri^2 + Ro^2) (derived from the two
	// formulas above).
	rRep := math.Sqrt(2 * ri * ri * ro * ro / (ri*ri + ro*ro))
	if got, w := g.LocalRate(ro-rRep, vWall), g.NominalRate(vWall); math.Abs(got-w) > 1e-9*w {
		t.Errorf("local rate at the representative radius %.9g, nominal %.9g", got, w)
	}
}

// ExampleGeometry_NominalRate gives the nominal rate of a 25 mm cone of 4
// degrees turning at 0.1 rad/s, from the rim's speed.
func ExampleGeometry_NominalRate() {
	g := geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 4}
	v := 0.1 * g.RotatingRadiusUM() // rim speed, um/s
	fmt.Printf("gap %.0f um, rim %.0f um/s, rate %.3f 1/s\n", g.Gap(), v, g.NominalRate(v))
	// Output:
	// gap 1748 um, rim 2500 um/s, rate 1.430 1/s
}
