package robust

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestSelectKthAgainstSort checks every k of random, sorted, reversed and
// constant slices against the sorted slice.
func TestSelectKthAgainstSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	gens := map[string]func(n int) []float64{
		"random": func(n int) []float64 {
			v := make([]float64, n)
			for i := range v {
				v[i] = rng.NormFloat64()
			}
			return v
		},
		"few": func(n int) []float64 {
			v := make([]float64, n)
			for i := range v {
				v[i] = float64(rng.IntN(3))
			}
			return v
		},
		"sorted": func(n int) []float64 {
			v := make([]float64, n)
			for i := range v {
				v[i] = float64(i)
			}
			return v
		},
		"reversed": func(n int) []float64 {
			v := make([]float64, n)
			for i := range v {
				v[i] = float64(-i)
			}
			return v
		},
	}
	for name, gen := range gens {
		for _, n := range []int{1, 2, 15, 16, 17, 100, 1001} {
			ref := gen(n)
			sorted := slices.Clone(ref)
			slices.Sort(sorted)
			for k := 0; k < n; k += max(1, n/37) {
				v := slices.Clone(ref)
				got := SelectKth(v, k)
				if got != sorted[k] {
					t.Fatalf("%s n=%d k=%d: %g, want %g", name, n, k, got, sorted[k])
				}
				for i := range k {
					if v[i] > got {
						t.Fatalf("%s n=%d k=%d: v[%d]=%g > v[k]", name, n, k, i, v[i])
					}
				}
				for i := k + 1; i < n; i++ {
					if v[i] < got {
						t.Fatalf("%s n=%d k=%d: v[%d]=%g < v[k]", name, n, k, i, v[i])
					}
				}
			}
		}
	}
	if got := SelectKth([]uint8{9, 3, 7, 1, 5}, 2); got != 5 {
		t.Errorf("uint8 median = %d, want 5", got)
	}
}
