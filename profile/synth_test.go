package profile

import (
	"context"
	"gaptrace/track/tracks"
	"math"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/track/synth"
)

// The demo scenarios below are made up: an 800 um gap between sliding plates
// of a fictitious shear cell, filmed at 200 frames/s and 2 um/px.

// noisePx is the localization noise added to the true positions, px: the
// upper end of what sub-pixel detection of 5 px spots reaches (common
// practice).
const noisePx = 0.1

// breakPerFrame is the chance per frame that a track breaks (a missed
// link), so tracks are tens of frames long as in real data.
const breakPerFrame = 0.02

func f64(v float64) *float64 { return &v }

// plates returns a scenario of rest, one shear step and rest after it.
func plates(seed int64, restS, shearS, afterS float64) *synth.Scenario {
	s := &synth.Scenario{
		Name: "test", Seed: seed, WidthPx: 640, HeightPx: 480, FPS: 200,
		Geometry: geometry.Geometry{Kind: geometry.Plates, GapUM: 800}, UMPerPx: 2,
		Motion:  []experiment.Segment{{StartS: restS, EndS: restS + shearS, RatePerS: f64(1.5)}},
		Tracers: 300, DiameterPx: 5, Photons: 2000,
	}
	s.Frames = int(math.Round((restS + shearS + afterS) * s.FPS))
	return s
}

func analyze(t testing.TB, s *synth.Scenario, seed uint64) *Result {
	t.Helper()
	r, err := Analyze(context.Background(), tracks.Slice(s.Observe(noisePx, breakPerFrame, seed)), s.Experiment(), s.Calibration(), Options{Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	return r
}
