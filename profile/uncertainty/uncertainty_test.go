package uncertainty

import (
	"math"
	"testing"
)

// For a linear model the law of propagation is exact (JCGM 100:2008, 5.1.2
// and eq. 10): y = 2 x1 - 3 x2 + x3 has u(y)^2 = 4 u1^2 + 9 u2^2 + u3^2,
// and inputs of one component add in quadrature within it.
func TestPropagateLinear(t *testing.T) {
	in := []Input{{WallPosition, 1, 0.5}, {Scale, 2, 0.2}, {WallPosition, -1, 1.5}}
	y, c, err := Propagate(func(x []float64) []float64 { return []float64{2*x[0] - 3*x[1] + x[2]} }, in)
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-9 // rounding of the central differences
	if math.Abs(y[0]-(-5)) > tol {
		t.Errorf("y = %g, want -5", y[0])
	}
	if w := math.Hypot(2*0.5, 1.5); math.Abs(c[0][WallPosition]-w) > tol {
		t.Errorf("wall position contributes %g, want %g", c[0][WallPosition], w)
	}
	if math.Abs(c[0][Scale]-0.6) > tol {
		t.Errorf("scale contributes %g, want 0.6", c[0][Scale])
	}
	if w := math.Sqrt(4*0.25 + 9*0.04 + 2.25); math.Abs(c[0].Combined()-w) > tol {
		t.Errorf("combined %g, want %g", c[0].Combined(), w)
	}
}

func TestPropagateRejectsBadUncertainty(t *testing.T) {
	for _, u := range []float64{-1, math.NaN(), math.Inf(1)} {
		if _, _, err := Propagate(func(x []float64) []float64 { return x }, []Input{{Scale, 1, u}}); err == nil {
			t.Errorf("standard uncertainty %g accepted", u)
		}
	}
}

func TestCombinedUnknown(t *testing.T) {
	if !math.IsNaN(Contributions{}.Combined()) {
		t.Error("an empty budget has a combined uncertainty")
	}
	if !math.IsNaN(Contributions{Statistical: 1, Scale: math.NaN()}.Combined()) {
		t.Error("a budget with an unknown component has a known combined uncertainty")
	}
}

// The product y = x1 x2 of independent normal inputs has the exact variance
// x2^2 u1^2 + x1^2 u2^2 + u1^2 u2^2 (Goodman 1960, J. Am. Stat. Assoc.
// 55:708, eq. 1 for independent variables; from memory); the law of
// propagation gives the first two terms (GUM eq. 10), a Monte Carlo
// propagation (JCGM 101:2008) all three. With relative uncertainties of 2 %
// the two agree to 0.02 %; with 100 % and 50 % the GUM misses the last
// term and Monte Carlo finds it.
func TestMonteCarloProduct(t *testing.T) {
	f := func(x []float64) []float64 { return []float64{x[0] * x[1]} }
	cases := []struct {
		x1, u1, x2, u2 float64
	}{{10, 0.2, 5, 0.1}, {1, 1, 2, 1}}
	for _, c := range cases {
		in := []Input{{Statistical, c.x1, c.u1}, {Scale, c.x2, c.u2}}
		_, gum, err := Propagate(f, in)
		if err != nil {
			t.Fatal(err)
		}
		lin := math.Sqrt(c.x2*c.x2*c.u1*c.u1 + c.x1*c.x1*c.u2*c.u2)
		exact := math.Sqrt(lin*lin + c.u1*c.u1*c.u2*c.u2)
		if math.Abs(gum[0].Combined()/lin-1) > 1e-9 {
			t.Errorf("%+v: GUM gives %g, eq. 10 %g", c, gum[0].Combined(), lin)
		}
		const draws = 200000
		// Sampling error of a standard deviation from n draws: 1/sqrt(2n),
		// 0.16 % here; 1 % is six of them.
		const mcTol = 0.01
		_, sd := MonteCarlo(f, in, draws, 7)
		if math.Abs(sd[0]/exact-1) > mcTol {
			t.Errorf("%+v: Monte Carlo gives %g, exact %g", c, sd[0], exact)
		}
	}
}
