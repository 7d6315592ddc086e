package experiment_test

import (
	"math"
	"path/filepath"
	"testing"

	"gaptrace/calib/experiment"
)

// testdata is the project's folder of reference files.
var testdata = filepath.Join("..", "..", "testdata")

// gapTol is the relative agreement asked of a gap computed two ways: both
// are closed-form, so only rounding separates them.
const gapTol = 1e-12

// TestTestdataExperiments reads the reference experiment file of each
// geometry and checks the gap it implies against the geometry's own
// definition, written out here: the plates' stated gap; at the rim of a
// cone of angle a and radius R, R tan a (the cone's surface rises at angle
// a from the plate: plane trigonometry); the cylinders' radius difference.
func TestTestdataExperiments(t *testing.T) {
	cases := []struct {
		file   string
		gapUM  float64
		shears int
	}{
		{"plates.yaml", 800, 1},
		{"cone-plate.yaml", 25e3 * math.Tan(4*math.Pi/180), 1},
		{"parallel-plate.yaml", 1000, 2},
		{"couette.yaml", 1000, 1},
	}
	for _, c := range cases {
		t.Run(c.file, func(t *testing.T) {
			e, err := experiment.Load(filepath.Join(testdata, "experiments", c.file))
			if err != nil {
				t.Fatal(err)
			}
			if g := e.Geometry.Gap(); math.Abs(g/c.gapUM-1) > gapTol {
				t.Errorf("gap %g um, want %g um", g, c.gapUM)
			}
			if n := len(e.Program()); n != c.shears {
				t.Errorf("%d steps in the motion program, want %d", n, c.shears)
			}
			if e.Name == "" {
				t.Error("no name")
			}
		})
	}
}
