package stillspots_test

import (
	"context"
	"fmt"
	"math"

	"gaptrace/calib"
	"gaptrace/profile/stillspots"
	"gaptrace/track/tracks"
)

// A made-up recording of 100 frames at 10 frames/s of a 100 um gap at
// 1 um/px, sheared at 2/s for the whole recording: tracers at every
// height, and a speck of dust on the window at 40 um that never moves.
func ExampleFind() {
	var pts tracks.Slice
	wobble := func(i int) float64 { return 0.05 * math.Sin(1.7*float64(i)) } // a localization error, px
	for id := range 400 {
		y := float64(id%100) + 0.5
		x0 := float64(7 * id % 300)
		for f := id % 50; f < id%50+30; f++ {
			x := x0 + 2*y*float64(f-id%50)/10 + wobble(f+id)
			pts = append(pts, tracks.Point{Track: id, Frame: f, TS: float64(f) / 10, XPx: x, YPx: y, XUM: x, YUM: y, SizePx: 1.5})
		}
	}
	for f := range 100 {
		x := 150 + wobble(f)
		pts = append(pts, tracks.Point{Track: 1000, Frame: f, TS: float64(f) / 10, XPx: x, YPx: 40, XUM: x, YUM: 40, SizePx: 1.5})
	}
	cal := &calib.Calibration{UMPerPx: 1, GapUM: 100}
	spots, err := stillspots.Find(context.Background(), pts, []stillspots.Phase{{StartS: 0, EndS: 10}}, cal)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, s := range spots.Spots {
		fmt.Printf("still spot at (%.0f, %.0f) px where the fluid moves at %.0f um/s\n", s.XPx, s.YPx, s.FluidUMPerS)
	}
	kept, _ := tracks.Collect(spots.Source(pts))
	fmt.Printf("%d of %d detections left for the profile\n", len(kept), len(pts))
	fmt.Println(spots.Warning() != "")
	// Output:
	// still spot at (150, 40) px where the fluid moves at 85 um/s
	// 12000 of 12100 detections left for the profile
	// true
}
