package cessation_test

import (
	"fmt"

	"gaptrace/profile/cessation"
	"gaptrace/profile/velocity"
	"gaptrace/track/tracks"
)

// A made-up stop: ten tracers sheared at up to 500 um/s stop at 1.0012 s,
// between two frames of a 200 frames/s recording; the video placed the stop
// a frame late.
func ExampleRefineStop() {
	const dtS = 0.005
	var ts []velocity.Track
	for i := range 10 {
		v := 50 * float64(i+1)
		tr := velocity.Track{ID: i}
		for f := range 300 {
			tS := float64(f) * dtS
			tr.Points = append(tr.Points, tracks.Point{Track: i, Frame: f, TS: tS, XUM: v * min(tS, 1.0012), YUM: 80 * float64(i)})
		}
		ts = append(ts, tr)
	}
	stop, err := cessation.RefineStop(ts, 1.005, dtS, 0.2)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("stop at %.4f s\n", stop)
	// Output:
	// stop at 1.0012 s
}
