package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gocv.io/x/gocv"
)

// spotBoxSigmas is the half-width of the box a spot is drawn in, in units of
// its sigma: beyond 4 sigma a Gaussian holds less than 1e-4 of its mass per
// axis, below one grey level for any spot this package draws.
const spotBoxSigmas = 4

// maxStackBox is the largest per-axis box held on the stack in AddSpot.
const maxStackBox = 64

// AddSpot adds to the photon image img (row-major, w x h) a 2-D Gaussian spot
// of standard deviation sigmaPx centred at (xPx, yPx) that holds `photons`
// in total. Each pixel receives the integral of the Gaussian over its area
// (the product of erf differences along x and y), not its value at the pixel
// centre. Pixel centres are at integer coordinates, the origin at the centre
// of the top-left pixel. The spot is drawn only inside a +-4 sigma box and
// clipped at the image border; a negative photon count darkens the image
// (an absorbing tracer on a bright background).
func AddSpot(img []float64, w, h int, xPx, yPx, sigmaPx, photons float64) {
	if !(sigmaPx > 0) || photons == 0 {
		return
	}
	r := spotBoxSigmas * sigmaPx
	x0, x1 := int(math.Floor(xPx-r)), int(math.Ceil(xPx+r))
	y0, y1 := int(math.Floor(yPx-r)), int(math.Ceil(yPx+r))
	x0, y0 = max(x0, 0), max(y0, 0)
	x1, y1 = min(x1, w-1), min(y1, h-1)
	if x0 > x1 || y0 > y1 {
		return
	}
	nx, ny := x1-x0+1, y1-y0+1
	var sx, sy [maxStackBox]float64
	wx, wy := sx[:0], sy[:0]
	if nx > maxStackBox || ny > maxStackBox {
		wx, wy = make([]float64, 0, nx), make([]float64, 0, ny)
	}
	wx = pixelWeights(wx, x0, nx, xPx, sigmaPx)
	wy = pixelWeights(wy, y0, ny, yPx, sigmaPx)
	for j, fy := range wy {
		f := photons * fy
		row := img[(y0+j)*w+x0 : (y0+j)*w+x0+nx]
		for i, fx := range wx {
			row[i] += f * fx
		}
	}
}

// pixelWeights appends to dst the fraction of a 1-D Gaussian (centre c,
// sd sigma) that falls on each of the n pixels from p0 on: the erf difference
// across the pixel's extent [p-0.5, p+0.5].
func pixelWeights(dst []float64, p0, n int, c, sigma float64) []float64 {
	k := 1 / (math.Sqrt2 * sigma)
	prev := math.Erf((float64(p0) - 0.5 - c) * k)
	for i := range n {
		next := math.Erf((float64(p0+i) + 0.5 - c) * k)
		dst = append(dst, 0.5*(next-prev))
		prev = next
	}
	return dst
}

// exactPoissonBelow is the mean photon count under which AddNoise draws
// exact Poisson counts; above it the Gaussian approximation N(lambda, lambda)
// is used, whose skewness 1/sqrt(lambda) is then below 0.19 (common practice:
// the normal approximation to the Poisson is taken as good above ~30).
const exactPoissonBelow = 30

// AddNoise replaces each pixel's expected photon count in img by a noisy
// reading: Poisson shot noise on the count, plus Gaussian read noise of
// standard deviation readNoise (in photon units). Counts below 30 are drawn
// exactly from the Poisson law; above, shot and read noise are drawn together
// as one Gaussian of variance lambda + readNoise^2. Negative expected counts
// are taken as zero. The variance added to a pixel of mean lambda is
// lambda + readNoise^2.
func AddNoise(img []float64, readNoise float64, rng *rand.Rand) {
	r2 := readNoise * readNoise
	for i, lam := range img {
		switch {
		case lam <= 0:
			img[i] = readNoise * rng.NormFloat64()
		case lam < exactPoissonBelow:
			img[i] = poisson(lam, rng) + readNoise*rng.NormFloat64()
		default:
			img[i] = lam + math.Sqrt(lam+r2)*rng.NormFloat64()
		}
	}
}

// poisson draws a Poisson count of mean lam (small) by inversion: one
// uniform, then a sequential search of the cumulative distribution.
func poisson(lam float64, rng *rand.Rand) float64 {
	u := rng.Float64()
	p := math.Exp(-lam)
	f := p
	k := 0
	for u > f && k < 1000 {
		k++
		p *= lam / float64(k)
		f += p
	}
	return float64(k)
}

// ToMat converts the photon image img (row-major, w x h) into a grey camera
// image of the given bit depth (8: CV_8U, 16: CV_16U), each pixel being
// round(gain*photons) clipped to [0, 2^bitDepth-1]; gain is in grey levels
// per photon. The caller closes the Mat.
func ToMat(img []float64, w, h int, bitDepth int, gain float64) (gocv.Mat, error) {
	b, mt, err := toBytes(nil, img, w, h, bitDepth, gain)
	if err != nil {
		return gocv.NewMat(), err
	}
	return gocv.NewMatFromBytes(h, w, mt, b)
}

// toBytes quantizes img into buf (grown as needed) in the native byte order
// that OpenCV expects for CV_8U or CV_16U.
func toBytes(buf []byte, img []float64, w, h int, bitDepth int, gain float64) ([]byte, gocv.MatType, error) {
	if w <= 0 || h <= 0 || len(img) != w*h {
		return nil, 0, fmt.Errorf("synth: image of %d values is not %dx%d", len(img), w, h)
	}
	if !(gain > 0) {
		return nil, 0, fmt.Errorf("synth: gain must be positive, got %g", gain)
	}
	switch bitDepth {
	case 8:
		buf = slices.Grow(buf[:0], w*h)[:w*h]
		for i, v := range img {
			buf[i] = uint8(quantize(gain*v, 255))
		}
		return buf, gocv.MatTypeCV8U, nil
	case 16:
		buf = slices.Grow(buf[:0], 2*w*h)[:2*w*h]
		for i, v := range img {
			q := uint16(quantize(gain*v, 65535))
			buf[2*i], buf[2*i+1] = byte(q), byte(q>>8) // little-endian, as on every gocv platform
		}
		return buf, gocv.MatTypeCV16U, nil
	}
	return nil, 0, fmt.Errorf("synth: bit depth %d is not 8 or 16", bitDepth)
}

// quantize rounds v to the nearest integer in [0, top], halves away from
// zero as math.Round does (for v >= 0 that is floor(v + 0.5)).
func quantize(v, top float64) uint {
	switch {
	case !(v > 0): // also NaN
		return 0
	case v >= top:
		return uint(top)
	}
	return uint(v + 0.5)
}

func clamp(v, lo, hi float64) float64 {
	if v < lo {
		return lo
	}
	if v > hi {
		return hi
	}
	return v
}
