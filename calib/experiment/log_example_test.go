package experiment_test

import (
	"fmt"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// ExampleReadLog reads a made-up instrument log of a sliding-plate shear
// (time and strain) as a motion program.
func ExampleReadLog() {
	log := "time_s,strain\n0,0\n0.5,0\n1.0,0.5\n1.5,1.0\n2.0,1.0\n"
	g := geometry.Geometry{Kind: geometry.Plates, GapUM: 800}
	p, err := experiment.ReadLog(strings.NewReader(log), experiment.LogColumns{Time: "time_s", Value: "strain", Kind: experiment.LogStrain}, g)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, s := range p {
		fmt.Printf("%.1f-%.1f s: rate %.2f 1/s, wall %.0f um/s\n", s.StartS, s.EndS, s.RatePerS, s.WallSpeedUMPerS)
	}
	// Output:
	// 0.5-1.5 s: rate 1.00 1/s, wall 800 um/s
}
