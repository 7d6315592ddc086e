package robust

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestMADToSigma checks the constant against 1 / Φ⁻¹(3/4) from gonum's
// normal distribution (an independent reference library), to the four
// decimals it is given with.
func TestMADToSigma(t *testing.T) {
	want := 1 / distuv.UnitNormal.Quantile(0.75)
	if math.Abs(MADToSigma-want) > 0.5e-4 {
		t.Errorf("MADToSigma %g, 1/Φ⁻¹(3/4) = %.6f", MADToSigma, want)
	}
}

// TestMedian checks odd, even, one and no values, and that the caller's
// slice keeps its order.
func TestMedian(t *testing.T) {
	for _, c := range []struct {
		name string
		v    []float64
		want float64
	}{
		{"odd", []float64{5, 1, 4, 2, 3}, 3},
		{"even", []float64{4, 1, 3, 2}, 2.5},
		{"one", []float64{7}, 7},
		{"repeated", []float64{2, 2, 1, 2}, 2},
	} {
		before := slices.Clone(c.v)
		if got := Median(c.v); got != c.want {
			t.Errorf("%s: Median(%v) = %g, want %g", c.name, before, got, c.want)
		}
		if !slices.Equal(c.v, before) {
			t.Errorf("%s: Median reordered its input to %v", c.name, c.v)
		}
	}
	if got := Median(nil); !math.IsNaN(got) {
		t.Errorf("Median(nil) = %g, want NaN", got)
	}
	if m, d := MAD(nil); !math.IsNaN(m) || !math.IsNaN(d) {
		t.Errorf("MAD(nil) = %g, %g, want NaN, NaN", m, d)
	}
}

// TestMedianAgainstSort checks Median against the median of the sorted
// values (the definition) on random, tied and ordered inputs of every
// length up to 200, across the stack copy's length, and that the input
// keeps its order.
func TestMedianAgainstSort(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	gens := map[string]func(i, n int) float64{
		"random":     func(i, n int) float64 { return r.NormFloat64() },
		"ties":       func(i, n int) float64 { return float64(r.IntN(3)) },
		"ascending":  func(i, n int) float64 { return float64(i) },
		"descending": func(i, n int) float64 { return float64(n - i) },
		"constant":   func(i, n int) float64 { return 7 },
	}
	for name, gen := range gens {
		for n := 1; n <= 200; n++ {
			v := make([]float64, n)
			for i := range v {
				v[i] = gen(i, n)
			}
			s := slices.Clone(v)
			slices.Sort(s)
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			}
			before := slices.Clone(v)
			if got := Median(v); got != want {
				t.Fatalf("%s, n=%d: median %g, want %g", name, n, got, want)
			}
			if !slices.Equal(v, before) {
				t.Fatalf("%s, n=%d: Median reordered its input", name, n)
			}
		}
	}
}

// TestMAD checks the deviation of a small set worked by hand: median 3,
// deviations 2 1 0 1 7 with median 1.
func TestMAD(t *testing.T) {
	m, d := MAD([]float64{1, 2, 3, 4, 10})
	if m != 3 || d != 1 {
		t.Errorf("MAD = %g, %g; want 3, 1", m, d)
	}
}

func BenchmarkMedian(b *testing.B) {
	v := make([]float64, 40)
	for i := range v {
		v[i] = math.Sin(float64(i))
	}
	b.ReportAllocs()
	for b.Loop() {
		Median(v)
	}
}
