package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// WallStyle is how the two plates look in the image: the plate regions
// beyond the wall lines are lit at PlatePhotons per pixel, with a sharp edge
// (blurred by EdgeSigmaPx, the optics' line spread) at the wall line, and a
// thin reflection line on the wall line, a Gaussian of sd ReflectionSigmaPx
// whose integral across the line is ReflectionPhotons per pixel of length
// (negative: a dark line).
//
// With TextureContrast > 0 the plates carry a fixed texture (machining marks,
// a matt finish): their level is PlatePhotons x (1 + TextureContrast x T),
// T a smooth random field of unit sd with correlation length TextureScalePx,
// drawn once from the seed. Each plate's texture belongs to the plate: the
// moving plate's texture travels with it along the wall.
type WallStyle struct {
	PlatePhotons      float64
	EdgeSigmaPx       float64
	ReflectionPhotons float64
	ReflectionSigmaPx float64
	TextureContrast   float64 // relative sd of the plates' texture (0: uniform plates)
	TextureScalePx    float64 // sd of the Gaussian that smooths the texture, px; 0: 2 px
}

// Scenario is everything needed to render a synthetic experiment and to know
// its truth. Lengths in um or px as named, times in s, intensities in
// photons (expected photo-electrons per pixel or per tracer).
//
// Fields may be changed after Builtin; Validate checks them. Zero values of
// Gain, FlowSign, MovingSide, Polarity, BitDepth, GapCentreYPx,
// OutOfFocusBlur and OutOfFocusDim mean their defaults (see each field).
type Scenario struct {
	Name, Description string
	Seed              int64

	WidthPx, HeightPx, Frames int
	FPS                       float64
	BitDepth                  int     // 8 (default) or 16
	Gain                      float64 // grey levels per photon; 0: 0.8 for 8 bit, 200 for 16 bit (in-focus peaks of the built-in scenarios then stay below saturation)

	Geometry     geometry.Geometry // the gap comes from here
	UMPerPx      float64           // image scale, um per px
	TiltDeg      float64           // angle of the walls to the image rows, degrees (positive: clockwise on screen)
	GapCentreYPx float64           // image row of the gap's centre line at the image's centre column; 0: the middle row
	MovingSide   string            // "top" (default) or "bottom": image side of the moving wall
	FlowSign     float64           // +1 (default): the moving wall travels to +x in the image; -1: to -x

	Motion    []experiment.Segment // the imposed wall program
	Profile   Profile              // velocity profile during every shear step
	Cessation Cessation            // displacement field after the last shear step

	Tracers            int     // mean number of tracers whose centre lies in the image
	DiameterPx         float64 // apparent diameter of an in-focus tracer, 4 sigma of its spot
	BrightnessSpread   float64 // relative sd of the tracers' photon counts (log-normal)
	OutOfFocusFraction float64 // fraction of tracers that are out of focus
	OutOfFocusBlur     float64 // their spot sigma over the in-focus sigma; 0: 2.5
	OutOfFocusDim      float64 // their photons over the in-focus photons; 0: 0.35
	Photons            float64 // mean photons of an in-focus tracer (its contrast in dark polarity)
	BackgroundPhotons  float64 // photons per pixel of the sample in the gap
	ReadNoise          float64 // sd of the read noise, photons
	Vignetting         float64 // fractional fall-off of the illumination at the image corners (0..1)
	JitterPx           float64 // sd of the camera's common-mode shift per frame and axis, px
	Polarity           string  // "bright" (default): light tracers on a dark sample; "dark": the reverse
	Walls              WallStyle
	DropFraction       float64 // probability that a tracer is missing from a frame

	// The camera's faults. Each is off at its zero value.

	// ExposureFraction is the exposure time over the frame interval (0..1;
	// at most 0.5 when Interlaced). Each spot is integrated along its true
	// path over the exposure, which is centred on the frame's time: the
	// truth's position is the middle of the streak. 0: an instantaneous
	// exposure, as before.
	ExposureFraction float64
	// Interlaced makes each frame of two fields: the even rows (0, 2, ...)
	// exposed a quarter frame interval before the frame's time, the odd rows
	// a quarter after, so that the fields lie half a frame interval apart
	// and the truth's frame time is midway between them.
	Interlaced bool
	// VariableRate makes the frame times irregular (see VariableRate).
	VariableRate VariableRate
	// SwayPx is the amplitude, per axis, of a slow sinusoidal sway of the
	// camera on top of the per-frame JitterPx, px; it can reach 2 px and more.
	SwayPx float64
	// SwayPeriodS is the period of the sway along x, s (along y it is longer
	// by the golden ratio, so that the path is not a line); 0: 2 s.
	SwayPeriodS float64
	// Flicker varies the illumination from frame to frame (see Flicker).
	Flicker Flicker
	// Colour makes the camera a colour camera (see Colour); zero: grey.
	Colour Colour
	// StoredRotationDeg is 0 or 180: the video file stores every frame
	// rotated by this angle and carries a display-rotation tag that undoes
	// it, as a phone held upside down does. Only the mp4-h264 format can
	// carry the tag; Render and Source give the frames as displayed.
	StoredRotationDeg int

	// Harder tracers.

	// OutOfFocusBlurMin, when > 0, spreads the out-of-focus tracers' blur:
	// each one's spot sigma over the in-focus sigma is drawn uniformly
	// between OutOfFocusBlurMin and OutOfFocusBlur (their photons are
	// OutOfFocusDim of an in-focus tracer's, so the wider, the dimmer).
	OutOfFocusBlurMin float64
	// FaintFraction is the fraction of in-focus tracers drawn faint: their
	// peak SNR (as PeakSNR defines it) uniform in FaintSNR.
	FaintFraction float64
	// FaintSNR is the range of the faint tracers' peak SNR; zero: 5 to 15.
	FaintSNR [2]float64
	// NearWallFraction is the fraction of tracers placed with their centre
	// within NearWallPx of a wall line (half at each wall, from on the
	// line inwards), where the others keep half a diameter away.
	NearWallFraction float64
	// NearWallPx is the depth of that layer, px; 0: 5 px.
	NearWallPx float64
	// StuckTracers is the mean number of tracers in view that are stuck to
	// a wall (half to each, centre half a diameter inside the gap) and move
	// with their wall. They are tracers: Positions lists them (Stuck says
	// which wall).
	StuckTracers int
	// Dust puts static spots on the cell's window (see Dust).
	Dust Dust

	// Start-up and the rheometer.

	// Transient makes the profile of each shear step develop from the
	// affine one (see Transient).
	Transient Transient
	// Stress is the sample's stress response, for the rheometer log and the
	// truth's stress maximum (see StressModel); zero: none.
	Stress StressModel
	// Log, when its RateHz > 0, makes Write add rheometer_log.csv (see
	// RheometerLog).
	Log RheometerLog

	OmitScale  bool // leave camera.um_per_px out of the experiment file
	StateWalls bool // write the true wall lines into the experiment file

	r *Renderer // used by Render; rebuilt when the fields change
}

// same reports whether s and o have equal fields (ignoring the cached
// renderer).
func (s *Scenario) same(o *Scenario) bool {
	a, b := *s, *o
	a.r, b.r = nil, nil
	return reflect.DeepEqual(a, b)
}

// Named is a built-in scenario's name and one-line description.
type Named struct{ Name, Description string }

// Tracer is the true state of one tracer in one frame. XPx, YPx are where
// its spot is centred in the image (including the camera jitter of the
// frame); XUM, YUM its position in gap coordinates (without jitter), x along
// the flow from the stationary wall's left end, y from the stationary wall.
// With motion blur the position is the one at mid-exposure.
type Tracer struct {
	ID       int
	XPx, YPx float64
	XUM, YUM float64
	Photons  float64 // total photons of the spot (its contrast in dark polarity)
	SigmaPx  float64 // sd of the spot
	InFocus  bool
	Stuck    string // "" for a tracer in the sample, else the wall it is stuck to: "stationary" or "moving"
}

// Defaults.
const (
	defaultOutOfFocusBlur = 2.5
	defaultOutOfFocusDim  = 0.35
	defaultGain8          = 0.8
	defaultGain16         = 200.0
	// diameterSigmas is the apparent diameter of a spot in sigmas: the
	// width at which a Gaussian falls to e^-2 of its peak (common practice).
	diameterSigmas = 4.0
	// wrapSlackPx pads the tracers' wrap-around strip beyond the spot box and
	// the tilt, so that a wrap is never visible.
	wrapSlackPx = 2.0
	// minGapDiameters is the narrowest gap rendered, in tracer diameters: the
	// walls' edges are then drawn independently of each other.
	minGapDiameters = 4
	// maxTiltDeg bounds the tilt: the analysis expects walls close to the
	// image rows.
	maxTiltDeg = 20.0
)

// Bounds on the sizes a user controls, checked before anything is
// allocated: a frame's buffers take about 30 bytes per pixel, so that a
// 16 Mpx frame needs about 0.5 GB; the truth holds a row per tracer and
// frame.
const (
	MaxSidePx      = 16384     // image width or height, px
	MaxPixels      = 16 << 20  // image area, px
	MaxFrames      = 1_000_000 // frames of a recording
	MaxTracers     = 1_000_000 // tracers in the image
	minPxPerTracer = 16        // at most one tracer per 4x4 px: denser, the spots merge into a texture
)

// Noise streams, so that each random quantity of a frame is reproducible on
// its own.
const (
	streamPopulation = iota + 1
	streamNoise
	streamJitter
	streamDrop
	streamTiming  // frame times of a variable rate
	streamSway    // the sway's phases
	streamFlicker // the lamp's phase and the per-frame changes
	streamTraits  // faint, near-wall and blur draws of the population
	streamDust    // the dust on the window
	streamTexture // the plates' texture
	streamNoiseG  // noise of the green channel of a colour camera
	streamNoiseR  // noise of the red channel
	streamStuck   // the tracers stuck to the walls
	streamLog     // noise of the rheometer log
)

func (s *Scenario) rng(stream, frame int) *rand.Rand {
	return rand.New(rand.NewPCG(uint64(s.Seed), uint64(stream)<<40|uint64(frame)))
}

// GapUM returns the gap in um.
func (s *Scenario) GapUM() float64 { return s.Geometry.Gap() }

// GapPx returns the gap in px.
func (s *Scenario) GapPx() float64 { return s.GapUM() / s.UMPerPx }

func (s *Scenario) gain() float64 {
	if s.Gain > 0 {
		return s.Gain
	}
	if s.bitDepth() == 16 {
		return defaultGain16
	}
	return defaultGain8
}

func (s *Scenario) bitDepth() int {
	if s.BitDepth == 0 {
		return 8
	}
	return s.BitDepth
}

func (s *Scenario) flowSign() float64 {
	if s.FlowSign < 0 {
		return -1
	}
	return 1
}

func (s *Scenario) movingSide() string {
	if s.MovingSide == "" {
		return experiment.Top
	}
	return s.MovingSide
}

func (s *Scenario) polarity() string {
	if s.Polarity == "" {
		return experiment.Bright
	}
	return s.Polarity
}

func (s *Scenario) centreYPx() float64 {
	if s.GapCentreYPx == 0 {
		return float64(s.HeightPx-1) / 2
	}
	return s.GapCentreYPx
}

func orDefault(v, d float64) float64 {
	if v > 0 {
		return v
	}
	return d
}

// SigmaPx returns the spot sd of an in-focus tracer.
func (s *Scenario) SigmaPx() float64 { return s.DiameterPx / diameterSigmas }

// DurationS returns the length of the recording, Frames / FPS.
func (s *Scenario) DurationS() float64 { return float64(s.Frames) / s.FPS }

// Validate reports the first field that makes the scenario unusable,
// naming it and its value.
func (s *Scenario) Validate() error {
	e := func(format string, a ...any) error {
		return fmt.Errorf("synth: scenario %q: "+format, append([]any{s.Name}, a...)...)
	}
	switch {
	case s.WidthPx < 16 || s.HeightPx < 16:
		return e("size %dx%d px is too small (at least 16x16)", s.WidthPx, s.HeightPx)
	case s.WidthPx > MaxSidePx || s.HeightPx > MaxSidePx || s.WidthPx*s.HeightPx > MaxPixels:
		return e("size %dx%d px exceeds %d px a side or %d Mpx", s.WidthPx, s.HeightPx, MaxSidePx, MaxPixels>>20)
	case s.Frames < 1:
		return e("frames %d, need at least 1", s.Frames)
	case s.Frames > MaxFrames:
		return e("frames %d exceed %d", s.Frames, MaxFrames)
	case s.Tracers > MaxTracers || s.Tracers > s.WidthPx*s.HeightPx/minPxPerTracer:
		return e("tracers %d exceed %d, or one per %d px of the %dx%d image", s.Tracers, MaxTracers, minPxPerTracer, s.WidthPx, s.HeightPx)
	case s.StuckTracers < 0 || s.StuckTracers > MaxTracers:
		return e("stuck tracers %d, must be in [0, %d]", s.StuckTracers, MaxTracers)
	case !(s.FPS > 0):
		return e("fps %g, must be positive", s.FPS)
	case s.BitDepth != 0 && s.BitDepth != 8 && s.BitDepth != 16:
		return e("bit depth %d is not 8 or 16", s.BitDepth)
	case s.Gain < 0:
		return e("gain %g, must be positive", s.Gain)
	case !(s.UMPerPx > 0):
		return e("um per px %g, must be positive", s.UMPerPx)
	case math.Abs(s.TiltDeg) > maxTiltDeg:
		return e("tilt %g deg exceeds %g deg", s.TiltDeg, maxTiltDeg)
	case s.MovingSide != "" && s.MovingSide != experiment.Top && s.MovingSide != experiment.Bottom:
		return e("moving side %q is not top or bottom", s.MovingSide)
	case s.FlowSign != 0 && math.Abs(s.FlowSign) != 1:
		return e("flow sign %g is not +1 or -1", s.FlowSign)
	case s.Tracers < 0:
		return e("tracers %d, must not be negative", s.Tracers)
	case !(s.DiameterPx > 0):
		return e("tracer diameter %g px, must be positive", s.DiameterPx)
	case s.BrightnessSpread < 0, s.OutOfFocusFraction < 0, s.OutOfFocusFraction > 1:
		return e("brightness spread %g or out-of-focus fraction %g out of range", s.BrightnessSpread, s.OutOfFocusFraction)
	case s.Photons < 0, s.BackgroundPhotons < 0, s.ReadNoise < 0, s.JitterPx < 0:
		return e("photons %g, background %g, read noise %g and jitter %g px must not be negative",
			s.Photons, s.BackgroundPhotons, s.ReadNoise, s.JitterPx)
	case s.Vignetting < 0 || s.Vignetting >= 1:
		return e("vignetting %g, must be in [0, 1)", s.Vignetting)
	case s.Polarity != "" && s.Polarity != experiment.Bright && s.Polarity != experiment.Dark:
		return e("polarity %q is not bright or dark", s.Polarity)
	case s.DropFraction < 0 || s.DropFraction >= 1:
		return e("drop fraction %g, must be in [0, 1)", s.DropFraction)
	case s.Walls.EdgeSigmaPx < 0 || s.Walls.ReflectionSigmaPx < 0 || s.Walls.PlatePhotons < 0:
		return e("wall style %+v has a negative width or plate level", s.Walls)
	}
	if err := s.Geometry.Validate(); err != nil {
		return e("%v", err)
	}
	if err := s.Experiment().Validate(); err != nil {
		return e("%v", err)
	}
	if err := s.Profile.Validate(); err != nil {
		return e("%v", err)
	}
	if err := s.Cessation.Validate(s.GapUM()); err != nil {
		return e("%v", err)
	}
	if s.GapPx() < minGapDiameters*s.DiameterPx {
		return e("the gap of %.1f px is narrower than %d tracer diameters", s.GapPx(), minGapDiameters)
	}
	if c := s.centreYPx(); s.GapPx() >= float64(s.HeightPx) || c-s.GapPx()/2 < 0 || c+s.GapPx()/2 > float64(s.HeightPx-1) {
		return e("the gap of %.1f px centred on row %.1f does not fit into %d rows", s.GapPx(), c, s.HeightPx)
	}
	if err := s.validateFaults(); err != nil {
		return e("%v", err)
	}
	return nil
}

// validateFaults reports the first unusable field of the camera's faults,
// the harder tracers, the dust, the start-up and the rheometer.
func (s *Scenario) validateFaults() error {
	if err := s.validateCamera(); err != nil {
		return err
	}
	lo, hi := s.faintSNR()
	blurMax := orDefault(s.OutOfFocusBlur, defaultOutOfFocusBlur)
	switch {
	case !(s.FaintFraction >= 0 && s.FaintFraction <= 1):
		return fmt.Errorf("faint fraction %g, must be in [0, 1]", s.FaintFraction)
	case !(lo > 0 && hi >= lo) || math.IsInf(hi, 0):
		return fmt.Errorf("faint SNR range %v, must be positive and increasing", s.FaintSNR)
	case !(s.NearWallFraction >= 0 && s.NearWallFraction <= 1):
		return fmt.Errorf("near-wall fraction %g, must be in [0, 1]", s.NearWallFraction)
	case !(s.NearWallPx >= 0) || orDefault(s.NearWallPx, defaultNearWallPx) > s.GapPx()/2:
		return fmt.Errorf("near-wall layer %g px, must be positive and within half the gap", s.NearWallPx)
	case !(s.OutOfFocusBlurMin >= 0) || s.OutOfFocusBlurMin > blurMax:
		return fmt.Errorf("out-of-focus blur range %g to %g, must be increasing", s.OutOfFocusBlurMin, blurMax)
	case !(s.Walls.TextureContrast >= 0 && s.Walls.TextureContrast <= 1) || !(s.Walls.TextureScalePx >= 0):
		return fmt.Errorf("plate texture contrast %g (0..1) and scale %g px (not negative)", s.Walls.TextureContrast, s.Walls.TextureScalePx)
	}
	if err := s.Dust.validate(); err != nil {
		return err
	}
	if err := s.Transient.validate(); err != nil {
		return err
	}
	if s.Transient.on() && s.Geometry.Kind == geometry.Couette {
		return fmt.Errorf("a start-up transient needs a plate-like geometry, not %q (its affine profile is curved)", s.Geometry.Kind)
	}
	if err := s.Stress.validate(); err != nil {
		return err
	}
	return s.validateLog()
}

// Experiment returns the experiment file that goes with the scenario: its
// geometry, frame rate, scale (unless OmitScale), moving side, wall lines
// (when StateWalls), motion program and tracer hints.
func (s *Scenario) Experiment() *experiment.Experiment {
	e := &experiment.Experiment{
		Name:     s.Name + ": " + s.Description,
		Geometry: s.Geometry,
		Camera:   experiment.Camera{FPS: s.FPS},
		Walls:    experiment.Walls{Moving: s.movingSide()},
		Motion:   append([]experiment.Segment(nil), s.Motion...),
		Tracers:  experiment.Tracers{DiameterPx: s.DiameterPx, Polarity: s.polarity()},
	}
	if !s.OmitScale {
		e.Camera.UMPerPx = s.UMPerPx
	}
	if s.StateWalls {
		c := s.Calibration()
		e.Walls.StationaryPx = [][2]float64{c.StationaryWallPx[0], c.StationaryWallPx[1]}
		e.Walls.MovingPx = [][2]float64{c.MovingWallPx[0], c.MovingWallPx[1]}
	}
	return e
}

// frameGeom is the layout of the gap in the image: the gap's centre point,
// the unit vector along the walls (towards +x of the image) and the unit
// normal from the stationary to the moving wall, all in px.
type frameGeom struct {
	cx, cy   float64
	ex, ey   float64
	nx, ny   float64
	gapPx    float64
	periodPx float64 // length of the wrap-around strip along the walls
}

func (s *Scenario) geom() frameGeom {
	th := s.TiltDeg * math.Pi / 180
	g := frameGeom{cx: float64(s.WidthPx-1) / 2, cy: s.centreYPx(), ex: math.Cos(th), ey: math.Sin(th), gapPx: s.GapPx()}
	// Normal towards the top of the image (smaller y) for a moving wall on top.
	g.nx, g.ny = g.ey, -g.ex
	if s.movingSide() == experiment.Bottom {
		g.nx, g.ny = -g.nx, -g.ny
	}
	maxSigma := s.SigmaPx() * max(1, orDefault(s.OutOfFocusBlur, defaultOutOfFocusBlur))
	margin := spotBoxSigmas*maxSigma + g.gapPx/2*math.Abs(math.Tan(th)) + wrapSlackPx
	g.periodPx = float64(s.WidthPx)/g.ex + 2*margin
	return g
}

// toImage maps the along-wall coordinate u (px from the centre point) and the
// height yPx above the stationary wall to image pixels.
func (g frameGeom) toImage(u, yPx float64) (float64, float64) {
	h := yPx - g.gapPx/2
	return g.cx + u*g.ex + h*g.nx, g.cy + u*g.ey + h*g.ny
}

// Calibration returns the true calibration of the scenario: the wall lines
// through the image's first and last column, the scale, the gap, the tilt
// and the flow sign, as calibration.json would hold them.
func (s *Scenario) Calibration() *calib.Calibration {
	g := s.geom()
	line := func(yPx float64) calib.Line {
		// Points of the wall at image columns 0 and W-1.
		var l calib.Line
		for i, x := range []float64{0, float64(s.WidthPx - 1)} {
			// Solve cx + u*ex + h*nx = x for u.
			h := yPx - g.gapPx/2
			u := (x - g.cx - h*g.nx) / g.ex
			_, py := g.toImage(u, yPx)
			l[i] = [2]float64{x, py} // x exactly, not x plus rounding
		}
		return l
	}
	tilt := s.TiltDeg
	return &calib.Calibration{
		UMPerPx: s.UMPerPx, GapUM: s.GapUM(), TiltDeg: tilt, ScaleSource: calib.ScaleExperiment,
		StationaryWallPx: line(0), MovingWallPx: line(g.gapPx), FlowSign: s.flowSign(),
		GapPx: g.gapPx, WidthPx: s.WidthPx, HeightPx: s.HeightPx, WallSource: "truth",
	}
}

// member is one tracer of the population: fixed height, starting position
// along the wall strip, brightness and focus, and the wall it is stuck to
// ("" for none).
type member struct {
	yUM, u0Px        float64
	photons, sigmaPx float64
	inFocus          bool
	stuck            string
}

// Defaults of the harder tracers.
const (
	defaultFaintSNRLo = 5.0
	defaultFaintSNRHi = 15.0
	defaultNearWallPx = 5.0
)

// population draws the scenario's tracers from its seed. The draws of the
// harder tracers (faint, near the walls, spread blur) come from a stream of
// their own, after the others, so that switching them on changes only the
// tracers they pick; the stuck tracers follow the others in ID order.
func (s *Scenario) population(g frameGeom) []member {
	rng := s.rng(streamPopulation, 0)
	strip := g.periodPx * g.ex / float64(s.WidthPx) // the strip's length over the image width
	n := int(math.Round(float64(s.Tracers) * strip))
	gap := s.GapUM()
	// A tracer's centre stays half a diameter from each wall: it is a
	// particle of that size in the sample.
	edgeUM := s.DiameterPx / 2 * s.UMPerPx
	sig := s.SigmaPx()
	spread := s.BrightnessSpread
	pop := make([]member, n, n+int(math.Round(float64(s.StuckTracers)*strip)))
	for i := range pop {
		m := member{
			yUM:     edgeUM + rng.Float64()*(gap-2*edgeUM),
			u0Px:    (rng.Float64() - 0.5) * g.periodPx,
			photons: s.Photons * math.Exp(spread*rng.NormFloat64()-spread*spread/2),
			sigmaPx: sig,
			inFocus: true,
		}
		if rng.Float64() < s.OutOfFocusFraction {
			m.inFocus = false
			m.sigmaPx *= orDefault(s.OutOfFocusBlur, defaultOutOfFocusBlur)
			m.photons *= orDefault(s.OutOfFocusDim, defaultOutOfFocusDim)
		}
		pop[i] = m
	}
	if s.OutOfFocusBlurMin > 0 || s.FaintFraction > 0 || s.NearWallFraction > 0 {
		s.harderTracers(pop)
	}
	if s.StuckTracers > 0 {
		r := s.rng(streamStuck, 0)
		for k := range cap(pop) - n {
			m := member{u0Px: (r.Float64() - 0.5) * g.periodPx, sigmaPx: sig, inFocus: true,
				photons: s.Photons * math.Exp(spread*r.NormFloat64()-spread*spread/2)}
			if k%2 == 0 {
				m.stuck, m.yUM = WallStationary, edgeUM
			} else {
				m.stuck, m.yUM = WallMoving, gap-edgeUM
			}
			pop = append(pop, m)
		}
	}
	return pop
}

// harderTracers redraws, from their own stream, the blur of out-of-focus
// tracers, the photons of faint ones and the height of near-wall ones.
func (s *Scenario) harderTracers(pop []member) {
	r := s.rng(streamTraits, 0)
	sig := s.SigmaPx()
	blurMax := orDefault(s.OutOfFocusBlur, defaultOutOfFocusBlur)
	lo, hi := s.faintSNR()
	depthUM := orDefault(s.NearWallPx, defaultNearWallPx) * s.UMPerPx
	for i := range pop {
		m := &pop[i]
		// Five draws per tracer whatever is switched on, so that each
		// choice is the same tracer's for any combination.
		uBlur, uFaint, uFaintSNR := r.Float64(), r.Float64(), r.Float64()
		uNear, uNearY := r.Float64(), r.Float64()
		if !m.inFocus && s.OutOfFocusBlurMin > 0 {
			m.sigmaPx = sig * (s.OutOfFocusBlurMin + uBlur*(blurMax-s.OutOfFocusBlurMin))
		}
		if m.inFocus && uFaint < s.FaintFraction {
			m.photons = s.photonsForSNR(lo + uFaintSNR*(hi-lo))
		}
		if uNear < s.NearWallFraction {
			// Half at each wall: the lower half of uNear's range at the
			// stationary wall.
			d := uNearY * depthUM
			if uNear < s.NearWallFraction/2 {
				m.yUM = d
			} else {
				m.yUM = s.GapUM() - d
			}
		}
	}
}

func (s *Scenario) faintSNR() (lo, hi float64) {
	if s.FaintSNR == [2]float64{} {
		return defaultFaintSNRLo, defaultFaintSNRHi
	}
	return s.FaintSNR[0], s.FaintSNR[1]
}

// photonsForSNR returns the photons of an in-focus tracer whose peak SNR,
// as PeakSNR defines it, is snr.
func (s *Scenario) photonsForSNR(snr float64) float64 {
	var w [1]float64
	frac := pixelWeights(w[:0], 0, 1, 0, s.SigmaPx())[0]
	return snr * math.Sqrt(s.BackgroundPhotons+s.ReadNoise*s.ReadNoise) / (frac * frac)
}

// Program returns the resolved motion program.
func (s *Scenario) Program() experiment.Program {
	return (&experiment.Experiment{Geometry: s.Geometry, Motion: s.Motion}).Program()
}

// StopS returns the end of the last shear step, or NaN without motion.
func (s *Scenario) StopS() float64 {
	p := s.Program()
	if len(p) == 0 {
		return math.NaN()
	}
	return p[len(p)-1].EndS
}

// flowSense is the sign of the first step's wall speed: gap x is positive in
// the direction the moving wall travels in the first shear step.
func flowSense(p experiment.Program) float64 {
	for _, st := range p {
		if st.WallSpeedUMPerS < 0 {
			return -1
		}
		if st.WallSpeedUMPerS > 0 {
			return 1
		}
	}
	return 1
}

// VelocityFraction returns v/V at height yUM during a shear step: the
// Profile, or for a Couette cell with the default profile the exact
// Newtonian concentric-cylinder profile of geometry.Reference.
func (s *Scenario) VelocityFraction(yUM float64) float64 {
	if s.Geometry.Kind == geometry.Couette && s.Profile.IsDefault() {
		return s.Geometry.Reference(yUM, 1)
	}
	return s.Profile.Velocity(yUM / s.GapUM())
}

// DisplacementUM returns the true displacement in um along +x of the gap of
// the layer at height yUM between time 0 and tS: the integral of the shear
// steps' velocity, plus the cessation field after the last step.
func (s *Scenario) DisplacementUM(yUM, tS float64) float64 {
	return s.displacement(s.Program(), yUM, tS)
}

func (s *Scenario) displacement(p experiment.Program, yUM, tS float64) float64 {
	sense := flowSense(p)
	d := 0.0
	if s.Transient.on() {
		for _, st := range p {
			if dt := min(tS, st.EndS) - st.StartS; dt > 0 {
				d += s.stepDisplacement(sense*st.WallSpeedUMPerS, yUM, dt)
			}
		}
	} else {
		f := s.VelocityFraction(yUM)
		for _, st := range p {
			dt := min(tS, st.EndS) - st.StartS
			if dt > 0 {
				d += sense * st.WallSpeedUMPerS * f * dt
			}
		}
	}
	if len(p) > 0 {
		d += s.Cessation.Displacement(yUM, s.GapUM(), tS-p[len(p)-1].EndS)
	}
	return d
}

// JitterAt returns the camera's common-mode image shift in px of a frame:
// its random jitter plus the sway at its time.
func (s *Scenario) JitterAt(frame int) (dxPx, dyPx float64) {
	if s.JitterPx == 0 && s.SwayPx == 0 {
		return 0, 0
	}
	return s.shiftAt(frame, s.FrameTimeS(frame))
}

// Positions returns the true state of the tracers whose spot centre lies in
// the image of that frame (and which are not dropped from it), in ID order,
// at the frame's time (the middle of its exposure, midway between the
// fields of an interlaced frame). It renders nothing and may be called for
// any frame in any order; the result depends only on the scenario's fields
// and the frame index.
func (s *Scenario) Positions(frame int) []Tracer {
	return s.positionsAt(s.geom(), nil, s.Program(), frame, s.FrameTimeS(frame), nil, true, nil)
}

// positionsAt computes the population's state in a frame shown at time tS
// (pop nil: drawn here; cal nil: computed here), appending to dst. With
// inImage only tracers centred in the image are kept; else every tracer
// whose spot may touch the image.
func (s *Scenario) positionsAt(g frameGeom, pop []member, prog experiment.Program, frame int, tS float64,
	cal *calib.Calibration, inImage bool, dst []Tracer) []Tracer {
	if pop == nil {
		pop = s.population(g)
	}
	jx, jy := s.shiftAt(frame, tS)
	if cal == nil {
		cal = s.Calibration()
	}
	var drop *rand.Rand
	if s.DropFraction > 0 {
		drop = s.rng(streamDrop, frame)
	}
	sign := s.flowSign()
	w, h := float64(s.WidthPx), float64(s.HeightPx)
	out := dst[:0]
	if cap(out) < len(pop) {
		out = make([]Tracer, 0, len(pop))
	}
	for i := range pop {
		m := &pop[i]
		if drop != nil && drop.Float64() < s.DropFraction {
			continue
		}
		u := m.u0Px + sign*s.memberDisplacement(prog, m, tS)/s.UMPerPx
		u -= g.periodPx * math.Floor(u/g.periodPx+0.5) // wrap into [-P/2, P/2)
		x, y := g.toImage(u, m.yUM/s.UMPerPx)
		xUM, yUM := cal.ToGap(x, y)
		x, y = x+jx, y+jy
		if inImage && (x < -0.5 || x >= w-0.5 || y < -0.5 || y >= h-0.5) {
			continue
		}
		out = append(out, Tracer{ID: i, XPx: x, YPx: y, XUM: xUM, YUM: yUM,
			Photons: m.photons, SigmaPx: m.sigmaPx, InFocus: m.inFocus, Stuck: m.stuck})
	}
	return out
}

// memberDisplacement is a tracer's displacement along gap +x since time 0,
// um: the fluid's at its height, or its wall's for a stuck tracer.
func (s *Scenario) memberDisplacement(prog experiment.Program, m *member, tS float64) float64 {
	switch m.stuck {
	case WallStationary:
		return 0
	case WallMoving:
		return s.wallDisplacement(prog, tS)
	}
	return s.displacement(prog, m.yUM, tS)
}

// wallDisplacement is the moving wall's displacement along gap +x since
// time 0, um.
func (s *Scenario) wallDisplacement(p experiment.Program, tS float64) float64 {
	sense := flowSense(p)
	d := 0.0
	for _, st := range p {
		if dt := min(tS, st.EndS) - st.StartS; dt > 0 {
			d += sense * st.WallSpeedUMPerS * dt
		}
	}
	return d
}

// Resize changes the image size to widthPx x heightPx and keeps the picture:
// the gap keeps its share of the image height (the scale in um/px changes
// with the height), the gap's centre line its relative row, and the number
// of tracers follows the image area so that their density stays the same.
func (s *Scenario) Resize(widthPx, heightPx int) {
	if widthPx <= 0 || heightPx <= 0 || s.WidthPx <= 0 || s.HeightPx <= 0 {
		s.WidthPx, s.HeightPx = widthPx, heightPx // Validate reports it
		return
	}
	k := float64(heightPx) / float64(s.HeightPx)
	centre := s.centreYPx()
	area := float64(widthPx*heightPx) / float64(s.WidthPx*s.HeightPx)
	s.UMPerPx /= k
	s.GapCentreYPx = (centre+0.5)*k - 0.5
	s.Tracers = int(math.Round(float64(s.Tracers) * area))
	s.WidthPx, s.HeightPx = widthPx, heightPx
}

// tracerPeakPhotons is the photons in the brightest pixel of a mean
// in-focus tracer centred on a pixel.
func (s *Scenario) tracerPeakPhotons() float64 {
	var w [1]float64
	frac := pixelWeights(w[:0], 0, 1, 0, s.SigmaPx())[0]
	return s.Photons * frac * frac
}

// PeakSNR returns the signal-to-noise ratio of a mean in-focus tracer
// centred on a pixel: the photons of its brightest pixel over the noise sd
// of the background there, sqrt(BackgroundPhotons + ReadNoise^2).
func (s *Scenario) PeakSNR() float64 {
	return s.tracerPeakPhotons() / math.Sqrt(s.BackgroundPhotons+s.ReadNoise*s.ReadNoise)
}
