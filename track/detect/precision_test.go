package detect

import (
	"math"
	"math/rand/v2"
	"testing"
)

// tlwPrecision is the localization precision that Thompson, Larson & Webb
// (2002, Biophys. J. 82:2775) derive for a least-squares fit of a Gaussian
// spot: an approximation of what such a fit reaches, not a Cramér–Rao
// bound (an unbiased estimator can do better, and with pixelation and
// background the maximum-likelihood one does). Along one axis,
// <dx^2> = (s^2 + a^2/12)/N + 8 pi s^4 b^2 / (a^2 N^2), for a spot of sd s
// holding N photons, pixels of side a, and a background noise of sd b
// photons per pixel (their eq. 17; the equation number from memory). It
// returns the square root, in px (a = 1). The tests use it as the outside
// yardstick of the project's estimators, not as a limit they cannot beat.
func tlwPrecision(sPx, photons, bPhotons float64) float64 {
	s2 := sPx * sPx
	v := (s2+1.0/12)/photons + 8*math.Pi*s2*s2*bPhotons*bPhotons/(photons*photons)
	return math.Sqrt(v)
}

// TestLocalizationPrecision compares the RMS localization error of both
// estimators with the Thompson, Larson & Webb (2002) least-squares precision
// (tlwPrecision) for the same spot
// width, photon count and background, at several SNRs, with a background
// image and without (the box-mean band-pass).
func TestLocalizationPrecision(t *testing.T) {
	const (
		sigmaPx = 1.25 // a 5 px tracer
		frames  = 40
		// ratioLimit is the acceptance of issue 3: within 1.3x of the bound
		// at SNR 10 and above.
		ratioLimit = 1.3
		// highSNRLimitPx is the acceptance at high SNR.
		highSNRLimitPx = 0.05
	)
	for _, regime := range []struct {
		name string
		sc   scene
		snrs []float64
	}{
		// Background noise dominates: the second term of the bound.
		{"background", scene{w: 168, h: 168, bgPhotons: 100, readNoise: 3, bitDepth: 16, gain: 16}, []float64{5, 10, 20, 40, 100}},
		// The spot's own shot noise dominates: the first term.
		{"shot", scene{w: 168, h: 168, bgPhotons: 4, readNoise: 1, bitDepth: 16, gain: 16}, []float64{30, 100, 300}},
	} {
		sc := regime.sc
		bg := sc.background(t)
		b := math.Sqrt(sc.bgPhotons + sc.readNoise*sc.readNoise)
		t.Logf("%s noise: spot sd %.2f px, background %.0f photons/px, read noise %.0f: b = %.2f photons/px; TLW = Thompson, Larson & Webb (2002)",
			regime.name, sigmaPx, sc.bgPhotons, sc.readNoise, b)
		t.Logf("%-16s %-10s %5s %8s %10s %10s %6s %6s", "estimator", "background", "SNR", "photons", "RMS px", "TLW px", "ratio", "found")
		for _, c := range []struct {
			est    Estimator
			bgMode string
		}{{Centroid, "image"}, {RadialSymmetry, "image"}, {Centroid, "none"}, {RadialSymmetry, "none"}} {
			est := c.est
			d, err := NewDetector(Options{DiameterPx: 4 * sigmaPx, Polarity: PolarityBright, Estimator: est, MinSNR: 3})
			if err != nil {
				t.Fatal(err)
			}
			if c.bgMode == "image" {
				if err := d.SetBackground(bg); err != nil {
					t.Fatal(err)
				}
			}
			for _, snr := range regime.snrs {
				rng := rand.New(rand.NewPCG(1, uint64(snr)))
				photons := sc.photonsFor(snr, sigmaPx)
				var se float64
				var n, total int
				for f := 0; f < frames; f++ {
					spots := gridSpots(sc.w, sc.h, 20, 14, sigmaPx, photons, rng)
					img := sc.render(t, spots, rng)
					dets, err := d.Frame(img, f, nil)
					img.Close()
					if err != nil {
						t.Fatal(err)
					}
					for i, j := range match(spots, dets, 2) {
						total++
						if j < 0 {
							continue
						}
						dx, dy := dets[j].XPx-spots[i].x, dets[j].YPx-spots[i].y
						se += dx*dx + dy*dy
						n += 2
					}
				}
				rms := math.Sqrt(se / float64(n))
				bound := tlwPrecision(sigmaPx, photons, b)
				t.Logf("%-16s %-10s %5.0f %8.0f %10.4f %10.4f %6.3f %6.3f", est, c.bgMode, snr, photons, rms, bound, rms/bound, float64(n/2)/float64(total))
				if snr >= 10 && rms > ratioLimit*bound {
					t.Errorf("%s, %s noise, background %s, SNR %g: RMS %.4f px is %.2fx the TLW precision %.4f px, want <= %g", est, regime.name, c.bgMode, snr, rms, rms/bound, bound, ratioLimit)
				}
				if snr >= 100 && rms > highSNRLimitPx {
					t.Errorf("%s, %s noise, background %s, SNR %g: RMS %.4f px, want <= %g", est, regime.name, c.bgMode, snr, rms, highSNRLimitPx)
				}
			}
			d.Close()
		}
		bg.Close()
	}
}
