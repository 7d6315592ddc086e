package grid

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestNearAgainstBruteForce compares every look-up with a scan of all
// points, for radii below, at and above the cell size, and after a rebuild
// with fewer points (the buffers are reused).
func TestNearAgainstBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	var g Grid
	for _, n := range []int{500, 37, 0, 1} {
		xs, ys := make([]float64, n), make([]float64, n)
		for i := range n {
			xs[i], ys[i] = 640*rng.Float64(), 480*rng.Float64()
		}
		if n == 1 {
			xs[0], ys[0] = 1e6, -1e6 // a far outlier alone
		}
		g.Build(n, func(i int) (float64, float64) { return xs[i], ys[i] }, 20)
		for q := 0; q < 200; q++ {
			x, y, r := 640*rng.Float64(), 480*rng.Float64(), []float64{5, 20, 55}[q%3]
			var got, want []int
			g.Near(x, y, r, func(i int) { got = append(got, i) })
			for i := range n {
				if dx, dy := xs[i]-x, ys[i]-y; dx*dx+dy*dy <= r*r {
					want = append(want, i)
				}
			}
			slices.Sort(got)
			if !slices.Equal(got, want) {
				t.Fatalf("n=%d near(%.1f, %.1f, %g) = %v, want %v", n, x, y, r, got, want)
			}
		}
	}
}
