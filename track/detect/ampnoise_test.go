package detect

import (
	"math"
	"math/rand/v2"
	"testing"

	"gocv.io/x/gocv"
)

// TestAmplitudeNoise checks the scatter amplitudeNoise measures against
// the law of propagation of uncertainty for a linear function of
// independent inputs (JCGM 100:2008, the GUM, eq. 10 with all sensitivity
// coefficients the weights): on white noise of sd s the amplitude's sd is
// s times the root sum of squares of its weights, so amplitudeNoise returns
// s; on white noise smoothed by a 3x3 box mean, the same law applied to the
// underlying independent noise through the box and the weights gives the
// value, which is larger than what the noise of 2x2 sums (Detector.noise)
// makes of it.
func TestAmplitudeNoise(t *testing.T) {
	const (
		w, h   = 256, 256
		sdGrey = 40.0  // white noise, grey levels, on 16-bit pixels
		level  = 20000 // background, grey levels
		// tol is three times the relative sd of a MAD of about a thousand
		// samples (1.36/sqrt(n), see ampNoiseSamples).
		tol = 0.13
	)
	d, err := NewDetector(Options{DiameterPx: 5, Polarity: PolarityBright})
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	bgM := gocv.NewMatWithSize(h, w, gocv.MatTypeCV32F)
	defer bgM.Close()
	bgF, _ := bgM.DataPtrFloat32()
	for i := range bgF {
		bgF[i] = level
	}
	if err := d.SetBackground(bgM); err != nil {
		t.Fatal(err)
	}
	wr := d.wr
	n := 2*wr + 1
	// The weights of the smoothed case through the box: each independent
	// input e(x, y) reaches the amplitude through the 3x3 pixels it is
	// averaged into.
	conv := make([]float64, (n+2)*(n+2))
	for j := range n {
		for i := range n {
			for dj := range 3 {
				for di := range 3 {
					conv[(j+dj)*(n+2)+i+di] += d.ampW[j*n+i] / 9
				}
			}
		}
	}
	var ss float64
	for _, c := range conv {
		ss += c * c
	}
	for _, tc := range []struct {
		name   string
		smooth bool
		want   float64
	}{
		{"white", false, sdGrey},
		{"box3", true, sdGrey * math.Sqrt(ss) / d.ampWNorm},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(3, 3))
			e := make([]float64, w*h)
			for i := range e {
				e[i] = rng.NormFloat64() * sdGrey
			}
			if tc.smooth {
				s := make([]float64, w*h)
				for y := 1; y < h-1; y++ {
					for x := 1; x < w-1; x++ {
						var sum float64
						for dy := -1; dy <= 1; dy++ {
							for dx := -1; dx <= 1; dx++ {
								sum += e[(y+dy)*w+x+dx]
							}
						}
						s[y*w+x] = sum / 9
					}
				}
				e = s
			}
			img := gocv.NewMatWithSize(h, w, gocv.MatTypeCV16U)
			defer img.Close()
			px, _ := img.DataPtrUint16()
			for i := range px {
				px[i] = uint16(math.Round(level + e[i]))
			}
			if _, err := d.Frame(img, 0, nil); err != nil {
				t.Fatal(err)
			}
			p := pixels{u16: px, refF: d.bg, w: w, h: h, sign: 1}
			perPixel := d.noise(&p, true)
			got := d.amplitudeNoise(&p)
			t.Logf("per-pixel noise %.2f, amplitude noise %.2f, propagated %.2f grey levels", perPixel, got, tc.want)
			if math.Abs(got/tc.want-1) > tol {
				t.Errorf("amplitude noise %.2f grey levels, want %.2f within %g", got, tc.want, tol)
			}
			if tc.smooth && !(got > (1+tol)*perPixel) {
				t.Errorf("amplitude noise %.2f grey levels of smoothed noise, want above the 2x2 sums' %.2f by more than %g", got, perPixel, tol)
			}
		})
	}
}
