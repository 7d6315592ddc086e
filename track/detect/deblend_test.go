package detect

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestDeblend renders pairs of overlapping tracers, 4.5 to 7 px apart and
// of brightness ratios 1 to 1/3, on a plain background without a
// background image (the track command's mode), and checks that both of each
// pair are found and located without the pull of the other: the mean error
// along the pair's axis and the RMS error stay small. The truth is synth's
// pixel-integrated Gaussian, rendered independently of the detector.
func TestDeblend(t *testing.T) {
	const (
		sigmaPx = 1.25
		snr     = 30
		trials  = 40
		// minRecall: both of a pair 4.5 px or more apart, at SNR 10 or
		// more, are found (issue 14 asks 0.97 of all tracers).
		minRecall = 0.97
		// maxPullPx bounds the mean error towards the partner, and
		// maxRMSPx the RMS error per axis (issue 14: 0.10 px at SNR 10 and
		// more, here for spots whose light overlaps).
		maxPullPx = 0.05
		maxRMSPx  = 0.10
	)
	sc := scene{w: 64, h: 64, bgPhotons: 20, readNoise: 2, bitDepth: 8, gain: 1}
	for _, tc := range []struct{ sepPx, ratio float64 }{{4.5, 1}, {6, 0.5}, {7, 0.33}} {
		rng := rand.New(rand.NewPCG(11, uint64(tc.sepPx*10)))
		var found, total int
		var pull, se float64
		var nse int
		for range trials {
			ang := rng.Float64() * 2 * math.Pi
			ux, uy := math.Cos(ang), math.Sin(ang)
			cx, cy := 32+rng.Float64(), 32+rng.Float64()
			ph := sc.photonsFor(snr, sigmaPx)
			pair := []spot{
				{cx - ux*tc.sepPx/2, cy - uy*tc.sepPx/2, sigmaPx, ph},
				{cx + ux*tc.sepPx/2, cy + uy*tc.sepPx/2, sigmaPx, ph * tc.ratio},
			}
			img := sc.render(t, pair, rng)
			d, err := NewDetector(Options{DiameterPx: 4 * sigmaPx, Polarity: PolarityBright})
			if err != nil {
				t.Fatal(err)
			}
			dets, err := d.Frame(img, 0, nil)
			d.Close()
			img.Close()
			if err != nil {
				t.Fatal(err)
			}
			m := match(pair, dets, 1.2)
			for k, j := range m {
				total++
				if j < 0 {
					continue
				}
				found++
				ex, ey := dets[j].XPx-pair[k].x, dets[j].YPx-pair[k].y
				// Towards the partner: -u for the first, +u for the second.
				sgn := 1.0
				if k == 1 {
					sgn = -1
				}
				pull += sgn * (ex*ux + ey*uy)
				se += ex*ex + ey*ey
				nse += 2
			}
		}
		rec := float64(found) / float64(total)
		p := pull / float64(max(found, 1))
		rms := math.Sqrt(se / float64(max(nse, 1)))
		t.Logf("pairs %.1f px apart, ratio %.2f: recall %.3f, pull %.3f px, RMS %.3f px", tc.sepPx, tc.ratio, rec, p, rms)
		if rec < minRecall || math.Abs(p) > maxPullPx || rms > maxRMSPx {
			t.Errorf("pairs %.1f px apart, ratio %.2f: recall %.3f (want >= %g), pull %.3f px (want within %g), RMS %.3f px (want <= %g)",
				tc.sepPx, tc.ratio, rec, minRecall, p, maxPullPx, rms, maxRMSPx)
		}
	}
}

// TestFrameEdge renders tracers whose centres lie 0.3 to 6 px inside the
// left and right edges of the frame, their spots cut by it, and checks that
// they are found and located without bias towards the inside.
func TestFrameEdge(t *testing.T) {
	const (
		sigmaPx = 1.25
		snr     = 30
		// minRecall and the bias and RMS bounds: issue 14 asks 0.90 of the
		// tracers within 8 px of an edge; a bias of at most 0.05 px, as
		// for the centres by a wall; 0.10 px RMS at SNR 10 and more.
		minRecall = 0.9
		maxBiasPx = 0.05
		maxRMSPx  = 0.10
		// maxCutRMSPx bounds the RMS of a spot whose centre lies within a
		// pixel of the edge, which hides more than half of it: sqrt(2)
		// times maxRMSPx, as for half the photons (common practice: the
		// error scales as one over the root of the photons).
		maxCutRMSPx = 0.15
	)
	sc := scene{w: 80, h: 200, bgPhotons: 20, readNoise: 2, bitDepth: 8, gain: 1}
	rng := rand.New(rand.NewPCG(12, 12))
	for _, depthPx := range []float64{0.3, 1, 2, 4, 6} {
		var found, total int
		var bias, se float64
		for range 6 {
			var spots []spot
			ph := sc.photonsFor(snr, sigmaPx)
			for y := 10.0; y < float64(sc.h)-10; y += 12 {
				off := rng.Float64() - 0.5
				// Pixel centres at 0 .. w-1: the frame's outer sides are at
				// -0.5 and w-0.5.
				spots = append(spots, spot{-0.5 + depthPx, y + off, sigmaPx, ph},
					spot{float64(sc.w) - 0.5 - depthPx, y - off, sigmaPx, ph})
			}
			img := sc.render(t, spots, rng)
			d, err := NewDetector(Options{DiameterPx: 4 * sigmaPx, Polarity: PolarityBright})
			if err != nil {
				t.Fatal(err)
			}
			dets, err := d.Frame(img, 0, nil)
			d.Close()
			img.Close()
			if err != nil {
				t.Fatal(err)
			}
			for k, j := range match(spots, dets, 1.2) {
				total++
				if j < 0 {
					continue
				}
				found++
				ex := dets[j].XPx - spots[k].x
				if k%2 == 1 { // right edge: inwards is -x
					ex = -ex
				}
				bias += ex
				se += ex * ex
			}
		}
		rec := float64(found) / float64(total)
		b := bias / float64(max(found, 1))
		rms := math.Sqrt(se / float64(max(found, 1)))
		t.Logf("%.1f px inside the edge: recall %.3f, bias inwards %.3f px, RMS across %.3f px", depthPx, rec, b, rms)
		lim := maxRMSPx
		if depthPx < 1 {
			lim = maxCutRMSPx
		}
		if rec < minRecall || math.Abs(b) > maxBiasPx || rms > lim {
			t.Errorf("%.1f px inside the edge: recall %.3f (want >= %g), bias %.3f px (want within %g), RMS %.3f px (want <= %g)",
				depthPx, rec, minRecall, b, maxBiasPx, rms, lim)
		}
	}
}
