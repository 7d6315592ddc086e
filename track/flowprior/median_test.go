package flowprior

import (
	"math/rand/v2"
	"sort"
	"testing"
)

// TestMedianAgainstSort checks the selecting median against the median of
// the sorted values (the definition) on random, tied and ordered inputs of
// every length up to 200.
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
			s := append([]float64(nil), v...)
			sort.Float64s(s)
			want := s[n/2]
			if n%2 == 0 {
				want = (s[n/2-1] + s[n/2]) / 2
			}
			if got := median(v); got != want {
				t.Fatalf("%s, n=%d: median %g, want %g", name, n, got, want)
			}
		}
	}
}
