package experiment_test

import (
	"math"
	"os"
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

// logStepTolS is how closely a step read from the reference log must be
// timed: the log is sampled every 0.02 s and its steps start and end on
// samples, so only rounding separates them.
const logStepTolS = 1e-9

// TestTestdataLog reads the reference rheometer log: the 4 degree cone
// turns at a constant rate by twice the cone angle between 0.2 and 0.7 s.
// At the observed rim the sample between the plate and the cone's surface,
// R tan a above it, is sheared by the rim's travel R theta over that gap,
// so the strain is theta / tan a (the small-angle textbook form theta / a,
// e.g. Macosko 1994, Rheology: Principles, Measurements and Applications,
// ch. 5 (from memory), differs from it by 0.16 % at 4 degrees).
func TestTestdataLog(t *testing.T) {
	e, err := experiment.Load(filepath.Join(testdata, "experiments", "cone-plate.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(testdata, "rheometer", "cone-plate-step.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	p, err := experiment.ReadLog(f, experiment.LogColumns{Time: "time_s", Value: "angle_rad", Kind: experiment.LogAngleRad}, e.Geometry)
	if err != nil {
		t.Fatal(err)
	}
	// The log's angles are written to 1e-6 rad of 0.14 rad.
	const rateTol = 1e-4
	a := 4 * math.Pi / 180
	strain := 2 * a / math.Tan(a)
	if len(p) != 1 || math.Abs(p[0].StartS-0.2) > logStepTolS || math.Abs(p[0].EndS-0.7) > logStepTolS ||
		math.Abs(p[0].Strain/strain-1) > rateTol || math.Abs(p[0].RatePerS/(strain/0.5)-1) > rateTol {
		t.Errorf("program %+v, want one step 0.2-0.7 s of strain %.6f", p, strain)
	}
}
