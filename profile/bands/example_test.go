package bands_test

import (
	"fmt"

	"gaptrace/profile/bands"
)

// A made-up profile across an 800 um gap: a fast band of 3/s up to 300 um,
// then 0.6/s, with the fluid at 12 um/s on the stationary wall.
func ExampleSelect() {
	var pts []bands.Point
	for i := range 40 {
		u := (float64(i) + 0.5) * 20
		v := 12 + 3*min(u, 300) + 0.6*max(0, u-300)
		pts = append(pts, bands.Point{U: u, V: v, Err: 1})
	}
	s, err := bands.Select(pts, 800, bands.DefaultCriteria(800))
	if err != nil {
		fmt.Println(err)
		return
	}
	m := s.Best
	fmt.Printf("%d bands, boundary %.0f um, rates %.2f and %.2f 1/s, v(0) = %.1f um/s\n",
		m.Bands(), m.Bounds[0], m.Rates[0], m.Rates[1], m.At(0))
	// Output: 2 bands, boundary 300 um, rates 3.00 and 0.60 1/s, v(0) = 12.0 um/s
}
