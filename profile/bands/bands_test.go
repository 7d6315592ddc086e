package bands

import (
	"math"
	"math/rand/v2"
	"strings"
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
	pts := []Point{{U: 0, V: 1, Err: 0.5}, {U: 1, V: 2.2, Err: 0.5}, {U: 2, V: 2.9, Err: 1}, {U: 3, V: 4.1, Err: 0.5}, {U: 4, V: 5.0, Err: 2}}
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
		{"zero error", []Point{{U: 1, V: 1}, {U: 2, V: 2, Err: 1}, {U: 3, V: 3, Err: 1}}, 1, 10, 0},
		{"negative width", []Point{{U: 1, V: 1, Err: 1, Width: -1}, {U: 2, V: 2, Err: 1}, {U: 3, V: 3, Err: 1}}, 1, 10, 0},
		{"too few", good[:4], 2, 10, 1},
		{"too wide", good, 3, 10, 4},
	}
	for _, c := range cases {
		if _, err := Fit(c.pts, c.k, c.h, c.w); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}

// layerMean is the mean of the profile over [u - w/2, u + w/2] by the
// midpoint rule on quadSteps points, as a layer of evenly spread tracers
// measures it; its error is far below the fits' tolerances (the rule is
// exact on the linear pieces and errs only in the one step that holds a
// kink, by less than the rate difference times the step over 8).
func layerMean(u, w, v0 float64, rates, bounds []float64) float64 {
	const quadSteps = 4000
	var s float64
	for i := range quadSteps {
		s += valueAt(u-w/2+(float64(i)+0.5)*w/quadSteps, v0, rates, bounds)
	}
	return s / quadSteps
}

// TestLayerWidth fits layers whose values are the means over their width
// of a two-band profile, with the boundary at places across a layer (its
// edge, a quarter, the middle, three quarters): fitted with the layers'
// width, the boundary comes out where it is; fitted as points at the
// layers' centres, the layer across the kink moves it, most with the kink
// in its middle.
func TestLayerWidth(t *testing.T) {
	const (
		h, n = 800.0, 40
		w    = h / n
		// noiseUMPerS is far below the layer across the kink's bias,
		// (3 - 0.5) w / 8 = 6 um/s at most, so that the bias shows.
		noiseUMPerS = 0.05
		// widthTolUM is how near the width-aware fit must come: the
		// noise alone gives about 0.05 um here (its BoundErrs), the
		// quadrature far less.
		widthTolUM = 0.3
		// pointMinBiasUM is the least bias the point fit shows with the
		// kink in the middle of a layer: a fiftieth of the layer (it gives
		// a thirtieth here).
		pointMinBiasUM = w / 50
	)
	rates := []float64{3, 0.5}
	rng := rand.New(rand.NewPCG(11, 12))
	for _, c := range []struct {
		name   string
		bound  float64
		middle bool // the kink lies in the middle of a layer
	}{
		{"on an edge", 14 * w, false},
		{"a quarter in", 14.25 * w, false},
		{"in the middle", 14.5 * w, true},
		{"three quarters in", 14.75 * w, false},
	} {
		bounds := []float64{c.bound}
		var wide, point []Point
		for i := range n {
			u := (float64(i) + 0.5) * w
			v := layerMean(u, w, 5, rates, bounds) + noiseUMPerS*rng.NormFloat64()
			wide = append(wide, Point{U: u, V: v, Err: noiseUMPerS, Width: w})
			point = append(point, Point{U: u, V: v, Err: noiseUMPerS})
		}
		mw, err := Fit(wide, 2, h, DefaultMinWidthFraction*h)
		if err != nil {
			t.Fatal(err)
		}
		mp, err := Fit(point, 2, h, DefaultMinWidthFraction*h)
		if err != nil {
			t.Fatal(err)
		}
		if d := mw.Bounds[0] - c.bound; math.Abs(d) > widthTolUM {
			t.Errorf("%s: with the layers' width the boundary is %.3f um, truth %.3f (off %.3f um, error %.3f)", c.name, mw.Bounds[0], c.bound, d, mw.BoundErrs[0])
		}
		if d := mp.Bounds[0] - c.bound; c.middle && math.Abs(d) < pointMinBiasUM {
			t.Errorf("%s: as points the boundary is %.3f um, truth %.3f: off only %.3f um, the test no longer shows the bias", c.name, mp.Bounds[0], c.bound, d)
		}
		t.Logf("%s: boundary with widths %.3f ± %.3f, as points %.3f ± %.3f, truth %.3f um", c.name, mw.Bounds[0], mw.BoundErrs[0], mp.Bounds[0], mp.BoundErrs[0], c.bound)
	}
}

// TestOppositeSenses checks that a model whose bands shear in opposite
// senses is not taken, however well it fits: a profile that rises across
// most of the gap and falls over its last tenth (as layers polluted by
// static false detections next to a moving plate give) stays one band.
// The rule rests on the uniform shear stress across a gap in steady shear
// (Bird, Stewart & Lightfoot 2002, section 3.2; from memory).
func TestOppositeSenses(t *testing.T) {
	const h = 800.0
	rng := rand.New(rand.NewPCG(13, 14))
	pts := profile(40, h, 120, []float64{0.6, -4.5}, []float64{720}, 1, rng)
	s, err := Select(pts, h, DefaultCriteria(h))
	if err != nil {
		t.Fatal(err)
	}
	if s.Best.Bands() != 1 || !strings.Contains(s.Rejected[1], "opposite senses") {
		t.Errorf("%d bands chosen (rates %v); rejected %q", s.Best.Bands(), s.Best.Rates, s.Rejected)
	}
	// A plug (a rate within its error of zero) beside a shearing band is
	// still a band.
	plug := profile(40, h, 0, []float64{2, 0}, []float64{400}, 0.5, rng)
	s, err = Select(plug, h, DefaultCriteria(h))
	if err != nil {
		t.Fatal(err)
	}
	if s.Best.Bands() != 2 {
		t.Errorf("shear band and plug: %d bands chosen; rejected %q", s.Best.Bands(), s.Rejected)
	}
}
