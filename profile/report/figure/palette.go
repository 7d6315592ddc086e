package figure

import (
	"errors"
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/palette"
)

// Line colours of Okabe & Ito (2008), "Color Universal Design (CUD): how to
// make figures and presentations that are friendly to colorblind people",
// https://jfly.uni-koeln.de/color/ — eight colours that stay distinct for
// protanopes, deuteranopes and tritanopes. sRGB, 8 bit per channel.
var (
	Black         = color.RGBA{0, 0, 0, 255}
	Orange        = color.RGBA{230, 159, 0, 255}
	SkyBlue       = color.RGBA{86, 180, 233, 255}
	BluishGreen   = color.RGBA{0, 158, 115, 255}
	Yellow        = color.RGBA{240, 228, 66, 255}
	Blue          = color.RGBA{0, 114, 178, 255}
	Vermillion    = color.RGBA{213, 94, 0, 255}
	ReddishPurple = color.RGBA{204, 121, 167, 255}
)

// Series is the order in which the figures give colours to data series:
// the Okabe & Ito colours, yellow last because it is faint on white.
var Series = []color.RGBA{Blue, Vermillion, BluishGreen, ReddishPurple, Orange, SkyBlue, Black, Yellow}

// Lab is a colour in CIE 1976 L*a*b* (D65 white), the colour space in which
// equal distances are meant to look equally different (CIE 15:2004).
type Lab struct{ L, A, B float64 }

// D65 reference white in CIE XYZ, Y = 1 (CIE 15:2004, table T.3; IEC
// 61966-2-1:1999 uses the same white for sRGB).
const (
	whiteX = 0.95047
	whiteY = 1.0
	whiteZ = 1.08883
)

// labDelta is the break point 6/29 of the CIE L*a*b* transfer function
// (CIE 15:2004, eq. 8.1).
const labDelta = 6.0 / 29.0

// linearRGB returns the linear sRGB components of c, which lie outside
// [0, 1] when c is outside the sRGB gamut. CIE L*a*b* to XYZ per CIE
// 15:2004; XYZ to linear sRGB with the matrix of IEC 61966-2-1:1999.
func (c Lab) linearRGB() (r, g, b float64) {
	finv := func(t float64) float64 {
		if t > labDelta {
			return t * t * t
		}
		return 3 * labDelta * labDelta * (t - 4.0/29.0)
	}
	fy := (c.L + 16) / 116
	x := whiteX * finv(fy+c.A/500)
	y := whiteY * finv(fy)
	z := whiteZ * finv(fy-c.B/200)
	r = 3.2406*x - 1.5372*y - 0.4986*z
	g = -0.9689*x + 1.8758*y + 0.0415*z
	b = 0.0557*x - 0.2040*y + 1.0570*z
	return r, g, b
}

// srgbGamma is the sRGB transfer function of IEC 61966-2-1:1999.
func srgbGamma(v float64) float64 {
	if v <= 0.0031308 {
		return 12.92 * v
	}
	return 1.055*math.Pow(v, 1/2.4) - 0.055
}

// gamutSlack is how far (in linear sRGB, 0..1) a ramp colour may fall outside
// the gamut before it counts as clipped: a quarter of one 8-bit step near
// black, invisible after rounding.
const gamutSlack = 0.25 / 255 / 12.92

// InGamut reports whether c is displayable in sRGB without clipping.
func (c Lab) InGamut() bool {
	r, g, b := c.linearRGB()
	for _, v := range []float64{r, g, b} {
		if v < -gamutSlack || v > 1+gamutSlack {
			return false
		}
	}
	return true
}

// RGBA returns c in 8-bit sRGB, clipped to the gamut.
func (c Lab) RGBA() color.RGBA {
	r, g, b := c.linearRGB()
	to8 := func(v float64) uint8 {
		v = srgbGamma(math.Min(1, math.Max(0, v)))
		return uint8(math.Round(255 * v))
	}
	return color.RGBA{to8(r), to8(g), to8(b), 255}
}

// DeltaE76 is the CIE 1976 colour difference, the Euclidean distance in
// L*a*b* (CIE 15:2004, eq. 8.7).
func DeltaE76(p, q Lab) float64 {
	return math.Sqrt((p.L-q.L)*(p.L-q.L) + (p.A-q.A)*(p.A-q.A) + (p.B-q.B)*(p.B-q.B))
}

// The sequential ramp of the heat maps runs on a straight line in CIE L*a*b*
// from a dark blue to a light yellow, so equal steps in value are equal
// colour differences (DeltaE76) and the lightness L* rises steadily. The
// blue-yellow axis is the one that dichromats keep: Nuñez, Anderton &
// Renslow (2018), "Optimizing colormaps with consideration for color vision
// deficiency to enable accurate interpretation of scientific data", PLoS ONE
// 13(7): e0199239, built their cividis map on it. Endpoints chosen here
// inside the sRGB gamut.
var (
	rampStart = Lab{L: 18, A: 8, B: -32}
	rampEnd   = Lab{L: 90, A: -6, B: 66}
)

// RampAt returns the heat-map colour at s in [0, 1] (clamped) in L*a*b*.
func RampAt(s float64) Lab {
	s = math.Min(1, math.Max(0, s))
	return Lab{
		L: rampStart.L + s*(rampEnd.L-rampStart.L),
		A: rampStart.A + s*(rampEnd.A-rampStart.A),
		B: rampStart.B + s*(rampEnd.B-rampStart.B),
	}
}

// Ramp is the heat maps' colour map from Min to Max (a palette.ColorMap).
type Ramp struct {
	min, max, alpha float64
}

// NewRamp returns the ramp over [minV, maxV], opaque.
func NewRamp(minV, maxV float64) *Ramp { return &Ramp{min: minV, max: maxV, alpha: 1} }

var _ palette.ColorMap = (*Ramp)(nil)

// errOutside is returned by At for values outside [Min, Max] (the
// palette.ColorMap convention).
var errOutside = errors.New("figure: value outside the colour range")

// At implements palette.ColorMap.
func (r *Ramp) At(v float64) (color.Color, error) {
	if math.IsNaN(v) {
		return nil, fmt.Errorf("figure: colour of NaN")
	}
	if v < r.min || v > r.max {
		return nil, errOutside
	}
	s := 0.0
	if r.max > r.min {
		s = (v - r.min) / (r.max - r.min)
	}
	c := RampAt(s).RGBA()
	c.A = uint8(math.Round(255 * r.alpha))
	// color.RGBA is alpha-premultiplied.
	c.R = uint8(math.Round(float64(c.R) * r.alpha))
	c.G = uint8(math.Round(float64(c.G) * r.alpha))
	c.B = uint8(math.Round(float64(c.B) * r.alpha))
	return c, nil
}

// Max implements palette.ColorMap.
func (r *Ramp) Max() float64 { return r.max }

// SetMax implements palette.ColorMap.
func (r *Ramp) SetMax(v float64) { r.max = v }

// Min implements palette.ColorMap.
func (r *Ramp) Min() float64 { return r.min }

// SetMin implements palette.ColorMap.
func (r *Ramp) SetMin(v float64) { r.min = v }

// Alpha implements palette.ColorMap.
func (r *Ramp) Alpha() float64 { return r.alpha }

// SetAlpha implements palette.ColorMap; it panics outside [0, 1] as the
// interface asks.
func (r *Ramp) SetAlpha(a float64) {
	if !(a >= 0 && a <= 1) {
		panic(fmt.Sprintf("figure: alpha %g outside [0, 1]", a))
	}
	r.alpha = a
}

// Palette implements palette.ColorMap: n colours evenly spaced on the ramp.
func (r *Ramp) Palette(n int) palette.Palette {
	cs := make([]color.Color, n)
	for i := range cs {
		s := 0.0
		if n > 1 {
			s = float64(i) / float64(n-1)
		}
		cs[i] = RampAt(s).RGBA()
	}
	return rampPalette(cs)
}

type rampPalette []color.Color

func (p rampPalette) Colors() []color.Color { return p }
