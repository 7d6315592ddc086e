package profile

import (
	"math"
	"math/rand/v2"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/track/synth"
	"gaptrace/track/tracks"
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

// observe returns the tracks of s as a tracker would see them: the true
// gap positions with Gaussian noise of noisePx, broken at random and where
// a tracer wraps around the scenario's strip.
func observe(s *synth.Scenario, seed uint64) []tracks.Point {
	rng := rand.New(rand.NewPCG(seed, 77))
	sd := noisePx * s.UMPerPx
	type state struct {
		id    int
		xUM   float64
		frame int
	}
	last := map[int]*state{}
	next := 0
	var out []tracks.Point
	for f := range s.Frames {
		for _, t := range s.Positions(f) {
			st := last[t.ID]
			if st == nil || st.frame != f-1 || math.Abs(t.XUM-st.xUM) > float64(s.WidthPx)*s.UMPerPx/2 || rng.Float64() < breakPerFrame {
				st = &state{id: next}
				next++
				last[t.ID] = st
			}
			st.xUM, st.frame = t.XUM, f
			out = append(out, tracks.Point{Track: st.id, Frame: f, TS: float64(f) / s.FPS,
				XPx: t.XPx, YPx: t.YPx, XUM: t.XUM + sd*rng.NormFloat64(), YUM: t.YUM + sd*rng.NormFloat64(),
				Brightness: t.Photons, SizePx: t.SigmaPx})
		}
	}
	return out
}

func analyze(t testing.TB, s *synth.Scenario, seed uint64) *Result {
	t.Helper()
	r, err := Analyze(observe(s, seed), s.Experiment(), s.Calibration(), Options{Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	return r
}
