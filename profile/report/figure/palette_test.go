package figure

import (
	"image/color"
	"math"
	"testing"
)

// srgbToLab is the inverse of Lab.RGBA for the checks: the sRGB transfer
// function and matrix of IEC 61966-2-1:1999 and the CIE 1976 L*a*b* formulas
// of CIE 15:2004.
func srgbToLab(c color.RGBA) Lab {
	lin := func(v uint8) float64 {
		x := float64(v) / 255
		if x <= 0.04045 {
			return x / 12.92
		}
		return math.Pow((x+0.055)/1.055, 2.4)
	}
	r, g, b := lin(c.R), lin(c.G), lin(c.B)
	return labOfLinear(r, g, b)
}

func labOfLinear(r, g, b float64) Lab {
	x := 0.4124*r + 0.3576*g + 0.1805*b
	y := 0.2126*r + 0.7152*g + 0.0722*b
	z := 0.0193*r + 0.1192*g + 0.9505*b
	f := func(t float64) float64 {
		if t > labDelta*labDelta*labDelta {
			return math.Cbrt(t)
		}
		return t/(3*labDelta*labDelta) + 4.0/29.0
	}
	fx, fy, fz := f(x/whiteX), f(y/whiteY), f(z/whiteZ)
	return Lab{L: 116*fy - 16, A: 500 * (fx - fy), B: 200 * (fy - fz)}
}

func TestLabToSRGB(t *testing.T) {
	// CIE L*a*b* (D65) of the sRGB primaries and of white and black, as
	// tabulated by colour calculators (from memory: white 100/0/0, red
	// 53.24/80.09/67.20, green 87.73/-86.18/83.18, blue 32.30/79.19/-107.86).
	cases := []struct {
		lab  Lab
		want color.RGBA
	}{
		{Lab{100, 0, 0}, color.RGBA{255, 255, 255, 255}},
		{Lab{0, 0, 0}, color.RGBA{0, 0, 0, 255}},
		{Lab{53.24, 80.09, 67.20}, color.RGBA{255, 0, 0, 255}},
		{Lab{87.73, -86.18, 83.18}, color.RGBA{0, 255, 0, 255}},
		{Lab{32.30, 79.19, -107.86}, color.RGBA{0, 0, 255, 255}},
	}
	// rgbSlack is the 8-bit difference allowed: the tabulated L*a*b* values
	// are rounded to 0.01.
	const rgbSlack = 1
	for _, c := range cases {
		got := c.lab.RGBA()
		for i, pair := range [][2]uint8{{got.R, c.want.R}, {got.G, c.want.G}, {got.B, c.want.B}} {
			if d := math.Abs(float64(pair[0]) - float64(pair[1])); d > rgbSlack {
				t.Errorf("Lab %v -> %v, channel %d off by %g from %v", c.lab, got, i, d, c.want)
			}
		}
	}
}

// The ramp must be a perceptually uniform, lightness-ordered map inside the
// sRGB gamut (the property asked of scientific colour maps by Nuñez et al.
// 2018), and stay lightness-ordered for red-green dichromats.
func TestRampUniformAndOrdered(t *testing.T) {
	const n = 256
	var prev Lab
	var steps []float64
	for i := range n {
		s := float64(i) / (n - 1)
		c := RampAt(s)
		if !c.InGamut() {
			t.Fatalf("ramp at %g (%v) is outside the sRGB gamut", s, c)
		}
		if i > 0 {
			steps = append(steps, DeltaE76(prev, c))
		}
		prev = c
	}
	lo, hi := math.Inf(1), 0.0
	for _, d := range steps {
		lo, hi = math.Min(lo, d), math.Max(hi, d)
	}
	// uniformity is the allowed relative spread of the step sizes.
	const uniformity = 0.01
	if (hi-lo)/lo > uniformity {
		t.Errorf("ramp steps range from %.4f to %.4f DeltaE76, not uniform", lo, hi)
	}

	// After rounding to 8-bit sRGB, and seen by protanopes and deuteranopes
	// (simulated with the linear-RGB matrices of Viénot, Brettel & Mollon
	// 1999, Color Res. Appl. 24:243; from memory), L* never falls (8-bit
	// rounding can repeat a colour) and rises by most of the ramp's span.
	sims := map[string][3][3]float64{
		"normal":       {{1, 0, 0}, {0, 1, 0}, {0, 0, 1}},
		"protanopia":   {{0.11238, 0.88762, 0}, {0.11238, 0.88762, 0}, {0.00401, -0.00401, 1}},
		"deuteranopia": {{0.29275, 0.70725, 0}, {0.29275, 0.70725, 0}, {-0.02234, 0.02234, 1}},
	}
	pal := NewRamp(0, 1).Palette(n).Colors()
	for name, m := range sims {
		prevL := -1.0
		for i, c := range pal {
			l := simulate(c.(color.RGBA), m).L
			if l < prevL {
				t.Errorf("%s: ramp colour %d has L* %.2f, below the previous %.2f", name, i, l, prevL)
				break
			}
			prevL = l
		}
		// minRiseFraction: a dichromat keeps at least 90% of the lightness
		// span, so the map reads as ordered.
		const minRiseFraction = 0.9
		first, last := simulate(pal[0].(color.RGBA), m).L, simulate(pal[n-1].(color.RGBA), m).L
		if rise := last - first; rise < minRiseFraction*(rampEnd.L-rampStart.L) {
			t.Errorf("%s: ramp lightness rises only %.1f of %.1f", name, rise, rampEnd.L-rampStart.L)
		}
	}
}

func simulate(c color.RGBA, m [3][3]float64) Lab {
	lin := func(v uint8) float64 {
		x := float64(v) / 255
		if x <= 0.04045 {
			return x / 12.92
		}
		return math.Pow((x+0.055)/1.055, 2.4)
	}
	r, g, b := lin(c.R), lin(c.G), lin(c.B)
	return labOfLinear(m[0][0]*r+m[0][1]*g+m[0][2]*b, m[1][0]*r+m[1][1]*g+m[1][2]*b, m[2][0]*r+m[2][1]*g+m[2][2]*b)
}

// The series colours drawn together in one figure stay apart for
// dichromats, by more than minSeriesDeltaE.
func TestSeriesColoursForDichromats(t *testing.T) {
	// minSeriesDeltaE: a colour difference of about 10 DeltaE76 is plainly
	// visible side by side (common practice).
	const minSeriesDeltaE = 10
	sims := map[string][3][3]float64{
		"protanopia":   {{0.11238, 0.88762, 0}, {0.11238, 0.88762, 0}, {0.00401, -0.00401, 1}},
		"deuteranopia": {{0.29275, 0.70725, 0}, {0.29275, 0.70725, 0}, {-0.02234, 0.02234, 1}},
	}
	groups := map[string][]color.RGBA{
		"profile":    {Blue, Vermillion, Black},
		"slip":       {Blue, Vermillion},
		"after stop": {Blue, SkyBlue, BluishGreen, ReddishPurple, Vermillion},
		"walls":      {SkyBlue, Orange},
	}
	for sim, m := range sims {
		for g, cs := range groups {
			for i := range cs {
				for j := i + 1; j < len(cs); j++ {
					if d := DeltaE76(simulate(cs[i], m), simulate(cs[j], m)); d < minSeriesDeltaE {
						t.Errorf("%s, %s figure: colours %v and %v differ by only %.1f DeltaE76", sim, g, cs[i], cs[j], d)
					}
				}
			}
		}
	}
}

func TestRampColorMap(t *testing.T) {
	r := NewRamp(-2, 6)
	if _, err := r.At(7); err == nil {
		t.Errorf("At(7) outside [-2, 6] gave no error")
	}
	if _, err := r.At(math.NaN()); err == nil {
		t.Errorf("At(NaN) gave no error")
	}
	lo, _ := r.At(-2)
	hi, _ := r.At(6)
	if lo != RampAt(0).RGBA() || hi != RampAt(1).RGBA() {
		t.Errorf("ends of the ramp are %v and %v, want %v and %v", lo, hi, RampAt(0).RGBA(), RampAt(1).RGBA())
	}
	r.SetAlpha(0.5)
	c, _ := r.At(6)
	if got := c.(color.RGBA); got.A != 128 || got.R > got.A {
		t.Errorf("half-transparent colour %v is not premultiplied with alpha 128", got)
	}
}
