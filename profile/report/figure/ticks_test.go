package figure

import (
	"slices"
	"testing"
)

func TestNiceTicks(t *testing.T) {
	cases := []struct {
		lo, hi float64
		major  int
		want   []string // the labels
	}{
		{-2.9, 13.4, 5, []string{"0", "5", "10"}},
		{0, 6, 6, []string{"0", "1", "2", "3", "4", "5", "6"}},
		{0, 1.03, 5, []string{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}},
		{-0.05, 1.5, 4, []string{"0.0", "0.5", "1.0", "1.5"}},
		{0, 800, 4, []string{"0", "200", "400", "600", "800"}},
		{-480, 0.5, 5, []string{"−400", "−300", "−200", "−100", "0"}}, // the minus sign U+2212
	}
	for _, c := range cases {
		var got []string
		for _, tk := range (niceTicks{Major: c.major}).Ticks(c.lo, c.hi) {
			if tk.Value < c.lo-1e-12 || tk.Value > c.hi+1e-12 {
				t.Errorf("[%g, %g]: tick %g outside", c.lo, c.hi, tk.Value)
			}
			if tk.Label != "" {
				got = append(got, tk.Label)
			}
		}
		if !slices.Equal(got, c.want) {
			t.Errorf("[%g, %g] with %d: labels %v, want %v", c.lo, c.hi, c.major, got, c.want)
		}
	}
}
