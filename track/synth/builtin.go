package synth

import (
	"fmt"
	"math"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// builtin is one entry of the scenario catalogue, with the output it is
// meant to be written to (zero: avi-mjpeg at OpenCV's quality).
type builtin struct {
	name, desc string
	make       func(s *Scenario)
	out        Output
}

// The catalogue, in the order List returns it. Every scenario starts from
// base and changes what makes it what it is. All samples and labs are made up.
var catalogue = []builtin{
	{"homogeneous", "linear shear without slip between sliding plates; rest, shear at 1/s, quiescent after the stop", func(s *Scenario) {}, Output{}},
	{"slip", "slip at both walls: fluid at 0.15 V at the stationary wall and 0.75 V at the moving wall", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
	}, Output{}},
	{"banded2", "two shear bands, a fast one by the stationary wall up to 0.35 H at six times the rate above it", func(s *Scenario) {
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.35, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
	}, Output{}},
	{"banded3", "three shear bands: slow, fast from 0.3 H to 0.6 H, slow", func(s *Scenario) {
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.3, RateWeight: 0.5}, {ToFrac: 0.6, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
	}, Output{}},
	{"step-quiescent", "a step strain of 0.5 in 0.25 s, then the sample stays still", stepStrain, Output{}},
	{"step-plane", "a step strain of 0.5, then a failure plane at 0.6 H; the layers recover a strain of 0.05", func(s *Scenario) {
		stepStrain(s)
		s.Cessation = Cessation{Kind: CessationPlane, PlaneFrac: 0.6, RecoveredStrain: 0.05, OnsetS: 0.1, TauS: 0.2}
	}, Output{}},
	{"step-wallslip", "a step strain of 0.5, then the sample slips back at the stationary wall, recovering a strain of 0.03", func(s *Scenario) {
		stepStrain(s)
		s.Cessation = Cessation{Kind: CessationWall, Wall: WallStationary, RecoveredStrain: 0.03, OnsetS: 0.05, TauS: 0.15}
	}, Output{}},
	{"couette", "Newtonian flow in a concentric-cylinder cell (inner 10 mm rotating, outer 11 mm): the exact curved profile", func(s *Scenario) {
		s.Geometry = geometry.Geometry{Kind: geometry.Couette, InnerRadiusMM: 10, OuterRadiusMM: 11}
		s.UMPerPx = 2.5
	}, Output{}},
	{"dark", "linear shear seen as dark tracers on a bright back-lit sample, 16 bit, with camera jitter of 0.3 px", func(s *Scenario) {
		s.Polarity = experiment.Dark
		s.BitDepth = 16
		s.BackgroundPhotons = 220
		s.Photons = 1500
		s.Walls = WallStyle{PlatePhotons: 60, EdgeSigmaPx: 0.6, ReflectionPhotons: 150, ReflectionSigmaPx: 0.8}
		s.JitterPx = 0.3
	}, Output{}},
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
	}, Output{}},

	// The faults of real cameras.
	{"blur", "motion blur: an exposure of half the frame interval while shearing at 3/s, streaks up to 6 px long at the moving wall", func(s *Scenario) {
		s.Motion[0].RatePerS = ptr(3)
		s.ExposureFraction = 0.5
	}, Output{}},
	{"flicker", "a mains lamp flickering at 100 Hz against 97 frames/s (a 3 Hz beat of 10 %) and an unsteady supply (2 % per frame)", func(s *Scenario) {
		s.FPS = 97
		s.Frames = 291
		s.ExposureFraction = 0.3
		s.Flicker = Flicker{LampHz: 100, Depth: 0.1, Noise: 0.02}
	}, Output{}},
	{"dust", "slip at both walls seen through a dusty window: 30 static spots over the gap and 10 on the plates, dark and bright, and 8 tracers stuck to the walls", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.Dust = Dust{InGap: 30, OnPlates: 10, BrightFraction: 0.7}
		s.StuckTracers = 8
	}, Output{}},
	{"colour-green", "a colour camera with an RGGB mosaic under green-tinted light, slip at both walls", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.Colour = Colour{Tint: [3]float64{0.2, 1, 0.35}, Bayer: true}
		s.Photons, s.BackgroundPhotons = 2600, 50
	}, Output{Format: FormatFFV1}},
	{"colour-red", "a three-chip colour camera under red-tinted light, two shear bands", func(s *Scenario) {
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.35, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
		s.Colour = Colour{Tint: [3]float64{0.15, 0.4, 1}}
		s.Photons, s.BackgroundPhotons = 2600, 50
	}, Output{Format: FormatFFV1}},
	{"colour-hard", "the worst camera: colour with an RGGB mosaic under green light, 0.5 px of shake, H.264 at CRF 28; slip at both walls, quiescent after the stop", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.Colour = Colour{Tint: [3]float64{0.2, 1, 0.35}, Bayer: true}
		s.Photons, s.BackgroundPhotons = 2600, 50
		s.JitterPx = 0.5
	}, Output{Format: FormatH264, CRF: 28}},
	{"faint", "faint and out-of-focus tracers: half of the sharp ones at a peak SNR of 5 to 15, 15 % out of focus with blur 1.6 to 3 times, slip at both walls", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.FaintFraction = 0.5
		s.OutOfFocusFraction = 0.15
		s.OutOfFocusBlurMin, s.OutOfFocusBlur = 1.6, 3
		s.BrightnessSpread = 0.4
	}, Output{}},
	{"near-wall", "slip at both walls with a fifth of 600 tracers within 5 px of a wall line, as many by the frame edges as anywhere", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.Tracers = 600
		s.NearWallFraction = 0.2
	}, Output{}},
	{"textured", "textured plates (25 % relief at 2 px) with a bright reflection line at each wall, tracers of random size and brightness, slip at both walls", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.Walls = WallStyle{PlatePhotons: 110, EdgeSigmaPx: 0.6, ReflectionPhotons: 500, ReflectionSigmaPx: 0.9,
			TextureContrast: 0.25, TextureScalePx: 2}
		s.BrightnessSpread = 0.45
		s.OutOfFocusBlurMin = 1.6
	}, Output{}},
	{"shake-quiescent", "a step strain of 0.5, then a quiescent sample filmed by a shaking camera: 0.5 px of jitter per frame and a sway of 2 px", func(s *Scenario) {
		stepStrain(s)
		s.JitterPx = 0.5
		s.SwayPx, s.SwayPeriodS = 2, 1.5
	}, Output{}},
	{"interlaced-quiescent", "a step strain of 0.5, then a quiescent sample, filmed by an interlaced camera (fields half a frame interval apart)", func(s *Scenario) {
		stepStrain(s)
		s.Interlaced = true
	}, Output{}},
	{"vfr", "a phone-like camera at a nominal 60 frames/s whose intervals vary by 25 % and which skips 5 % of its frames, in a variable-frame-rate MP4; linear shear", func(s *Scenario) {
		s.FPS = 60
		s.Frames = 180
		s.VariableRate = VariableRate{Spread: 0.25, SkipFraction: 0.05}
	}, Output{Format: FormatH264, CRF: 20}},
	{"upside-down", "slip at both walls filmed by a camera held upside down: the MP4 stores the frames rotated by 180 degrees with a display-rotation tag", func(s *Scenario) {
		s.Profile = Profile{SlipStationary: 0.15, SlipMoving: 0.25}
		s.StoredRotationDeg = 180
	}, Output{Format: FormatH264, CRF: 20}},

	// Start-ups, with the rheometer's log.
	{"startup-bands", "OLG-7, a hypothetical entangled oligomer blend on the imaginary Marrow Fen bench: start-up at 1.5/s, affine at first, two bands forming 0.6 s after the start (time constant 0.25 s); stress overshoot in a 50 Hz log", func(s *Scenario) {
		startUp(s, 1.5, 3.5)
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.35, RateWeight: 3}, {ToFrac: 1, RateWeight: 0.5}}}
		s.Transient = Transient{BandsOnsetS: 0.6, BandsTauS: 0.25}
	}, Output{}},
	{"startup-bands-slow", "start-up at 1/s, two bands forming slowly from 0.8 s after the start (time constant 0.6 s); stress overshoot in a 50 Hz log", func(s *Scenario) {
		startUp(s, 1, 4)
		s.Profile = Profile{Bands: []Band{{ToFrac: 0.4, RateWeight: 2.5}, {ToFrac: 1, RateWeight: 0.6}}}
		s.Transient = Transient{BandsOnsetS: 0.8, BandsTauS: 0.6}
	}, Output{}},
	{"startup-slip", "start-up at 1.5/s whose wall slip sets in after the stress maximum (from 1.67 s after the start, time constant 0.3 s) at both walls; 50 Hz log", func(s *Scenario) {
		startUp(s, 1.5, 4)
		s.Profile = Profile{SlipStationary: 0.1, SlipMoving: 0.2}
		s.Transient = Transient{SlipOnsetS: 1.67, SlipTauS: 0.3}
	}, Output{}},
	{"startup-homogeneous", "start-up at 1.5/s that stays affine and without slip throughout, with its stress overshoot in a 50 Hz log", func(s *Scenario) {
		startUp(s, 1.5, 3.5)
	}, Output{}},
	{"startup-3step", "three start-up steps (0.5, 2 and 1 /s) on a 20 mm cone of 2.29 degrees, homogeneous; a 100 Hz log with strain and torque, decimal commas and semicolons, units in the headers, its clock 3.2 s ahead", func(s *Scenario) {
		s.Geometry = geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 20, ConeAngleDeg: 2.2906} // gap 800 um at the rim
		s.Frames = 400
		s.Motion = []experiment.Segment{{StartS: 0.5, EndS: 1.5, RatePerS: ptr(0.5)},
			{StartS: 1.5, EndS: 2.5, RatePerS: ptr(2)}, {StartS: 2.5, EndS: 3.5, RatePerS: ptr(1)}}
		s.Stress = StressModel{ViscosityPaS: 350, PeakStrain: 1.8, Overshoot: 0.3}
		s.Log = RheometerLog{RateHz: 100, LeadS: 0.5, ClockOffsetS: 3.2, Columns: []string{LogTime, LogStrain, LogTorque},
			Separator: ";", DecimalComma: true, Units: true, StressNoise: 0.002}
	}, Output{}},

	// For the speed benchmark of detection.
	{"bench-1024", "1024x1024 px, 600 frames, 1000 tracers, shear with the moving wall at 8 px per frame; meant for fast-decoding MJPEG (quality 3)", func(s *Scenario) {
		s.Resize(1024, 1024)
		s.Tracers = 1000
		s.Frames = 600
		s.Motion = []experiment.Segment{{StartS: 0.5, EndS: 5.5, RatePerS: ptr(8 * s.FPS / s.GapPx())}}
	}, Output{Quality: 3}},
}

// startUp turns the base into a start-up test: rest for 0.5 s, shear at
// ratePerS until endS, 0.5 s after the stop, at 100 frames/s; a stress
// overshoot at a strain of 2.2 (40 % above the steady 400 Pa s x rate) and
// a 50 Hz log on a clock 1.25 s behind the camera's, starting 0.4 s before
// the first frame.
func startUp(s *Scenario, ratePerS, endS float64) {
	s.Frames = int(math.Round((endS + 0.5) * s.FPS))
	s.Motion = []experiment.Segment{{StartS: 0.5, EndS: endS, RatePerS: ptr(ratePerS)}}
	s.Stress = StressModel{ViscosityPaS: 400, PeakStrain: 2.2, Overshoot: 0.4}
	s.Log = RheometerLog{RateHz: 50, LeadS: 0.4, ClockOffsetS: -1.25}
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

// BuiltinOutput returns the output a built-in scenario is meant to be
// written to (its format and encoder settings; zero: avi-mjpeg), or an
// error naming an unknown scenario.
func BuiltinOutput(name string) (Output, error) {
	for _, b := range catalogue {
		if b.name == name {
			return b.out, nil
		}
	}
	_, err := Builtin(name, 0)
	return Output{}, err
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
