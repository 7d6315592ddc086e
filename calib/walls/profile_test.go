package walls

import (
	"math"
	"math/rand/v2"
	"testing"
	"unsafe"

	"gocv.io/x/gocv"
)

// TestMeasureProfile measures the profile of a tilted wall drawn from its
// analytic form: a plate edge, a step blurred by a Gaussian line spread
// (an erf in the distance from the line), plus a Gaussian reflection line
// on it, with vignetting along x, noise and bright specks on 3 % of the
// pixels (tracers left in a median image). The profile must follow
// the analytic level within a grey level everywhere within its reach.
func TestMeasureProfile(t *testing.T) {
	const (
		w, h          = 320, 120
		y0, slope     = 58.3, 0.021 // 1.2 degrees
		plate, gap    = 150.0, 40.0
		edgeSigmaPx   = 0.6
		lineSigmaPx   = 0.8
		linePeak      = 80.0
		vignetting    = 0.1 // relative fall-off at the ends of the wall
		noiseGrey     = 1.0
		halfWidthPx   = 16.0
		speckFraction = 0.03 // 400 tracers of 20 px in 640x480 px
		// tolGrey and tolPx bound the error of the measured level: tolGrey
		// where the profile is flat (noise of 1 grey level over a few
		// dozen pixels per bin, and the vignetting across the few columns
		// of a segment that a tilted wall puts at one distance), plus tolPx times the profile's slope where
		// it is steep, the level of a line placed that far off: the
		// linear interpolation of a profile sampled every quarter pixel,
		// and of the quadratic vignetting between segments and over the
		// half segments at the ends (a twentieth of a pixel, half the
		// localization error of a tracer at SNR 10).
		tolGrey = 2.0
		tolPx   = 0.05
		// curvPx2 times the profile's curvature bounds the error at an
		// extremum (the top of the reflection line): the linear
		// interpolation between samples a quarter pixel apart, h^2/8 of the
		// curvature, and as much again for the median of a bin around the
		// extremum.
		curvPx2 = 0.25 * 0.25 / 4
		// Beyond featurePx of the line (3 sds of the reflection line, 4 of
		// the edge's line spread), on the flat plate and in the gap, the
		// level may be off by flatFraction of itself: the vignetting across
		// a segment, which the detector's box mean removes with the rest of
		// the smooth background.
		featurePx    = 2.5
		flatFraction = 0.04
	)
	line := Line{Y0: y0, Slope: slope}
	truth := func(x, y float64) float64 {
		d := (y - line.YAt(x)) / math.Hypot(1, slope) // positive into the gap (down)
		// The plate above the line: plate level where d << 0.
		v := gap + (plate-gap)*0.5*math.Erfc(d/(math.Sqrt2*edgeSigmaPx))
		v += linePeak * math.Exp(-d*d/(2*lineSigmaPx*lineSigmaPx))
		u := (x - w/2) / (w / 2)
		return v * (1 - vignetting*u*u)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	pix := make([]float32, w*h)
	for y := range h {
		for x := range w {
			v := truth(float64(x), float64(y)) + noiseGrey*rng.NormFloat64()
			if rng.Float64() < speckFraction {
				v += 100
			}
			pix[y*w+x] = float32(v)
		}
	}
	img, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV32F, float32Bytes(pix))
	if err != nil {
		t.Fatal(err)
	}
	defer img.Close()
	p, err := MeasureProfile(img, line, halfWidthPx)
	if err != nil {
		t.Fatal(err)
	}
	worst := 0.0
	for x := 8.0; x < w-8; x += 7.3 {
		for d := -halfWidthPx + 1; d < halfWidthPx-1; d += 0.37 {
			y := line.YAt(x) + d*math.Hypot(1, slope)
			const hPx = 0.01
			slope := math.Abs(truth(x, y+hPx)-truth(x, y-hPx)) / (2 * hPx)
			curv := math.Abs(truth(x, y+hPx)-2*truth(x, y)+truth(x, y-hPx)) / (hPx * hPx)
			tol := tolGrey + tolPx*slope + curvPx2*curv
			if math.Abs(d) > featurePx {
				tol = math.Max(tol, flatFraction*truth(x, y))
			}
			if e := math.Abs(p.At(x, y)-truth(x, y)) / tol; e > worst {
				worst = e
			}
		}
	}
	t.Logf("largest error %.3f of the tolerance", worst)
	if worst > 1 {
		t.Errorf("profile off by up to %.3f times %g grey levels + %g px times its slope", worst, tolGrey, tolPx)
	}
	// Beyond its reach the profile holds its end values.
	if a, b := p.At(100, line.YAt(100)-40), p.At(100, line.YAt(100)-halfWidthPx); a != b {
		t.Errorf("level beyond the reach %g, at its end %g", a, b)
	}
	if _, err := MeasureProfile(img, Line{Y0: 1000}, halfWidthPx); err == nil {
		t.Error("a line outside the image: no error")
	}
}

func float32Bytes(v []float32) []byte {
	return unsafe.Slice((*byte)(unsafe.Pointer(&v[0])), 4*len(v))
}
