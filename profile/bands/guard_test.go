package bands

import (
	"math"
	"strings"
	"testing"
)

// TestDegenerateLayers checks that layers that determine no profile give
// an error from Fit and Select, not a panic (issue 18: the tracks of a
// cellular-automaton video gave layers on which the one-band fit found no
// rates, and gonum panicked on a matrix of zero size).
func TestDegenerateLayers(t *testing.T) {
	same := make([]Point, 6)
	for i := range same {
		same[i] = Point{U: 100, V: float64(i), Err: 1}
	}
	huge := make([]Point, 6)
	for i := range huge {
		huge[i] = Point{U: float64(i) * 100, V: 1e308 * float64(i%2*2-1), Err: 1e-308}
	}
	cases := []struct {
		name string
		pts  []Point
	}{
		{"all at one height", same},
		{"values overflowing", huge},
		{"infinite value", []Point{{U: 0, V: 1, Err: 1}, {U: 100, V: math.Inf(1), Err: 1}, {U: 200, V: 3, Err: 1}, {U: 300, V: 4, Err: 1}}},
		{"no layers", nil},
	}
	for _, c := range cases {
		for k := 1; k <= 3; k++ {
			if m, err := Fit(c.pts, k, 800, 0); err == nil {
				t.Errorf("%s, %d bands: fitted %+v", c.name, k, m)
			} else if strings.Contains(err.Error(), "\n") {
				t.Errorf("%s: error of several lines %q", c.name, err)
			}
		}
		if _, err := Select(c.pts, 800, DefaultCriteria(800)); err == nil {
			t.Errorf("%s: Select gave no error", c.name)
		} else {
			t.Logf("%s: %v", c.name, err)
		}
	}
}
