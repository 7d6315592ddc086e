package synth

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gocv.io/x/gocv"
	"gonum.org/v1/gonum/stat/distuv"
)

// centroidTolPx is the bias allowed in the centroid of a noiseless spot
// (issue 2: the renderer must add no bias above 0.01 px).
const centroidTolPx = 0.01

// truncatedMass bounds the fraction of a spot lost outside its +-4 sigma box:
// 2 x (1 - Phi(4)) per axis = 6.3e-5 (Abramowitz & Stegun 1964, table 26.1),
// so at most 1.3e-4 for the two axes together.
const truncatedMass = 1.3e-4

func centroid(img []float64, w int) (x, y, sum float64) {
	for i, v := range img {
		x += v * float64(i%w)
		y += v * float64(i/w)
		sum += v
	}
	return x / sum, y / sum, sum
}

func TestAddSpotCentroid(t *testing.T) {
	const w, h = 40, 32
	img := make([]float64, w*h)
	worst := 0.0
	for _, sigma := range []float64{0.7, 1.0, 1.25, 2.0, 3.1} {
		for _, pos := range [][2]float64{{20, 16}, {20.5, 16.5}, {19.13, 15.77}, {17.31, 14.02}, {21.99, 17.49}, {18.25, 16.75}} {
			clear(img)
			AddSpot(img, w, h, pos[0], pos[1], sigma, 1000)
			x, y, sum := centroid(img, w)
			d := math.Hypot(x-pos[0], y-pos[1])
			worst = max(worst, d)
			if d > centroidTolPx {
				t.Errorf("sigma %g at (%g, %g): centroid (%.5f, %.5f) is %.4f px off, more than %g",
					sigma, pos[0], pos[1], x, y, d, centroidTolPx)
			}
			if math.Abs(sum-1000) > 1000*truncatedMass {
				t.Errorf("sigma %g at %v: spot holds %.4f photons, want 1000 within %g", sigma, pos, sum, 1000*truncatedMass)
			}
		}
	}
	t.Logf("largest centroid error of a noiseless spot: %.2g px (bound %g)", worst, centroidTolPx)
}

// TestAddSpotPixelIntegrated checks that a pixel holds the integral of the
// Gaussian over its area, not the value at its centre: for a spot of sigma
// 0.5 px on a pixel centre, the pixel spans +-1 sigma on both axes and holds
// 0.682689^2 = 0.466065 of the photons (the one-sigma probability of the
// normal law, Abramowitz & Stegun 1964, table 26.1); sampling at the centre
// would give 1/(2 pi sigma^2) = 0.6366.
func TestAddSpotPixelIntegrated(t *testing.T) {
	const w, h = 9, 9
	img := make([]float64, w*h)
	AddSpot(img, w, h, 4, 4, 0.5, 1)
	if got, want := img[4*w+4], 0.682689*0.682689; math.Abs(got-want) > 2e-6 {
		t.Errorf("centre pixel holds %.6f of the spot, want %.6f", got, want)
	}
}

func TestAddSpotClipped(t *testing.T) {
	const w, h = 20, 10
	for _, pos := range [][2]float64{{-3, 5}, {0, 0}, {19.6, 9.4}, {25, 5}, {10, -30}} {
		img := make([]float64, w*h)
		AddSpot(img, w, h, pos[0], pos[1], 1.2, 100) // must not panic
		for i, v := range img {
			if v < 0 || v > 100 {
				t.Fatalf("spot at %v: pixel %d = %g", pos, i, v)
			}
		}
	}
}

// noiseSigmas is the width, in standard errors, of the acceptance band of
// the noise checks: a false failure then has a probability below 1e-6.
const noiseSigmas = 5

// TestAddNoiseVariance checks the mean and the variance of the noisy image
// against lambda and lambda + read^2. The standard error of the sample
// variance of n values is sqrt((mu4 - sigma^4)/n) (Kendall & Stuart, The
// Advanced Theory of Statistics, vol. 1, from memory); for Poisson plus
// Gaussian noise mu4 = 3 sigma^4 + lambda (the Poisson's fourth cumulant is
// lambda), so the error is sqrt((2 sigma^4 + lambda)/n).
func TestAddNoiseVariance(t *testing.T) {
	const n = 200000
	img := make([]float64, n)
	for _, c := range []struct{ lam, read float64 }{
		{0.5, 0}, {5, 0}, {5, 2}, {20, 3}, {29.9, 3}, {30, 3}, {100, 0}, {100, 5}, {1000, 10},
	} {
		t.Run(fmt.Sprintf("lambda%g_read%g", c.lam, c.read), func(t *testing.T) {
			for i := range img {
				img[i] = c.lam
			}
			AddNoise(img, c.read, rand.New(rand.NewPCG(7, uint64(c.lam*10+c.read))))
			var m, v float64
			for _, x := range img {
				m += x
			}
			m /= n
			for _, x := range img {
				v += (x - m) * (x - m)
			}
			v /= n - 1
			want := c.lam + c.read*c.read
			if tol := noiseSigmas * math.Sqrt(want/n); math.Abs(m-c.lam) > tol {
				t.Errorf("mean %.4f, want %g within %.4f", m, c.lam, tol)
			}
			tol := noiseSigmas * math.Sqrt((2*want*want+c.lam)/n)
			if math.Abs(v-want) > tol {
				t.Errorf("variance %.4f, want %g (shot %g + read %g^2) within %.4f", v, want, c.lam, c.read, tol)
			}
		})
	}
}

// TestAddNoisePoissonLaw compares the histogram of exact Poisson counts
// (no read noise, lambda below the Gaussian switch) with the Poisson law of
// gonum's distuv (a general-purpose reference library) by a chi-square test
// at significance 1e-4.
func TestAddNoisePoissonLaw(t *testing.T) {
	const n, lam = 100000, 4.5
	img := make([]float64, n)
	for i := range img {
		img[i] = lam
	}
	AddNoise(img, 0, rand.New(rand.NewPCG(3, 4)))
	const kmax = 12 // counts above pooled into one class
	var obs [kmax + 1]float64
	for _, x := range img {
		if x != math.Floor(x) || x < 0 {
			t.Fatalf("count %g is not a non-negative integer", x)
		}
		obs[min(int(x), kmax)]++
	}
	p := distuv.Poisson{Lambda: lam}
	chi2, rest := 0.0, 1.0
	for k := 0; k <= kmax; k++ {
		pk := p.Prob(float64(k))
		if k == kmax {
			pk = rest
		}
		rest -= pk
		e := n * pk
		chi2 += (obs[k] - e) * (obs[k] - e) / e
	}
	crit := distuv.ChiSquared{K: kmax}.Quantile(1 - 1e-4)
	if chi2 > crit {
		t.Errorf("chi-square %.1f of Poisson(%g) counts exceeds %.1f (%d degrees of freedom, p = 1e-4)", chi2, lam, crit, kmax)
	}
}

func TestToMat(t *testing.T) {
	img := []float64{-5, 0, 0.4, 0.6, 100.5, 300, 1e6, 2.5}
	for _, c := range []struct {
		bits int
		gain float64
		want []int
	}{
		{8, 1, []int{0, 0, 0, 1, 101, 255, 255, 3}}, // math.Round: half away from zero
		{8, 0.5, []int{0, 0, 0, 0, 50, 150, 255, 1}},
		{16, 100, []int{0, 0, 40, 60, 10050, 30000, 65535, 250}},
	} {
		m, err := ToMat(img, 4, 2, c.bits, c.gain)
		if err != nil {
			t.Fatal(err)
		}
		var got []int
		if c.bits == 8 {
			b, _ := m.DataPtrUint8()
			for _, v := range b {
				got = append(got, int(v))
			}
		} else {
			b, _ := m.DataPtrUint16()
			for _, v := range b {
				got = append(got, int(v))
			}
		}
		if m.Rows() != 2 || m.Cols() != 4 || (c.bits == 16) != (m.Type() == gocv.MatTypeCV16U) {
			t.Errorf("%d bit: Mat %dx%d of type %v", c.bits, m.Cols(), m.Rows(), m.Type())
		}
		m.Close()
		if fmt.Sprint(got) != fmt.Sprint(c.want) {
			t.Errorf("%d bit, gain %g: got %v, want %v", c.bits, c.gain, got, c.want)
		}
	}
	for _, bad := range []struct {
		bits int
		gain float64
		w, h int
	}{{12, 1, 4, 2}, {8, 0, 4, 2}, {8, 1, 3, 2}} {
		m, err := ToMat(img, bad.w, bad.h, bad.bits, bad.gain)
		m.Close()
		if err == nil {
			t.Errorf("ToMat(%d bit, gain %g, %dx%d): no error", bad.bits, bad.gain, bad.w, bad.h)
		}
	}
}
