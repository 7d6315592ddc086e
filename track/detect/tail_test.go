package detect

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestAmpScaleTail checks the scale amplitudeNoise takes from the
// amplitudes at empty positions (ampScale) on drawn samples of known
// distributions. For a Gaussian of sd s it is s, and the frame is not taken
// for one of codec blotches. For a Laplace distribution of scale b, whose
// absolute value is exponential, P(|a| > t) = exp(-t/b) (Johnson, Kotz &
// Balakrishnan 1995, Continuous Univariate Distributions vol. 2, ch. 24;
// from memory), the threshold MinSNR times the scale is the t at which
// that equals the two-sided Gaussian false-alarm rate erfc(MinSNR/sqrt 2).
func TestAmpScaleTail(t *testing.T) {
	const (
		n = 20000 // samples: quantiles to about 1 %
		// scaleTol is the relative error allowed: several sampling sds
		// of the 98 % point of n samples (about 1 %).
		scaleTol = 0.04
	)
	d, err := NewDetector(Options{DiameterPx: 5})
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	minSNR := d.Options().MinSNR
	rng := rand.New(rand.NewPCG(3, 4))
	for _, c := range []struct {
		name    string
		draw    func() float64
		want    float64
		blotchy bool
	}{
		{"gaussian sd 2", func() float64 { return 2 * rng.NormFloat64() }, 2, false},
		{"laplace b 3", func() float64 { return 3 * rng.ExpFloat64() * float64(1-2*rng.IntN(2)) }, 3 * math.Log(1/math.Erfc(minSNR/math.Sqrt2)) / minSNR, true},
	} {
		t.Run(c.name, func(t *testing.T) {
			v := make([]float32, n)
			for i := range v {
				v[i] = float32(c.draw())
			}
			sd, ratio := d.ampScale(v)
			if got := ratio > blotchyTailRatio; got != c.blotchy {
				t.Errorf("tail over core %.3f: blotchy %v, want %v", ratio, got, c.blotchy)
			}
			if math.Abs(sd-c.want) > scaleTol*c.want {
				t.Errorf("scale %.4f, want %.4f within %g", sd, c.want, scaleTol)
			}
			t.Logf("scale %.4f (want %.4f), tail over core %.3f", sd, c.want, ratio)
		})
	}
}
