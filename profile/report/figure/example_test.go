package figure_test

import (
	"fmt"
	"log"

	"gaptrace/profile/report/figure"
)

// ProfilePlot draws the steady profile of a shear phase: here a sample that
// slips at the moving wall of an 800 um gap and shears uniformly in between
// (made-up numbers).
func ExampleProfilePlot() {
	const gapUM, wallUMPerS, slipUMPerS = 800.0, 1200.0, 300.0
	rate := (wallUMPerS - slipUMPerS) / gapUM
	p := &figure.PhaseProfile{GapUM: gapUM, WallSpeedUMPerS: wallUMPerS,
		Bands: []figure.Band{{FromUM: 0, ToUM: gapUM, RatePerS: rate}}}
	for i := range 16 {
		y := (float64(i) + 0.5) * gapUM / 16
		p.Points = append(p.Points, figure.ProfilePoint{YUM: y, VUMPerS: rate * y, ErrUMPerS: 10, N: 100})
	}
	p.Fit = []figure.VelocityPoint{{YUM: 0, VUMPerS: 0}, {YUM: gapUM, VUMPerS: rate * gapUM}}
	fig, err := figure.ProfilePlot(p)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("%.1f cm x %.1f cm, PNG, SVG and PDF\n", fig.WidthCM, fig.HeightCM)
	// Output: 8.7 cm x 7.5 cm, PNG, SVG and PDF
}
