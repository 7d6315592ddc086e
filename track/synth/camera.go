package synth

import (
	"fmt"
	"math"
)

// VariableRate makes a camera whose frame intervals vary, as phones and
// webcams do: each interval is the nominal 1/FPS times (1 + Spread x u),
// u uniform in [-1, 1], and with probability SkipFraction it is twice that
// (a frame the camera did not deliver). The times are rounded to
// FrameTickS, the clock of the mp4 file Write makes, so that the file
// holds them exactly. Zero: every frame at frame/FPS.
type VariableRate struct {
	Spread       float64 // relative half-range of the intervals (0..0.8)
	SkipFraction float64 // probability that an interval is doubled (0..0.5)
}

// FrameTickS is the clock tick of variable frame times, s: the time base
// of the mp4 files Write makes is 1/10000 s.
const FrameTickS = 1e-4

// FrameTickRate is 1/FrameTickS, the mp4 track's time scale in ticks per s.
const FrameTickRate = 10000

// Bounds of VariableRate: the shortest interval stays well above the tick.
const (
	maxRateSpread = 0.8
	maxSkip       = 0.5
)

func (v VariableRate) on() bool { return v.Spread > 0 || v.SkipFraction > 0 }

// Flicker is an illumination that varies from frame to frame: a lamp whose
// light is modulated at LampHz (twice the mains frequency for a lamp on
// mains: 100 or 120 Hz) with a relative amplitude Depth, seen through the
// camera's exposure, which beats against the frame rate, plus a random
// relative change of sd Noise per frame (an unsteady supply). The factor of
// a frame is 1 + Depth x (the mean of sin(2 pi LampHz t + phase) over the
// exposure) + Noise x N(0, 1); it multiplies everything the camera sees:
// sample, plates, tracers and dust. Zero: a steady lamp.
type Flicker struct {
	LampHz float64 // modulation frequency of the lamp, Hz
	Depth  float64 // relative amplitude of the modulation (0..0.5)
	Noise  float64 // relative sd of the random change per frame (0..0.2)
}

func (f Flicker) on() bool { return (f.Depth > 0 && f.LampHz > 0) || f.Noise > 0 }

// Bounds of Flicker: the factor stays well above zero.
const (
	maxFlickerDepth = 0.5
	maxFlickerNoise = 0.2
)

// Colour makes a colour camera. Tint is the response of the blue, green and
// red channels (in that order, as OpenCV stores them) to the illumination:
// the photons each channel collects over those of a grey camera, for
// example {0.2, 1, 0.35} for green-tinted light. Every part of the scene
// (sample, plates, tracers, dust) has the lamp's colour. With Bayer the
// sensor has one colour filter per pixel in an RGGB mosaic (red at even
// rows and even columns, blue at odd rows and odd columns, green elsewhere),
// noise is drawn per pixel of the mosaic, and the image is demosaiced by
// bilinear interpolation; without, each channel is a full image with its own
// noise. Zero Tint: a grey camera.
type Colour struct {
	Tint  [3]float64 // B, G, R responses (0..1 each; all zero: grey)
	Bayer bool       // an RGGB mosaic with a bilinear demosaic
}

func (c Colour) on() bool { return c.Tint != [3]float64{} }

// Colour channels in OpenCV's order.
const (
	chanB = iota
	chanG
	chanR
)

// defaultSwayPeriodS is the sway's period along x when SwayPeriodS is 0.
const defaultSwayPeriodS = 2.0

// swayRatio is the ratio of the sway's periods along y and x: the golden
// ratio, so that the two never fall into step.
const swayRatio = 1.618033988749895

// validateCamera reports the first unusable camera fault.
func (s *Scenario) validateCamera() error {
	switch {
	case !(s.ExposureFraction >= 0 && s.ExposureFraction <= 1):
		return fmt.Errorf("exposure fraction %g, must be in [0, 1]", s.ExposureFraction)
	case s.Interlaced && s.ExposureFraction > 0.5:
		return fmt.Errorf("exposure fraction %g exceeds the field interval (0.5) of an interlaced camera", s.ExposureFraction)
	case !(s.VariableRate.Spread >= 0 && s.VariableRate.Spread <= maxRateSpread):
		return fmt.Errorf("variable-rate spread %g, must be in [0, %g]", s.VariableRate.Spread, maxRateSpread)
	case !(s.VariableRate.SkipFraction >= 0 && s.VariableRate.SkipFraction <= maxSkip):
		return fmt.Errorf("variable-rate skip fraction %g, must be in [0, %g]", s.VariableRate.SkipFraction, maxSkip)
	case s.VariableRate.on() && (1-s.VariableRate.Spread)/s.FPS < 5*FrameTickS:
		return fmt.Errorf("variable rate at %g frames/s: the shortest interval falls below 5 ticks of %g s", s.FPS, FrameTickS)
	case !(s.SwayPx >= 0) || s.SwayPeriodS < 0 || math.IsInf(s.SwayPx, 0):
		return fmt.Errorf("sway %g px with period %g s: must not be negative", s.SwayPx, s.SwayPeriodS)
	case s.Flicker.LampHz < 0 || !(s.Flicker.Depth >= 0 && s.Flicker.Depth <= maxFlickerDepth) ||
		!(s.Flicker.Noise >= 0 && s.Flicker.Noise <= maxFlickerNoise):
		return fmt.Errorf("flicker %+v: lamp frequency must not be negative, depth in [0, %g], noise in [0, %g]",
			s.Flicker, maxFlickerDepth, maxFlickerNoise)
	case s.StoredRotationDeg != 0 && s.StoredRotationDeg != 180:
		return fmt.Errorf("stored rotation %d deg is not 0 or 180", s.StoredRotationDeg)
	}
	for i, t := range s.Colour.Tint {
		if !(t >= 0 && t <= 1) {
			return fmt.Errorf("colour tint %v: channel %d must be in [0, 1]", s.Colour.Tint, i)
		}
	}
	if s.Colour.Bayer && !s.Colour.on() {
		return fmt.Errorf("a Bayer mosaic needs a colour tint")
	}
	return nil
}

// FrameTimes returns the true time of every frame, s: frame/FPS, or with
// VariableRate the irregular times (frame 0 at 0), rounded to FrameTickS.
func (s *Scenario) FrameTimes() []float64 {
	t := make([]float64, s.Frames)
	if !s.VariableRate.on() {
		for f := range t {
			t[f] = float64(f) / s.FPS
		}
		return t
	}
	rng := s.rng(streamTiming, 0)
	v := s.VariableRate
	acc := 0.0
	for f := range t {
		t[f] = math.Round(acc/FrameTickS) * FrameTickS
		d := (1 + v.Spread*(2*rng.Float64()-1)) / s.FPS
		if rng.Float64() < v.SkipFraction {
			d *= 2
		}
		acc += d
	}
	return t
}

// frameTimes returns FrameTimes when the times are irregular, else nil
// (frameTime then computes frame/FPS).
func (s *Scenario) frameTimes() []float64 {
	if !s.VariableRate.on() {
		return nil
	}
	return s.FrameTimes()
}

// frameTime is the time of a frame from the table of frameTimes (nil:
// frame/FPS); beyond the table's end frames follow at the nominal rate.
func (s *Scenario) frameTime(times []float64, frame int) float64 {
	if times == nil || frame < 0 {
		return float64(frame) / s.FPS
	}
	if frame < len(times) {
		return times[frame]
	}
	n := len(times) - 1
	if n < 0 {
		return float64(frame) / s.FPS
	}
	return times[n] + float64(frame-n)/s.FPS
}

// FrameTimeS returns the true time of one frame, s. With VariableRate it
// costs a pass over the frames; loops should use FrameTimes.
func (s *Scenario) FrameTimeS(frame int) float64 { return s.frameTime(s.frameTimes(), frame) }

// shiftAt is the camera's image shift at a frame shown at time tS: the
// frame's random jitter plus the sway at tS.
func (s *Scenario) shiftAt(frame int, tS float64) (dxPx, dyPx float64) {
	if s.JitterPx != 0 {
		r := s.rng(streamJitter, frame)
		dxPx, dyPx = s.JitterPx*r.NormFloat64(), s.JitterPx*r.NormFloat64()
	}
	if s.SwayPx > 0 {
		px, py := s.swayPhases()
		t := orDefault(s.SwayPeriodS, defaultSwayPeriodS)
		dxPx += s.SwayPx * math.Sin(2*math.Pi*tS/t+px)
		dyPx += s.SwayPx * math.Sin(2*math.Pi*tS/(t*swayRatio)+py)
	}
	return dxPx, dyPx
}

// swayPhases draws the sway's phases along x and y from the seed.
func (s *Scenario) swayPhases() (float64, float64) {
	r := s.rng(streamSway, 0)
	return 2 * math.Pi * r.Float64(), 2 * math.Pi * r.Float64()
}

// exposureS is the exposure time, s.
func (s *Scenario) exposureS() float64 { return s.ExposureFraction / s.FPS }

// fieldOffsetS is how far each field of an interlaced frame lies from the
// frame's time, s: a quarter frame interval.
func (s *Scenario) fieldOffsetS() float64 { return 1 / (4 * s.FPS) }

// flickerPhase is the lamp's phase at t = 0, drawn from the seed.
func (s *Scenario) flickerPhase() float64 {
	return 2 * math.Pi * s.rng(streamFlicker, 0).Float64()
}

// illumination returns the lamp's factor for an exposure centred on tS of
// a frame, with the lamp's phase ph: the mean of the modulated light over
// the exposure, whose periodic part is sin(2 pi f t + ph) x sinc(pi f E),
// plus the frame's random change.
func (s *Scenario) illumination(frame int, tS, ph float64) float64 {
	fl := s.Flicker
	if !fl.on() {
		return 1
	}
	v := 1.0
	if fl.Depth > 0 && fl.LampHz > 0 {
		x := math.Pi * fl.LampHz * s.exposureS()
		sinc := 1.0
		if x != 0 {
			sinc = math.Sin(x) / x
		}
		v += fl.Depth * math.Sin(2*math.Pi*fl.LampHz*tS+ph) * sinc
	}
	if fl.Noise > 0 {
		// Stream index 1 + frame: index 0 holds the lamp's phase.
		v += fl.Noise * s.rng(streamFlicker, frame+1).NormFloat64()
	}
	return max(v, 0)
}

// Illumination returns the lamp's factor of every frame (1 with a steady
// lamp); for an interlaced frame the mean of its two fields' factors.
func (s *Scenario) Illumination() []float64 {
	out := make([]float64, s.Frames)
	times := s.frameTimes()
	ph := s.flickerPhase()
	for f := range out {
		t := s.frameTime(times, f)
		if s.Interlaced {
			q := s.fieldOffsetS()
			out[f] = (s.illumination(f, t-q, ph) + s.illumination(f, t+q, ph)) / 2
		} else {
			out[f] = s.illumination(f, t, ph)
		}
	}
	return out
}
