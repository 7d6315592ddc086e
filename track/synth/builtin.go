package synth

import (
	"fmt"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// builtin is one entry of the scenario catalogue.
type builtin struct {
	name, desc string
	make       func(s *Scenario)
}

// The catalogue, in the order List returns it. Every scenario starts from
// base and changes what makes it what it is. All samples and labs are made up.
var catalogue = []builtin{
	{"homogeneous", "linear shear without slip between sliding plates; rest, shear at 1/s, quiescent after the stop", func(s *Scenario) {}},
	{"slip", "slip at both walls: fluid at 0.15 V at the stationary wall and 0.75 V at the moving wall", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
	}},
	{"banded2", "two shear bands, a fast one by the stationary wall up to 0.35 H at six times the rate above it", func(s *Scenario) {
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.35, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
	}},
	{"banded3", "three shear bands: slow, fast from 0.3 H to 0.6 H, slow", func(s *Scenario) {
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.3, RateWeight: 0.5}, {ToFrac: 0.6, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
	}},
	{"step-quiescent", "a step strain of 0.5 in 0.25 s, then the sample stays still", stepStrain},
	{"step-plane", "a step strain of 0.5, then a failure plane at 0.6 H; the layers recover a strain of 0.05", func(s *Scenario) {
		stepStrain(s)
		s.Cessation = Cessation{Kind: CessationPlane, PlaneFrac: 0.6, RecoveredStrain: 0.05, OnsetS: 0.1, TauS: 0.2}
	}},
	{"step-wallslip", "a step strain of 0.5, then the sample slips back at the stationary wall, recovering a strain of 0.03", func(s *Scenario) {
		stepStrain(s)
		s.Cessation = Cessation{Kind: CessationWall, Wall: WallStationary, RecoveredStrain: 0.03, OnsetS: 0.05, TauS: 0.15}
	}},
	{"couette", "Newtonian flow in a concentric-cylinder cell (inner 10 mm rotating, outer 11 mm): the exact curved profile", func(s *Scenario) {
		s.Geometry = geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 10, OuterRadiusMM: 11}
		s.UMPerPx = 2.5
	}},
	{"dark", "linear shear seen as dark tracers on a bright back-lit sample, 16 bit, with camera jitter of 0.3 px", func(s *Scenario) {
		s.Polarity = experiment.Dark
		s.BitDepth = 16
		s.BackgroundPhotons = 220
		s.Photons = 1500
		s.Walls = WallStyle{PlatePhotons: 60, EdgeSigmaPx: 0.6, ReflectionPhotons: 150, ReflectionSigmaPx: 0.8}
		s.JitterPx = 0.3
	}},
	{"demo", "PIB-12, a hypothetical 12 wt% entangled polyisobutylene solution on the imaginary Kestrel Hollow shear bench: " +
		"slip at both walls and two bands while sheared, a failure plane at 0.45 H after the stop", func(s *Scenario) {
		s.Geometry = geometry.Geometry{Kind: geometry.Plates, GapUM: 900}
		s.UMPerPx = 2.2
		s.TiltDeg = -0.8
		s.Frames = 400
		s.Motion = []experiment.Segment{{StartS: 0.4, EndS: 2.2, RatePerS: ptr(0.8)}}
		s.Profile = Profile{SlipStationary: 0.08, SlipMoving: 0.12,
			Bands: []Band{{ToFrac: 0.4, RateWeight: 2.5}, {ToFrac: 1, RateWeight: 0.6}}}
		s.Cessation = Cessation{Kind: CessationPlane, PlaneFrac: 0.45, RecoveredStrain: 0.04, OnsetS: 0.15, TauS: 0.3}
	}},
}

func ptr(v float64) *float64 { return &v }

// base is the common ground of the built-in scenarios: 640x480 px, 300
// frames at 100 frames/s, an 800 um gap between sliding plates at 2 um/px
// (400 px), walls tilted by 1.2 degrees, the moving wall on top; rest until
// 0.5 s, shear at a nominal 1/s until 2 s (the moving wall travels 4 px per
// frame), then 1 s after the stop; 400 tracers of 5 px, peak SNR about 27.
func base(name string, seed int64) *Scenario {
	return &Scenario{
		Name: name, Seed: seed,
		WidthPx: 640, HeightPx: 480, Frames: 300, FPS: 100, BitDepth: 8, Gain: 0,
		Geometry:     geometry.Geometry{Kind: geometry.Plates, GapUM: 800},
		UMPerPx:      2,
		TiltDeg:      1.2,
		GapCentreYPx: 241.5,
		MovingSide:   experiment.Top,
		FlowSign:     1,
		Motion:       []experiment.Segment{{StartS: 0.5, EndS: 2.0, RatePerS: ptr(1)}},
		Tracers:      400, DiameterPx: 5, BrightnessSpread: 0.25,
		OutOfFocusFraction: 0.1,
		Photons:            2000, BackgroundPhotons: 40, ReadNoise: 3,
		Vignetting: 0.15,
		Polarity:   experiment.Bright,
		Walls:      WallStyle{PlatePhotons: 90, EdgeSigmaPx: 0.6, ReflectionPhotons: 250, ReflectionSigmaPx: 0.8},
	}
}

// stepStrain turns the base into a step-strain experiment at 200 frames/s:
// rest until 0.25 s, a strain of 0.5 until 0.5 s (the moving wall travels
// 4 px per frame), then 1.5 s after the stop.
func stepStrain(s *Scenario) {
	s.FPS = 200
	s.Frames = 400
	s.Motion = []experiment.Segment{{StartS: 0.25, EndS: 0.5, Strain: ptr(0.5)}}
}

// List returns the built-in scenarios' names and descriptions.
func List() []Named {
	out := make([]Named, len(catalogue))
	for i, b := range catalogue {
		out[i] = Named{b.name, b.desc}
	}
	return out
}

// Builtin returns a fresh copy of the named built-in scenario, drawn from
// seed: the same name and seed always give the same experiment.
func Builtin(name string, seed int64) (*Scenario, error) {
	for _, b := range catalogue {
		if b.name == name {
			s := base(name, seed)
			s.Description = b.desc
			b.make(s)
			if err := s.Validate(); err != nil {
				return nil, err
			}
			return s, nil
		}
	}
	names := make([]string, len(catalogue))
	for i, b := range catalogue {
		names[i] = b.name
	}
	return nil, fmt.Errorf("synth: unknown scenario %q (built in: %s)", name, strings.Join(names, ", "))
}
