package flowprior_test

import (
	"fmt"
	"math/rand/v2"

	"gaptrace/calib"
	"gaptrace/track/flowprior"
)

// Tracers scattered over an 800 um gap (2 um per px, moving wall on top) in
// linear shear, the moving wall travelling 16 px per frame: the displacement
// profile comes out of the detections alone, before any linking. The true
// values at the bin centres are 2, 6, 10 and 14 px per frame; each estimate
// is the mean over the tracers that happen to lie in its 100 px tall bin.
func ExampleFromDetections() {
	cal := &calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 450}, {639, 450}},
		MovingWallPx: calib.Line{{0, 50}, {639, 50}}, FlowSign: 1}
	rng := rand.New(rand.NewPCG(1, 2))
	const wallPx = 16
	type tracer struct{ x, y float64 }
	ts := make([]tracer, 300)
	for i := range ts {
		ts[i] = tracer{rng.Float64() * 640, 50 + rng.Float64()*400}
	}
	frames := make([][]flowprior.Point, 30)
	for f := range frames {
		for i := range ts {
			frames[f] = append(frames[f], flowprior.Point{XPx: ts[i].x, YPx: ts[i].y})
			ts[i].x += wallPx * (450 - ts[i].y) / 400 // wraps out of view: fine
		}
	}
	p, err := flowprior.FromDetections(frames, cal, flowprior.HistOptions{MaxStepPx: 24, BinUM: 200})
	if err != nil {
		fmt.Println(err)
		return
	}
	for i, y := range p.YUM {
		fmt.Printf("y %3.0f um: %4.1f px per frame\n", y, p.AlongPx(cal, i))
	}
	// Output:
	// y 100 um:  1.9 px per frame
	// y 300 um:  6.1 px per frame
	// y 500 um: 10.0 px per frame
	// y 700 um: 13.7 px per frame
}
