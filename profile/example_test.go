package profile_test

import (
	"context"
	"fmt"

	"gaptrace/profile"
	"gaptrace/track/synth"
	"gaptrace/track/tracks"
)

// Analyze on synth's made-up demo sample (slip at both walls and two bands
// while sheared, a failure plane after the stop), from its true positions.
func ExampleAnalyze() {
	s, err := synth.Builtin("demo", 1)
	if err != nil {
		fmt.Println(err)
		return
	}
	// True positions; a tracer that wraps around the field is cut by Analyze.
	// The plane lies at 0.45 x 900 = 405 um; the estimate falls between the
	// two tracers that straddle it.
	r, err := profile.Analyze(context.Background(), tracks.Slice(s.TrackPoints()), s.Experiment(), s.Calibration(), profile.Options{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	sp := r.ShearPhases[0]
	fmt.Printf("shear: %s, %d bands, boundary %.0f um, slip fraction %.2f\n", sp.Verdict, len(sp.Bands), float64(sp.Bands[0].ToUM), float64(sp.SlipFraction))
	a := r.AfterStop
	fmt.Printf("after the stop: %s, mode %s, plane %.0f um\n", a.Verdict, *a.Mode, float64(a.PlaneUM))
	// Output:
	// shear: wall_slip+banded, 2 bands, boundary 360 um, slip fraction 0.20
	// after the stop: moving, mode bulk, plane 406 um
}
