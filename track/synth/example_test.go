package synth_test

import (
	"fmt"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/track/synth"
)

// A built-in scenario: its truth, the true tracers of a frame, and the frame.
func ExampleBuiltin() {
	s, err := synth.Builtin("slip", 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	sp := s.Truth().Summary.ShearPhases[0]
	fmt.Printf("V %.0f um/s, slips %.0f and %.0f um/s, bulk rate %.2f 1/s, %s\n",
		sp.WallSpeedUMPerS, sp.SlipStationaryUMPerS, sp.SlipMovingUMPerS, sp.BulkRatePerS, sp.Verdict)

	m := gocv.NewMat()
	defer m.Close()
	if err := s.Render(100, &m); err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("frame 100: %dx%d px, %d tracers in view\n", m.Cols(), m.Rows(), len(s.Positions(100)))
	// Output:
	// V 800 um/s, slips 120 and 200 um/s, bulk rate 0.60 1/s, wall_slip
	// frame 100: 640x480 px, 407 tracers in view
}

// One spot, integrated over the pixels: its centroid is where it was put.
func ExampleAddSpot() {
	const w, h = 16, 16
	img := make([]float64, w*h)
	synth.AddSpot(img, w, h, 7.3, 8.6, 1.2, 1000)
	var sx, sy, sum float64
	for i, v := range img {
		sx += v * float64(i%w)
		sy += v * float64(i/w)
		sum += v
	}
	fmt.Printf("centroid (%.3f, %.3f), %.0f photons\n", sx/sum, sy/sum, math.Round(sum))
	// Output: centroid (7.300, 8.600), 1000 photons
}

// The displacement after a failure plane at 0.6 H has fully developed:
// layers below move back, layers above forward, with a jump of strain x H.
func ExampleCessation_Displacement() {
	c := synth.Cessation{Kind: synth.CessationPlane, PlaneFrac: 0.6, RecoveredStrain: 0.05}
	for _, y := range []float64{0, 200, 479, 480, 800} {
		fmt.Printf("y %3.0f um: dx %+.2f um\n", y, c.Displacement(y, 800, 10))
	}
	// Output:
	// y   0 um: dx +0.00 um
	// y 200 um: dx -10.00 um
	// y 479 um: dx -23.95 um
	// y 480 um: dx +16.00 um
	// y 800 um: dx +0.00 um
}
