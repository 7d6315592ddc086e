package synth

import (
	"fmt"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
)

// wallBandSigmas is how far from a wall line, in sigmas of the edge blur or
// reflection line (whichever is wider), the wall's profile is evaluated
// exactly; beyond it the pixel-integrated step and line differ from their
// limits by less than 1e-6 of their height.
const wallBandSigmas = 6

// blurStepSigmas is the spacing of the sub-exposures that integrate a
// moving spot, in sigmas of the spot: a Gaussian sampled at a quarter of its
// sd along the path sums to a smooth streak (its midpoint-rule error in the
// image is below 1e-4 of the peak, measured in TestMotionBlurIntegral).
const blurStepSigmas = 0.25

// Renderer draws the frames of one scenario. It owns its buffers, so that
// rendering a frame allocates nothing; it is not safe for concurrent use
// (use one Renderer per goroutine). It works on a copy of the scenario
// taken by NewRenderer: later changes to the scenario do not reach it.
type Renderer struct {
	s     Scenario
	g     frameGeom
	prog  experiment.Program
	pop   []member
	cal   *calib.Calibration
	times []float64 // frame times with a variable rate, else nil
	img   []float64 // photons of the frame being drawn
	field []float64 // the second field of an interlaced frame
	bg    []float64 // the background for the key bgAt, when bgOK
	bgAt  [3]float64
	bgOK  bool
	vig   []float64 // vignetting factor per pixel, nil without vignetting
	drawn []Tracer
	// The camera's faults.
	flickerPh float64       // the lamp's phase
	dust      []DustSpot    // the dust on the window
	dustPeak  float64       // photons of a bright dust spot of contrast 1
	tex       *plateTexture // the plates' texture, nil without
	scratch   []float64     // one colour channel or the Bayer mosaic
	plane     []byte        // the quantized Bayer mosaic
}

// NewRenderer checks the scenario and prepares a renderer for it.
func NewRenderer(s *Scenario) (*Renderer, error) {
	if err := s.Validate(); err != nil {
		return nil, err
	}
	r := &Renderer{s: *s, g: s.geom(), prog: s.Program()}
	r.s.r = nil
	r.s.Motion = append([]experiment.Segment(nil), s.Motion...)
	r.s.Profile.Bands = append([]Band(nil), s.Profile.Bands...)
	r.pop = s.population(r.g)
	r.cal = s.Calibration()
	r.times = s.frameTimes()
	r.flickerPh = s.flickerPhase()
	r.dust = s.DustSpots()
	r.dustPeak = s.tracerPeakPhotons()
	if s.Walls.TextureContrast > 0 {
		r.tex = s.newPlateTexture(r.g)
	}
	w, h := s.WidthPx, s.HeightPx
	r.img = make([]float64, w*h)
	if s.Vignetting > 0 {
		r.vig = make([]float64, w*h)
		cx, cy := float64(w-1)/2, float64(h-1)/2
		rc2 := cx*cx + cy*cy
		for j := range h {
			for i := range w {
				dx, dy := float64(i)-cx, float64(j)-cy
				r.vig[j*w+i] = 1 - s.Vignetting*(dx*dx+dy*dy)/rc2 // as vignettingAt
			}
		}
	}
	return r, nil
}

// Scenario returns the renderer's copy of the scenario.
func (r *Renderer) Scenario() *Scenario { return &r.s }

// Expected draws the noiseless photon image of a frame (row-major, w*h,
// expected photons per pixel, before a colour camera's tint) and returns
// it. The slice is the renderer's buffer, overwritten by the next call.
func (r *Renderer) Expected(frame int) []float64 {
	s := &r.s
	tS := s.frameTime(r.times, frame)
	if !s.Interlaced {
		r.drawField(r.img, frame, tS)
		return r.img
	}
	// The odd rows from the second field, half a frame interval later.
	if r.field == nil {
		r.field = make([]float64, len(r.img))
	}
	q := s.fieldOffsetS()
	r.drawField(r.field, frame, tS+q)
	r.drawField(r.img, frame, tS-q)
	w := s.WidthPx
	for j := 1; j < s.HeightPx; j += 2 {
		copy(r.img[j*w:(j+1)*w], r.field[j*w:(j+1)*w])
	}
	return r.img
}

// drawField draws into dst the noiseless image of an exposure centred on
// tS of a frame: background and plates, tracers (smeared over the exposure),
// dust, then the illumination (vignetting and the lamp's flicker).
func (r *Renderer) drawField(dst []float64, frame int, tS float64) {
	s := &r.s
	jx, jy := s.shiftAt(frame, tS)
	r.drawBackground(dst, jx, jy, r.plateShiftPx(tS))
	r.drawn = s.positionsAt(r.g, r.pop, r.prog, frame, tS, r.cal, false, r.drawn)
	sign := 1.0
	if s.polarity() == experiment.Dark {
		sign = -1
	}
	w, h := s.WidthPx, s.HeightPx
	blur := s.ExposureFraction > 0
	for _, t := range r.drawn {
		if blur {
			r.addStreak(dst, &t, tS, sign*t.Photons)
		} else {
			AddSpot(dst, w, h, t.XPx, t.YPx, t.SigmaPx, sign*t.Photons)
		}
	}
	r.addDust(dst, jx, jy)
	illum := s.illumination(frame, tS, r.flickerPh)
	switch {
	case r.vig != nil && illum == 1:
		for i, v := range r.vig {
			dst[i] *= v
		}
	case r.vig != nil:
		for i, v := range r.vig {
			dst[i] *= v * illum
		}
	case illum != 1:
		for i := range dst {
			dst[i] *= illum
		}
	}
}

// streakSteps returns the number of sub-exposures for a streak of length
// lengthPx of a spot of sd sigmaPx.
func streakSteps(lengthPx, sigmaPx float64) int {
	return max(1, int(math.Ceil(lengthPx/(blurStepSigmas*sigmaPx))))
}

// streak calls add for each sub-exposure of tracer t over the exposure
// centred on tS: its image position and its share of the photons (the
// midpoint rule over n equal parts of the exposure).
func (r *Renderer) streak(t *Tracer, tS, photons float64, add func(x, y, photons float64)) {
	s := &r.s
	m := &r.pop[t.ID]
	e := s.exposureS()
	k := s.flowSign() / s.UMPerPx
	mid := s.memberDisplacement(r.prog, m, tS)
	a := s.memberDisplacement(r.prog, m, tS-e/2)
	b := s.memberDisplacement(r.prog, m, tS+e/2)
	n := streakSteps(math.Abs((b-a)*k), t.SigmaPx)
	if n == 1 {
		add(t.XPx, t.YPx, photons)
		return
	}
	for i := range n {
		ti := tS - e/2 + (float64(i)+0.5)*e/float64(n)
		du := (s.memberDisplacement(r.prog, m, ti) - mid) * k
		add(t.XPx+du*r.g.ex, t.YPx+du*r.g.ey, photons/float64(n))
	}
}

// addStreak draws tracer t smeared along its path over the exposure.
func (r *Renderer) addStreak(dst []float64, t *Tracer, tS, photons float64) {
	w, h := r.s.WidthPx, r.s.HeightPx
	r.streak(t, tS, photons, func(x, y, p float64) { AddSpot(dst, w, h, x, y, t.SigmaPx, p) })
}

// Drawn returns the tracers drawn into the last frame (the last field of
// an interlaced one): those of Positions plus the ones just outside the
// image whose spots reach into it. The slice is overwritten by the next
// frame.
func (r *Renderer) Drawn() []Tracer { return r.drawn }

// Photons draws the noisy photon image of a frame: Expected plus shot and
// read noise drawn from the frame's own random stream (for a colour camera,
// the grey image before the tint). The slice is the renderer's buffer,
// overwritten by the next call.
func (r *Renderer) Photons(frame int) []float64 {
	img := r.Expected(frame)
	AddNoise(img, r.s.ReadNoise, r.s.rng(streamNoise, frame))
	return img
}

// MatType returns the type of the Mats Render makes: CV_8U or CV_16U by
// bit depth, with three channels (BGR) for a colour camera.
func (s *Scenario) MatType() gocv.MatType {
	switch {
	case s.bitDepth() == 16 && s.Colour.on():
		return gocv.MatTypeCV16UC3
	case s.bitDepth() == 16:
		return gocv.MatTypeCV16U
	case s.Colour.on():
		return gocv.MatTypeCV8UC3
	}
	return gocv.MatTypeCV8U
}

// Render draws the camera image of a frame into dst: an 8-bit (CV_8U) or
// 16-bit (CV_16U) grey Mat of the scenario's size, or for a colour camera
// a 3-channel BGR one (CV_8UC3, CV_16UC3), as displayed (StoredRotationDeg
// is applied only by the file writers). dst is reused when it already has
// that size and type, otherwise it is closed and replaced; the caller
// closes it.
func (r *Renderer) Render(frame int, dst *gocv.Mat) error {
	if frame < 0 {
		return fmt.Errorf("synth: frame %d is negative", frame)
	}
	s := &r.s
	mt := s.MatType()
	if dst.Ptr() == nil || dst.Empty() || dst.Rows() != s.HeightPx || dst.Cols() != s.WidthPx ||
		dst.Type() != mt || !dst.IsContinuous() {
		dst.Close() // safe on a zero Mat
		*dst = gocv.NewMatWithSize(s.HeightPx, s.WidthPx, mt)
	}
	data, err := dst.DataPtrUint8()
	if err != nil {
		return fmt.Errorf("synth: %w", err)
	}
	if s.Colour.on() {
		return r.colourFrame(data, frame)
	}
	// Quantize straight into the Mat's memory, which has exactly the size.
	_, _, err = toBytes(data, r.Photons(frame), s.WidthPx, s.HeightPx, s.bitDepth(), s.gain())
	return err
}

// drawBackground fills dst with the sample between the walls, the plates
// beyond them, their edges and reflection lines, for a camera shifted by
// (jx, jy) px and the moving plate shifted by plateU px along the walls.
func (r *Renderer) drawBackground(dst []float64, jx, jy, plateU float64) {
	key := [3]float64{jx, jy, plateU}
	if !r.bgOK || r.bgAt != key {
		if r.bg == nil {
			r.bg = make([]float64, len(r.img))
		}
		r.fillBackground(r.bg, jx, jy, plateU)
		r.bgAt, r.bgOK = key, true
	}
	copy(dst, r.bg)
}

// plateShiftPx is how far the moving plate's texture has travelled along
// the walls (image +x along them) at tS, px; 0 without texture, so that
// the background is kept between frames.
func (r *Renderer) plateShiftPx(tS float64) float64 {
	if r.tex == nil {
		return 0
	}
	return r.s.flowSign() * r.s.wallDisplacement(r.prog, tS) / r.s.UMPerPx
}

// wallBand is the distance from a wall line, px, beyond which the wall's
// edge and reflection line are at their limits.
func (r *Renderer) wallBand() float64 {
	return wallBandSigmas*max(r.s.Walls.EdgeSigmaPx, r.s.Walls.ReflectionSigmaPx) + 1
}

// fillBackground draws the background into img for a camera shift (jx, jy)
// and the moving plate's shift plateU.
func (r *Renderer) fillBackground(img []float64, jx, jy, plateU float64) {
	s, g := &r.s, r.g
	w, h := s.WidthPx, s.HeightPx
	gapB, plateB := s.BackgroundPhotons, s.Walls.PlatePhotons
	band := r.wallBand()
	// Stationary wall's point under the gap centre, shifted by the jitter.
	sx, sy := g.cx-g.gapPx/2*g.nx+jx, g.cy-g.gapPx/2*g.ny+jy
	for j := range h {
		row := img[j*w : (j+1)*w]
		dy := float64(j) - sy
		for i := range row {
			// Heights above the stationary wall and below the moving one, px.
			ds := (float64(i)-sx)*g.nx + dy*g.ny
			dm := g.gapPx - ds
			if ds > band && dm > band {
				row[i] = gapB
				continue
			}
			if r.tex == nil && (ds < -band || dm < -band) {
				row[i] = plateB
				continue
			}
			row[i] = r.wallLevel(ds, dm, (float64(i)-sx)*g.ex+dy*g.ey, plateU, band)
		}
	}
}

// wallLevel is the background in photons at heights ds above the
// stationary wall and dm below the moving one (px), at the along-wall
// coordinate u (px from the stationary wall's point under the gap centre),
// near a wall or on a plate.
func (r *Renderer) wallLevel(ds, dm, u, plateU, band float64) float64 {
	s := &r.s
	gapB, plateB := s.BackgroundPhotons, s.Walls.PlatePhotons
	es, rs, refl := s.Walls.EdgeSigmaPx, s.Walls.ReflectionSigmaPx, s.Walls.ReflectionPhotons
	moving := dm < ds // the near wall
	if r.tex != nil {
		if moving {
			plateB *= 1 + s.Walls.TextureContrast*r.tex.at(1, u-plateU, -dm)
		} else {
			plateB *= 1 + s.Walls.TextureContrast*r.tex.at(0, u, -ds)
		}
	}
	if ds < -band || dm < -band {
		return plateB
	}
	d := min(ds, dm) // the near wall: the other's edge is 1, its line 0
	v := plateB + (gapB-plateB)*edgeCoverage(d, es)
	if refl != 0 {
		v += refl * lineWeight(d, rs)
	}
	return v
}

// backgroundAt is the background in photons (before illumination) at the
// image point (x, y) for a camera shift (jx, jy) at time tS, as
// fillBackground draws it at pixel centres.
func (r *Renderer) backgroundAt(x, y, jx, jy, tS float64) float64 {
	g := r.g
	sx, sy := g.cx-g.gapPx/2*g.nx+jx, g.cy-g.gapPx/2*g.ny+jy
	ds := (x-sx)*g.nx + (y-sy)*g.ny
	dm := g.gapPx - ds
	band := r.wallBand()
	if ds > band && dm > band {
		return r.s.BackgroundPhotons
	}
	return r.wallLevel(ds, dm, (x-sx)*g.ex+(y-sy)*g.ey, r.plateShiftPx(tS), band)
}

// edgeCoverage returns the fraction of a pixel whose centre lies d px inside
// a straight edge (positive: inside) that is covered, for an edge blurred
// by a Gaussian of sd sigma and the pixel's extent taken as 1 px across the
// edge (exact for an edge along the pixel rows): the integral of Phi(u/sigma)
// over [d-0.5, d+0.5].
func edgeCoverage(d, sigma float64) float64 {
	if sigma == 0 {
		return clamp(d+0.5, 0, 1)
	}
	return sigma * (phiIntegral((d+0.5)/sigma) - phiIntegral((d-0.5)/sigma))
}

// phiIntegral is the antiderivative z*Phi(z) + phi(z) of the standard normal
// distribution function Phi.
func phiIntegral(z float64) float64 {
	return z*0.5*math.Erfc(-z/math.Sqrt2) + math.Exp(-z*z/2)/math.Sqrt(2*math.Pi)
}

// lineWeight is the fraction of a unit-integral Gaussian line of sd sigma,
// d px away, that falls on a pixel 1 px across.
func lineWeight(d, sigma float64) float64 {
	if sigma == 0 {
		if d >= -0.5 && d < 0.5 {
			return 1
		}
		return 0
	}
	k := 1 / (math.Sqrt2 * sigma)
	return 0.5 * (math.Erf((d+0.5)*k) - math.Erf((d-0.5)*k))
}

// Render draws the camera image of a frame into dst (see Renderer.Render).
// It keeps a renderer inside the scenario, rebuilt when the scenario has
// changed; it is not safe for concurrent use.
func (s *Scenario) Render(frame int, dst *gocv.Mat) error {
	if s.r == nil || !s.r.s.same(s) {
		r, err := NewRenderer(s)
		if err != nil {
			return err
		}
		s.r = r
	}
	return s.r.Render(frame, dst)
}
