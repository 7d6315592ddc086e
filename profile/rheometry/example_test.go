package rheometry_test

import (
	"fmt"

	"gaptrace/calib/geometry"
	"gaptrace/profile/layers"
	"gaptrace/profile/rheometry"
)

// A made-up steady profile in an 800 um plate gap whose top wall moves at
// 1200 um/s: the fluid moves at 180 um/s on the bottom wall and 900 um/s
// under the top one.
func ExampleDecompose() {
	var bins []layers.Bin
	for i := range 40 {
		y := (float64(i) + 0.5) * 20
		bins = append(bins, layers.Bin{YUM: y, Value: 180 + 720*y/800, Err: 2, N: 200, Groups: 30})
	}
	g := geometry.Geometry{Kind: geometry.Plates, GapUM: 800}
	d, err := rheometry.Decompose(bins, g, 1200, rheometry.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("bulk %.3f 1/s, slips %.0f and %.0f um/s, slip lengths %.0f and %.0f um, slip fraction %.2f: %s\n",
		d.BulkRatePerS, d.SlipStationaryUMPerS, d.SlipMovingUMPerS,
		d.SlipLengthStationaryUM, d.SlipLengthMovingUM, d.SlipFraction, d.Verdict)
	// Output: bulk 0.900 1/s, slips 180 and 300 um/s, slip lengths 200 and 333 um, slip fraction 0.40: wall_slip
}
