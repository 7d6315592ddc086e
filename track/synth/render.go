package synth

import (
	"fmt"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/calib/experiment"
)

// wallBandSigmas is how far from a wall line, in sigmas of the edge blur or
// reflection line (whichever is wider), the wall's profile is evaluated
// exactly; beyond it the pixel-integrated step and line differ from their
// limits by less than 1e-6 of their height.
const wallBandSigmas = 6

// Renderer draws the frames of one scenario. It owns its buffers, so that
// rendering a frame allocates nothing; it is not safe for concurrent use
// (use one Renderer per goroutine). It works on a copy of the scenario
// taken by NewRenderer: later changes to the scenario do not reach it.
type Renderer struct {
	s     Scenario
	g     frameGeom
	prog  experiment.Program
	pop   []member
	img   []float64 // photons of the frame being drawn
	bg    []float64 // the background for camera shift bgAt, when bgOK
	bgAt  [2]float64
	bgOK  bool
	vig   []float64 // vignetting factor per pixel, nil without vignetting
	drawn []Tracer
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
// expected photons per pixel) and returns it. The slice is the renderer's
// buffer, overwritten by the next call.
func (r *Renderer) Expected(frame int) []float64 {
	s := &r.s
	jx, jy := s.JitterAt(frame)
	r.drawBackground(jx, jy)
	r.drawn = s.positions(r.g, r.pop, r.prog, frame, false)
	sign := 1.0
	if s.polarity() == experiment.Dark {
		sign = -1
	}
	w, h := s.WidthPx, s.HeightPx
	for _, t := range r.drawn {
		AddSpot(r.img, w, h, t.XPx, t.YPx, t.SigmaPx, sign*t.Photons)
	}
	if r.vig != nil {
		for i, v := range r.vig {
			r.img[i] *= v
		}
	}
	return r.img
}

// Drawn returns the tracers drawn into the last frame: those of Positions
// plus the ones just outside the image whose spots reach into it. The slice
// is overwritten by the next frame.
func (r *Renderer) Drawn() []Tracer { return r.drawn }

// Photons draws the noisy photon image of a frame: Expected plus shot and
// read noise drawn from the frame's own random stream. The slice is the
// renderer's buffer, overwritten by the next call.
func (r *Renderer) Photons(frame int) []float64 {
	img := r.Expected(frame)
	AddNoise(img, r.s.ReadNoise, r.s.rng(streamNoise, frame))
	return img
}

// Render draws the camera image of a frame into dst: an 8-bit (CV_8U) or
// 16-bit (CV_16U) grey Mat of the scenario's size. dst is reused when it
// already has that size and type, otherwise it is closed and replaced; the
// caller closes it.
func (r *Renderer) Render(frame int, dst *gocv.Mat) error {
	if frame < 0 {
		return fmt.Errorf("synth: frame %d is negative", frame)
	}
	s := &r.s
	mt := gocv.MatTypeCV8U
	if s.bitDepth() == 16 {
		mt = gocv.MatTypeCV16U
	}
	if dst.Ptr() == nil || dst.Empty() || dst.Rows() != s.HeightPx || dst.Cols() != s.WidthPx ||
		dst.Type() != mt || !dst.IsContinuous() {
		dst.Close() // safe on a zero Mat
		*dst = gocv.NewMatWithSize(s.HeightPx, s.WidthPx, mt)
	}
	data, err := dst.DataPtrUint8()
	if err != nil {
		return fmt.Errorf("synth: %w", err)
	}
	// Quantize straight into the Mat's memory, which has exactly the size.
	_, _, err = toBytes(data, r.Photons(frame), s.WidthPx, s.HeightPx, s.bitDepth(), s.gain())
	return err
}

// drawBackground fills img with the sample between the walls, the plates
// beyond them, their edges and reflection lines, for a camera shifted by
// (jx, jy) px.
func (r *Renderer) drawBackground(jx, jy float64) {
	if !r.bgOK || r.bgAt != [2]float64{jx, jy} {
		if r.bg == nil {
			r.bg = make([]float64, len(r.img))
		}
		r.fillBackground(r.bg, jx, jy)
		r.bgAt, r.bgOK = [2]float64{jx, jy}, true
	}
	copy(r.img, r.bg)
}

// fillBackground draws the background into img for a camera shift (jx, jy).
func (r *Renderer) fillBackground(img []float64, jx, jy float64) {
	s, g := &r.s, r.g
	w, h := s.WidthPx, s.HeightPx
	gapB, plateB := s.BackgroundPhotons, s.Walls.PlatePhotons
	es, rs, refl := s.Walls.EdgeSigmaPx, s.Walls.ReflectionSigmaPx, s.Walls.ReflectionPhotons
	band := wallBandSigmas*max(es, rs) + 1
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
			if ds < -band || dm < -band {
				row[i] = plateB
				continue
			}
			d := min(ds, dm) // the near wall: the other's edge is 1, its line 0
			v := plateB + (gapB-plateB)*edgeCoverage(d, es)
			if refl != 0 {
				v += refl * lineWeight(d, rs)
			}
			row[i] = v
		}
	}
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
