package profile

import (
	"context"
	"gaptrace/track/tracks"
	"math"
	"slices"
	"testing"

	"gaptrace/track/synth"
)

// Acceptance of the time-resolved start-up (the must-show list),
// on synth's start-ups with localization noise and track breaks (observe).
// The truth is the renderer's: the mean velocity of a layer over a window
// (synth.MeanVelocityUMPerS) and the onset and time constant it renders.
const (
	// windowVelocityTol is the aim for the windowed velocities:
	// the 95th percentile of |measured - true| within 3 % of the wall
	// speed, over every layer of every window.
	windowVelocityTol = 0.03
	windowPercentile  = 0.95
	// onsetTaus is the latest onset: the true start of formation
	// plus four time constants.
	onsetTaus = 4
	// coverK widens both ends by the reported uncertainty times this
	// coverage factor (k = 2, about 95 % for a normal, GUM 6.3.3), so that
	// the stated error must cover the miss.
	coverK = 2
	// homogeneousSeeds and maxFalseOnsets: with no transient the onset is
	// null in at least 19 of 20 seeds (the issue).
	homogeneousSeeds = 20
	maxFalseOnsets   = 1
	// startUpEveryS is the window length of the velocity check: the
	// issue's --every 0.1 is too short for 300 tracers at 100 frames/s,
	// so twice that.
	startUpEveryS = 0.2
)

func startUp(t *testing.T, name string, seed int64) (*synth.Scenario, *Result) {
	t.Helper()
	s, err := synth.Builtin(name, seed)
	if err != nil {
		t.Fatal(err)
	}
	r, err := Analyze(context.Background(), tracks.Slice(s.Observe(noisePx, breakPerFrame, uint64(seed))), s.Experiment(), s.Calibration(),
		Options{Seed: uint64(seed), EveryS: startUpEveryS})
	if err != nil {
		t.Fatal(err)
	}
	if len(r.Shear) != 1 {
		t.Fatalf("%s: %d shear phases, want 1", name, len(r.Shear))
	}
	return s, r
}

func TestInTimeVelocities(t *testing.T) {
	for _, name := range []string{"startup-bands", "startup-slip"} {
		s, r := startUp(t, name, 1)
		sh := r.Shear[0]
		v := math.Abs(sh.Step.WallSpeedUMPerS)
		var dev []float64
		for _, it := range sh.InTime {
			w := it.Profile.Window
			for _, b := range it.Profile.Bins {
				if !b.Known() {
					continue
				}
				truth, err := s.MeanVelocityUMPerS(b.FromUM, b.ToUM, w.T0S, w.T1S)
				if err != nil {
					t.Fatal(err)
				}
				dev = append(dev, math.Abs(b.Value-truth)/v)
			}
		}
		if len(sh.InTime) < 10 || len(dev) == 0 {
			t.Fatalf("%s: %d windows, %d layers with a value", name, len(sh.InTime), len(dev))
		}
		slices.Sort(dev)
		p := dev[int(windowPercentile*float64(len(dev)-1))]
		t.Logf("%s: %d windows of %.2f s, %d layers: 95th percentile %.4f V, worst %.4f V", name, len(sh.InTime), sh.EveryS, len(dev), p, dev[len(dev)-1])
		if p > windowVelocityTol {
			t.Errorf("%s: 95th percentile of the windowed velocity errors %.4f of the wall speed, more than %.2f", name, p, windowVelocityTol)
		}
		if got := len(sh.Summary.InTime); got != len(sh.InTime) {
			t.Errorf("%s: summary has %d in_time entries, want %d", name, got, len(sh.InTime))
		}
	}
}

func TestInhomogeneityOnset(t *testing.T) {
	cases := []struct {
		name          string
		first         string
		onsetS, tauS  func(tr synth.Transient) float64
		everyDefaults bool
	}{
		{"startup-bands", FirstBands, func(tr synth.Transient) float64 { return tr.BandsOnsetS }, func(tr synth.Transient) float64 { return tr.BandsTauS }, false},
		{"startup-bands-slow", FirstBands, func(tr synth.Transient) float64 { return tr.BandsOnsetS }, func(tr synth.Transient) float64 { return tr.BandsTauS }, false},
		{"startup-slip", FirstSlip, func(tr synth.Transient) float64 { return tr.SlipOnsetS }, func(tr synth.Transient) float64 { return tr.SlipTauS }, false},
	}
	for _, c := range cases {
		s, r := startUp(t, c.name, 2)
		sh := r.Shear[0]
		on, tau := c.onsetS(s.Transient), c.tauS(s.Transient)
		if sh.Onset == nil {
			t.Errorf("%s: no onset found; truth %.2f s after the start (tau %.2f s)", c.name, on, tau)
			continue
		}
		o := sh.Onset
		t.Logf("%s: onset %.3f ± %.3f s after the start (%s first, strain %.2f); truth from %.2f s, tau %.2f s", c.name, o.AfterStartS, o.ErrS, o.First, o.Strain, on, tau)
		if o.AfterStartS+coverK*o.ErrS < on || o.AfterStartS-coverK*o.ErrS > on+onsetTaus*tau {
			t.Errorf("%s: onset %.3f ± %.3f s, outside %.2f to %.2f s", c.name, o.AfterStartS, o.ErrS, on, on+onsetTaus*tau)
		}
		if o.First != c.first {
			t.Errorf("%s: first departure %q, want %q", c.name, o.First, c.first)
		}
		sp := sh.Summary
		if !sp.InhomogeneityOnsetS.Known() || sp.InhomogeneityFirst == nil || *sp.InhomogeneityFirst != c.first {
			t.Errorf("%s: summary onset %v, first %v", c.name, sp.InhomogeneityOnsetS, sp.InhomogeneityFirst)
		}
	}
}

func TestInhomogeneityOnsetNullWhenAffine(t *testing.T) {
	false_ := 0
	for seed := range int64(homogeneousSeeds) {
		s, err := synth.Builtin("startup-homogeneous", seed+1)
		if err != nil {
			t.Fatal(err)
		}
		// Default window length, no in_time: the onset is still looked for.
		r, err := Analyze(context.Background(), tracks.Slice(s.Observe(noisePx, breakPerFrame, uint64(seed))), s.Experiment(), s.Calibration(), Options{Seed: uint64(seed)})
		if err != nil {
			t.Fatal(err)
		}
		sp := r.Shear[0].Summary
		if sp.InTime != nil {
			t.Errorf("seed %d: in_time written without EveryS", seed+1)
		}
		if !sp.InTimeWindowS.Known() {
			t.Errorf("seed %d: the default window length is not stated", seed+1)
		}
		if o := r.Shear[0].Onset; o != nil {
			false_++
			t.Logf("seed %d: onset %.3f ± %.3f s (%s) on an affine start-up, windows of %.3f s", seed+1, o.AfterStartS, o.ErrS, o.First, r.Shear[0].EveryS)
		}
	}
	t.Logf("affine start-up: onset found in %d of %d seeds", false_, homogeneousSeeds)
	if false_ > maxFalseOnsets {
		t.Errorf("onset found in %d of %d affine start-ups, more than %d", false_, homogeneousSeeds, maxFalseOnsets)
	}
}

func TestDefaultEveryS(t *testing.T) {
	cases := []struct {
		name             string
		perSecond        []float64
		dtS, durS, wantS float64
	}{
		{"dense", []float64{400, 400, 400}, 0.01, 3, InTimeSamplesPerLayer / 400.0},
		{"sparse: the whole phase", []float64{1, 2, 3}, 0.01, 3, 3},
		{"very dense: five frames", []float64{1e6, 1e6}, 0.01, 3, minInTimeFrames * 0.01},
		{"empty layers ignored", []float64{0, 0, 200, 200, 200}, 0.01, 3, InTimeSamplesPerLayer / 200.0},
		{"no samples", []float64{0, 0}, 0.01, 3, 3},
	}
	for _, c := range cases {
		if got := DefaultEveryS(c.perSecond, c.dtS, c.durS); math.Abs(got-c.wantS) > 1e-12 {
			t.Errorf("%s: DefaultEveryS = %g, want %g", c.name, got, c.wantS)
		}
	}
}
