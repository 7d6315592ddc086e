package bands

import (
	"math"
	"math/rand/v2"
	"testing"
)

// profile returns n layers of a piecewise-linear profile on [0, h] with
// noise sd, the same sd given as each layer's error.
func profile(n int, h, v0 float64, rates, bounds []float64, sd float64, rng *rand.Rand) []Point {
	var pts []Point
	for i := range n {
		u := (float64(i) + 0.5) * h / float64(n)
		pts = append(pts, Point{U: u, V: valueAt(u, v0, rates, bounds) + sd*rng.NormFloat64(), Err: sd})
	}
	return pts
}

func TestSelect(t *testing.T) {
	const h = 800
	cases := []struct {
		name   string
		v0     float64
		rates  []float64
		bounds []float64
	}{
		{"one band", 0, []float64{1.5}, nil},
		{"one band with slip", 180, []float64{0.9}, nil},
		{"two bands", 0, []float64{3, 0.5}, []float64{280}},
		{"three bands", 20, []float64{0.4, 2.4, 0.4}, []float64{240, 480}},
	}
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range cases {
		for rep := range 10 {
			pts := profile(40, h, c.v0, c.rates, c.bounds, 1, rng)
			s, err := Select(pts, h, DefaultCriteria(h))
			if err != nil {
				t.Fatal(err)
			}
			m := s.Best
			if m.Bands() != len(c.rates) {
				t.Fatalf("%s, rep %d: %d bands chosen (BIC %v, rejected %q)", c.name, rep, m.Bands(), bics(s), s.Rejected)
			}
			for j, b := range c.bounds {
				if math.Abs(m.Bounds[j]-b) > 4*m.BoundErrs[j]+1 {
					t.Errorf("%s: boundary %.2f +- %.2f um, truth %g", c.name, m.Bounds[j], m.BoundErrs[j], b)
				}
			}
			for j, r := range c.rates {
				if math.Abs(m.Rates[j]-r) > 4*m.RateErrs[j] {
					t.Errorf("%s: rate %.4f +- %.4f, truth %g", c.name, m.Rates[j], m.RateErrs[j], r)
				}
			}
		}
	}
}

func bics(s *Selection) []float64 {
	var b []float64
	for _, m := range s.Fitted {
		if m != nil {
			b = append(b, m.BIC)
		}
	}
	return b
}

// The one-band fit is a weighted straight line, whose intercept and slope
// errors have a closed form (Press et al. 2007, Numerical Recipes, 3rd ed.,
// section 15.2): var(a) = Sxx/D, var(b) = S/D with D = S Sxx - Sx^2.
func TestStraightLineErrors(t *testing.T) {
	pts := []Point{{0, 1, 0.5}, {1, 2.2, 0.5}, {2, 2.9, 1}, {3, 4.1, 0.5}, {4, 5.0, 2}}
	m, err := Fit(pts, 1, 4, 0)
	if err != nil {
		t.Fatal(err)
	}
	var s, sx, sxx, sy, sxy float64
	for _, p := range pts {
		w := 1 / (p.Err * p.Err)
		s, sx, sxx, sy, sxy = s+w, sx+w*p.U, sxx+w*p.U*p.U, sy+w*p.V, sxy+w*p.U*p.V
	}
	d := s*sxx - sx*sx
	a, b := (sxx*sy-sx*sxy)/d, (s*sxy-sx*sy)/d
	chi2 := 0.0
	for _, p := range pts {
		r := (p.V - a - b*p.U) / p.Err
		chi2 += r * r
	}
	infl := math.Sqrt(math.Max(1, chi2/3))
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"intercept", m.V0, a}, {"slope", m.Rates[0], b},
		{"intercept error", m.V0Err, math.Sqrt(sxx/d) * infl}, {"slope error", m.RateErrs[0], math.Sqrt(s/d) * infl},
		{"chi2", m.Chi2, chi2},
	} {
		if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
			t.Errorf("%s %.12g, closed form %.12g", c.name, c.got, c.want)
		}
	}
}

func TestContrastRule(t *testing.T) {
	// Two bands 10% apart in rate, measured very precisely: BIC prefers
	// them, the contrast rule does not accept them.
	rng := rand.New(rand.NewPCG(3, 4))
	pts := profile(40, 800, 0, []float64{1, 1.1}, []float64{400}, 0.05, rng)
	s, err := Select(pts, 800, DefaultCriteria(800))
	if err != nil {
		t.Fatal(err)
	}
	if s.Best.Bands() != 1 || s.Fitted[1].BIC >= s.Fitted[0].BIC || s.Rejected[1] == "" {
		t.Errorf("%d bands chosen; BICs %v, rejected %q", s.Best.Bands(), bics(s), s.Rejected)
	}
}

func TestFitErrors(t *testing.T) {
	good := profile(10, 10, 0, []float64{1}, nil, 1, rand.New(rand.NewPCG(5, 6)))
	cases := []struct {
		name string
		pts  []Point
		k    int
		h, w float64
	}{
		{"four bands", good, 4, 10, 0},
		{"zero domain", good, 1, 0, 0},
		{"zero error", []Point{{1, 1, 0}, {2, 2, 1}, {3, 3, 1}}, 1, 10, 0},
		{"too few", good[:4], 2, 10, 1},
		{"too wide", good, 3, 10, 4},
	}
	for _, c := range cases {
		if _, err := Fit(c.pts, c.k, c.h, c.w); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}
