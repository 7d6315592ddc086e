package rheolog_test

import (
	"fmt"
	"strings"

	"gaptrace/calib/geometry"
	"gaptrace/calib/rheolog"
)

// ExampleRead reads a made-up instrument log of a sliding-plate shear
// (time and strain, semicolons and decimal commas) as a motion program.
func ExampleRead() {
	log := "time [s];strain [1]\n0;0\n0,5;0\n1,0;0,5\n1,5;1,0\n2,0;1,0\n"
	l, err := rheolog.Read(strings.NewReader(log), rheolog.Spec{})
	if err != nil {
		fmt.Println(err)
		return
	}
	p, err := l.Program(geometry.Geometry{Kind: geometry.Plates, GapUM: 800})
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
