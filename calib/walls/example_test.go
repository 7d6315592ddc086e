package walls_test

import (
	"fmt"
	"math"

	"gaptrace/calib/walls"
)

// ExampleFindPixels finds the walls of a made-up 320x200 image: bright
// plates above y = 40 and below y = 160 at the left edge, a dark sample
// between them, the whole tilted by half a degree.
func ExampleFindPixels() {
	w, h := 320, 200
	slope := math.Tan(0.5 * math.Pi / 180)
	pix := make([]float32, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			top, bot := 40+slope*float64(x), 160+slope*float64(x)
			in := 0.5 * math.Erfc(-(float64(y)-top)/math.Sqrt2) * 0.5 * math.Erfc(-(bot-float64(y))/math.Sqrt2)
			pix[y*w+x] = float32(200 - 150*in)
		}
	}
	r, err := walls.FindPixels(pix, w, h, walls.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("top wall at y = %.2f, bottom at y = %.2f (x = 0)\n", r.Top.YAt(0), r.Bottom.YAt(0))
	fmt.Printf("gap %.2f px, tilt %.3f deg\n", r.GapPx, r.TiltDeg)
	// Output:
	// top wall at y = 40.00, bottom at y = 160.00 (x = 0)
	// gap 120.00 px, tilt 0.500 deg
}
