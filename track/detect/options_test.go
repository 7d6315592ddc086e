package detect

import (
	"math/rand/v2"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

func TestOptionsErrors(t *testing.T) {
	line := [2][2]float64{{0, 10}, {100, 10}}
	for _, tc := range []struct {
		opt  Options
		want string
	}{
		{Options{}, "tracer diameter 0 px: need 2 to 40 px"},
		{Options{DiameterPx: 1.5}, "tracer diameter 1.5 px"},
		{Options{DiameterPx: 5, Polarity: "grey"}, `polarity "grey"`},
		{Options{DiameterPx: 5, MinSNR: -1}, "minimum SNR -1"},
		{Options{DiameterPx: 5, MaxEccentricity: -0.5}, "largest eccentricity -0.5"},
		{Options{DiameterPx: 5, Estimator: 7}, "unknown estimator 7"},
		{Options{DiameterPx: 5, Workers: -2}, "-2 workers"},
		{Options{DiameterPx: 5, Mask: &Mask{Stationary: line, Moving: [2][2]float64{{3, 3}, {3, 3}}}}, "two equal points"},
		{Options{DiameterPx: 5, Mask: &Mask{Stationary: line, Moving: line, MarginPx: -3}}, "margin -3 px"},
	} {
		_, err := NewDetector(tc.opt)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: error %v, want one containing %q", tc.opt, err, tc.want)
		}
	}
	if _, err := ParseEstimator("fit"); err == nil || !strings.Contains(err.Error(), `"fit"`) {
		t.Errorf("ParseEstimator: %v", err)
	}
	for _, e := range []Estimator{Centroid, RadialSymmetry} {
		if got, err := ParseEstimator(e.String()); err != nil || got != e {
			t.Errorf("ParseEstimator(%q) = %v, %v", e, got, err)
		}
	}
	d, _ := NewDetector(Options{DiameterPx: 5})
	defer d.Close()
	colour := gocv.NewMatWithSize(40, 40, gocv.MatTypeCV8UC3)
	defer colour.Close()
	if _, err := d.Frame(colour, 3, nil); err == nil || !strings.Contains(err.Error(), "frame 3 has type") {
		t.Errorf("colour frame: %v", err)
	}
	grey := gocv.NewMatWithSize(40, 40, gocv.MatTypeCV8U)
	defer grey.Close()
	bg := gocv.NewMatWithSize(30, 40, gocv.MatTypeCV32F)
	defer bg.Close()
	if err := d.SetBackground(bg); err != nil {
		t.Fatal(err)
	}
	if _, err := d.Frame(grey, 4, nil); err == nil || !strings.Contains(err.Error(), "background is 40x30 px") {
		t.Errorf("background size: %v", err)
	}
}

// TestPolarity finds dark tracers on a bright background with automatic
// polarity, as with the override, and nothing real with the wrong override.
func TestPolarity(t *testing.T) {
	sc := scene{w: 160, h: 120, bgPhotons: 180, readNoise: 2, bitDepth: 8, gain: 1, darkTracer: true}
	rng := rand.New(rand.NewPCG(7, 7))
	spots := gridSpots(sc.w, sc.h, 20, 12, 1.25, sc.photonsFor(15, 1.25), rng)
	img := sc.render(t, spots, rng)
	defer img.Close()
	bg := sc.background(t)
	defer bg.Close()
	for _, tc := range []struct {
		pol, want string
		found     bool
	}{{PolarityAuto, PolarityDark, true}, {PolarityDark, PolarityDark, true}, {PolarityBright, PolarityBright, false}} {
		d, err := NewDetector(Options{DiameterPx: 5, Polarity: tc.pol})
		if err != nil {
			t.Fatal(err)
		}
		if err := d.SetBackground(bg); err != nil {
			t.Fatal(err)
		}
		dets, err := d.Frame(img, 0, nil)
		if err != nil {
			t.Fatal(err)
		}
		if d.Polarity() != tc.want {
			t.Errorf("polarity %s: decided %s, want %s", tc.pol, d.Polarity(), tc.want)
		}
		n := 0
		for _, j := range match(spots, dets, 1) {
			if j >= 0 {
				n++
			}
		}
		if tc.found && n != len(spots) {
			t.Errorf("polarity %s: found %d of %d dark tracers", tc.pol, n, len(spots))
		}
		if !tc.found && n > len(spots)/10 {
			t.Errorf("polarity %s: %d of %d dark tracers found as bright ones", tc.pol, n, len(spots))
		}
		for _, de := range dets {
			if tc.found && de.Brightness <= 0 {
				t.Errorf("polarity %s: brightness %g, want positive", tc.pol, de.Brightness)
				break
			}
		}
		d.Close()
	}
	// Bright tracers, automatic.
	sc.darkTracer, sc.bgPhotons = false, 20
	img2 := sc.render(t, spots, rng)
	defer img2.Close()
	bg2 := sc.background(t)
	defer bg2.Close()
	d, _ := NewDetector(Options{DiameterPx: 5})
	defer d.Close()
	d.SetBackground(bg2)
	if _, err := d.Frame(img2, 0, nil); err != nil || d.Polarity() != PolarityBright {
		t.Errorf("bright tracers: polarity %s, %v", d.Polarity(), err)
	}
}

// TestMask keeps only the tracers between two tilted walls, with a margin.
func TestMask(t *testing.T) {
	m := &Mask{
		Stationary: [2][2]float64{{0, 100}, {200, 110}}, // y = 100 + x/20
		Moving:     [2][2]float64{{0, 20}, {200, 30}},
		MarginPx:   4,
	}
	for _, tc := range []struct {
		x, y float64
		in   bool
	}{
		{100, 60, true}, {100, 104.5, false}, {100, 100.5, true}, {100, 29.1, true}, {100, 28.9, false},
		{100, 10, false}, {100, 120, false}, {0, 95.9, true}, {200, 106.1, false},
	} {
		if got := m.Contains(tc.x, tc.y); got != tc.in {
			t.Errorf("Contains(%g, %g) = %v, want %v", tc.x, tc.y, got, tc.in)
		}
	}
	// Walls along the columns: all rows are searched.
	vm := &Mask{Stationary: [2][2]float64{{100, 0}, {102, 200}}, Moving: [2][2]float64{{20, 0}, {22, 200}}, MarginPx: 4}
	if lo, hi := vm.rows(300); lo > 0 || hi < 200 {
		t.Errorf("vertical walls: rows %d to %d, want all", lo, hi)
	}
	if lo, hi := m.rows(200); lo != 19 || hi != 112 {
		t.Errorf("rows %d to %d, want 19 to 112", lo, hi)
	}
	// Swapping the walls changes nothing.
	sw := &Mask{Stationary: m.Moving, Moving: m.Stationary, MarginPx: 4}
	if !sw.Contains(100, 60) || sw.Contains(100, 28.9) {
		t.Error("mask depends on which wall is which")
	}
}
