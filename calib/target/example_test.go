package target_test

import (
	"fmt"

	"gocv.io/x/gocv"

	"gaptrace/calib/target"
)

// ExampleMeasureRuler measures a made-up ruler image: dark lines 3 px wide
// every 20 px across a 400x100 image, 100 um apart on the ruler.
func ExampleMeasureRuler() {
	w, h := 400, 100
	pix := make([]byte, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			pix[y*w+x] = 220
			if x%20 < 3 {
				pix[y*w+x] = 40
			}
		}
	}
	img, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8U, pix)
	if err != nil {
		fmt.Println(err)
		return
	}
	defer img.Close()
	r, err := target.MeasureRuler(img, 100)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("pitch %.2f px along %s: %.3f um/px\n", r.PitchPx, r.Along, r.UMPerPx)
	// Output:
	// pitch 20.00 px along x: 5.000 um/px
}
