package detect

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestNoPixelLocking checks that the fractional parts of the estimated
// positions of spots placed uniformly at random are uniform, by Pearson's
// chi-square test, for both estimators, and that a plain 3x3 centroid
// (which is known to lock to pixel centres) fails the same test, so that the
// test can fail. The chi-square survival function is gonum's.
func TestNoPixelLocking(t *testing.T) {
	const (
		sigmaPx = 1.25
		snr     = 30
		bins    = 10
		frames  = 60
		// pass and fail are the p-value limits: a flat histogram passes with
		// p > 1e-3 (a 0.1% false alarm); a locking estimator must be
		// rejected at p < 1e-6.
		pass = 1e-3
		fail = 1e-6
	)
	sc := scene{w: 200, h: 200, bgPhotons: 100, readNoise: 3, bitDepth: 16, gain: 16}
	bg := sc.background(t)
	defer bg.Close()
	type hist [bins]int
	hists := map[string]*hist{"centroid": {}, "radial-symmetry": {}, "plain 3x3 centroid": {}}
	add := func(h *hist, v float64) {
		f := v - math.Floor(v)
		h[min(bins-1, int(f*bins))]++
	}
	dets := map[Estimator]*Detector{}
	for _, e := range []Estimator{Centroid, RadialSymmetry} {
		d, err := NewDetector(Options{DiameterPx: 4 * sigmaPx, Polarity: PolarityBright, Estimator: e})
		if err != nil {
			t.Fatal(err)
		}
		if err := d.SetBackground(bg); err != nil {
			t.Fatal(err)
		}
		defer d.Close()
		dets[e] = d
	}
	rng := rand.New(rand.NewPCG(5, 5))
	for f := 0; f < frames; f++ {
		spots := gridSpots(sc.w, sc.h, 16, 12, sigmaPx, sc.photonsFor(snr, sigmaPx), rng)
		img := sc.render(t, spots, rng)
		for e, d := range dets {
			ds, err := d.Frame(img, f, nil)
			if err != nil {
				t.Fatal(err)
			}
			for _, j := range match(spots, ds, 2) {
				if j >= 0 {
					add(hists[e.String()], ds[j].XPx)
					add(hists[e.String()], ds[j].YPx)
				}
			}
		}
		// The plain centroid: 3x3 pixels around the brightest pixel of each
		// spot, background subtracted.
		px, _ := img.DataPtrUint16()
		for _, s := range spots {
			rx, ry := int(math.Round(s.x)), int(math.Round(s.y))
			bx, by, best := rx, ry, -1.0
			for dy := -1; dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					if v := float64(px[(ry+dy)*sc.w+rx+dx]); v > best {
						best, bx, by = v, rx+dx, ry+dy
					}
				}
			}
			var sw, sx, sy float64
			for dy := -1; dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					v := float64(px[(by+dy)*sc.w+bx+dx]) - sc.gain*sc.bgPhotons
					sw += v
					sx += v * float64(dx)
					sy += v * float64(dy)
				}
			}
			add(hists["plain 3x3 centroid"], float64(bx)+sx/sw)
			add(hists["plain 3x3 centroid"], float64(by)+sy/sw)
		}
		img.Close()
	}
	chi2 := distuv.ChiSquared{K: bins - 1}
	for _, name := range []string{"centroid", "radial-symmetry", "plain 3x3 centroid"} {
		h := hists[name]
		n := 0
		for _, c := range h {
			n += c
		}
		exp := float64(n) / bins
		var x2 float64
		for _, c := range h {
			x2 += (float64(c) - exp) * (float64(c) - exp) / exp
		}
		p := chi2.Survival(x2)
		t.Logf("%-20s n=%d chi2=%8.1f (%d dof) p=%.3g histogram %v", name, n, x2, bins-1, p, *h)
		if name == "plain 3x3 centroid" {
			if p > fail {
				t.Errorf("the plain 3x3 centroid passes the flatness test (p = %.3g): the test has no teeth", p)
			}
		} else if p < pass {
			t.Errorf("%s locks to pixels: chi2 = %.1f, p = %.3g < %g", name, x2, p, pass)
		}
	}
}
