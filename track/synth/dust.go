package synth

import (
	"fmt"
	"math"
)

// Dust puts static spots on the cell's window, in front of the sample:
// InGap of them over the gap and OnPlates over the plates. Each is a
// Gaussian of sd drawn uniformly from SizeSigmas times the in-focus
// tracer's sd, with a peak contrast drawn uniformly from Contrast. A dark
// spot (absorbing) multiplies the light behind it by 1 - contrast x G; a
// bright one (scattering the lamp's light into the lens) adds contrast x P
// x G, P the photons in the brightest pixel of a mean in-focus tracer
// centred on a pixel, so that it looks like a tracer of that relative
// brightness; G is the spot's profile with peak 1 (integrated over each
// pixel). They belong to the cell: they never move
// in it, and move in the image only with the camera's shake, as the walls
// do. DustSpots lists them; truth.json holds the list. Zero: a clean window.
type Dust struct {
	InGap, OnPlates int
	BrightFraction  float64    // share of bright spots; the rest are dark
	Contrast        [2]float64 // range of the peak contrast (0..1); zero: 0.15 to 0.6
	SizeSigmas      [2]float64 // range of the sd over the in-focus tracer's; zero: 1 to 2
}

// Defaults of Dust.
var (
	defaultDustContrast = [2]float64{0.15, 0.6}
	defaultDustSize     = [2]float64{1, 2}
)

// maxDust bounds the number of dust spots.
const maxDust = 100000

// DustSpot is one spot of dust as truth.json lists it: its centre in the
// image of the unshaken camera (px), its sd (px), its peak contrast, its
// kind ("dark" or "bright") and where it lies ("gap" or "plate").
type DustSpot struct {
	XPx      float64 `json:"x_px"`
	YPx      float64 `json:"y_px"`
	SigmaPx  float64 `json:"sigma_px"`
	Contrast float64 `json:"contrast"`
	Kind     string  `json:"kind"`
	Region   string  `json:"region"`
}

// Dust kinds and regions.
const (
	DustDark    = "dark"
	DustBright  = "bright"
	RegionGap   = "gap"
	RegionPlate = "plate"
)

func (d Dust) ranges() (c, sz [2]float64) {
	c, sz = d.Contrast, d.SizeSigmas
	if c == [2]float64{} {
		c = defaultDustContrast
	}
	if sz == [2]float64{} {
		sz = defaultDustSize
	}
	return c, sz
}

func (d Dust) validate() error {
	c, sz := d.ranges()
	switch {
	case d.InGap < 0 || d.OnPlates < 0 || d.InGap+d.OnPlates > maxDust:
		return fmt.Errorf("dust %d in the gap and %d on the plates: each must be in [0, %d]", d.InGap, d.OnPlates, maxDust)
	case !(d.BrightFraction >= 0 && d.BrightFraction <= 1):
		return fmt.Errorf("dust bright fraction %g, must be in [0, 1]", d.BrightFraction)
	case !(c[0] >= 0 && c[1] >= c[0] && c[1] <= 1):
		return fmt.Errorf("dust contrast range %v, must be increasing within [0, 1]", c)
	case !(sz[0] > 0 && sz[1] >= sz[0]):
		return fmt.Errorf("dust size range %v, must be positive and increasing", sz)
	}
	return nil
}

// DustSpots returns the dust on the window, drawn from the seed: the gap's
// spots first, then the plates'.
func (s *Scenario) DustSpots() []DustSpot {
	d := s.Dust
	if d.InGap+d.OnPlates == 0 {
		return nil
	}
	c, sz := d.ranges()
	rng := s.rng(streamDust, 0)
	g := s.geom()
	cal := s.Calibration()
	w, h := float64(s.WidthPx), float64(s.HeightPx)
	rowAt := func(l [2][2]float64, x float64) float64 {
		return l[0][1] + (l[1][1]-l[0][1])*(x-l[0][0])/(l[1][0]-l[0][0])
	}
	out := make([]DustSpot, 0, d.InGap+d.OnPlates)
	for i := range d.InGap + d.OnPlates {
		sp := DustSpot{SigmaPx: s.SigmaPx() * (sz[0] + rng.Float64()*(sz[1]-sz[0])),
			Contrast: c[0] + rng.Float64()*(c[1]-c[0]), Kind: DustDark, Region: RegionGap}
		if rng.Float64() < d.BrightFraction {
			sp.Kind = DustBright
		}
		x := -0.5 + rng.Float64()*w
		v := rng.Float64()
		if i < d.InGap {
			// A uniform height across the gap at column x.
			hPx := v * g.gapPx
			u := (x - g.cx - (hPx-g.gapPx/2)*g.nx) / g.ex
			sp.XPx, sp.YPx = g.toImage(u, hPx)
		} else {
			// A uniform row of the plates' rows at column x.
			sp.Region = RegionPlate
			a, b := rowAt(cal.StationaryWallPx, x), rowAt(cal.MovingWallPx, x)
			top, bottom := min(a, b), max(a, b)
			above, below := max(top+0.5, 0), max(h-0.5-bottom, 0)
			y := -0.5 + v*(above+below)
			if y >= top {
				y = bottom + (y - top)
			}
			sp.XPx, sp.YPx = x, y
		}
		out = append(out, sp)
	}
	return out
}

// addDust applies the dust, shifted by the camera's shake (jx, jy), to the
// photon image dst.
func (r *Renderer) addDust(dst []float64, jx, jy float64) {
	if len(r.dust) == 0 {
		return
	}
	s := &r.s
	w, h := s.WidthPx, s.HeightPx
	var sx, sy [maxStackBox]float64
	for _, d := range r.dust {
		x, y := d.XPx+jx, d.YPx+jy
		rad := spotBoxSigmas * d.SigmaPx
		x0, x1 := max(int(math.Floor(x-rad)), 0), min(int(math.Ceil(x+rad)), w-1)
		y0, y1 := max(int(math.Floor(y-rad)), 0), min(int(math.Ceil(y+rad)), h-1)
		if x0 > x1 || y0 > y1 {
			continue
		}
		nx, ny := x1-x0+1, y1-y0+1
		wx, wy := sx[:0], sy[:0]
		if nx > maxStackBox || ny > maxStackBox {
			wx, wy = make([]float64, 0, nx), make([]float64, 0, ny)
		}
		wx = pixelWeights(wx, x0, nx, x, d.SigmaPx)
		wy = pixelWeights(wy, y0, ny, y, d.SigmaPx)
		// Peak 1: the pixel integral of a unit-mass Gaussian times 2 pi sd^2.
		peak := 2 * math.Pi * d.SigmaPx * d.SigmaPx * d.Contrast
		for j, fy := range wy {
			row := dst[(y0+j)*w+x0 : (y0+j)*w+x0+nx]
			f := peak * fy
			if d.Kind == DustBright {
				f *= r.dustPeak
				for i, fx := range wx {
					row[i] += f * fx
				}
			} else {
				for i, fx := range wx {
					row[i] *= 1 - f*fx
				}
			}
		}
	}
}
