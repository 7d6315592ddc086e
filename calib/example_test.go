package calib_test

import (
	"fmt"

	"gaptrace/calib"
)

// ExampleCalibration_ToGap maps a pixel of a calibrated image into the gap
// and back: walls 400 px apart, the moving wall on top, 2 um per pixel.
func ExampleCalibration_ToGap() {
	c := &calib.Calibration{UMPerPx: 2, GapUM: 800, FlowSign: 1,
		StationaryWallPx: calib.Line{{0, 440}, {639, 440}}, MovingWallPx: calib.Line{{0, 40}, {639, 40}}}
	x, y := c.ToGap(100, 340)
	fmt.Printf("x = %.0f um, y = %.0f um\n", x, y)
	px, py := c.ToImage(x, y)
	fmt.Printf("back at (%.0f, %.0f) px\n", px, py)
	// Output:
	// x = 200 um, y = 200 um
	// back at (100, 340) px
}
