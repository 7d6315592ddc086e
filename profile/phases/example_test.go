package phases_test

import (
	"fmt"

	"gaptrace/profile/phases"
)

// ExampleDetect finds a shear phase in the displacement per frame of the
// tracers beside the moving wall: still for 50 frames, 3 px per frame for
// 50 frames, then still again, at 200 frames per second.
func ExampleDetect() {
	signal := make([]float64, 150)
	for i := 51; i <= 100; i++ {
		signal[i] = 3
	}
	d, err := phases.Detect(signal, 200)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range d.Phases {
		fmt.Printf("%s %.3f-%.3f s (%s)\n", p.Kind, p.StartS, p.EndS, p.Source)
	}
	// Output:
	// rest 0.000-0.250 s (detected)
	// shear 0.250-0.500 s (detected)
	// after_stop 0.500-0.750 s (detected)
}
