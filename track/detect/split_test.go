package detect

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestSplitPairs renders pairs of equal tracers closer than the matched
// filter separates them (3 to 4 px, 2.4 to 3.2 spot sds), at random
// orientations more than 10 degrees beyond streakAngleDeg from the flow
// (the image rows without a mask: a pair along the flow is a motion streak
// to the detector and stays one spot), and single round tracers, on a plain background without a
// background image, and counts how many of the pairs' tracers are found
// (both within 1.2 px) and how many single tracers come out as two. The
// truth is the pixel-integrated Gaussian of the test scene, rendered
// independently of the detector's models.
func TestSplitPairs(t *testing.T) {
	const (
		sigmaPx = 1.25
		snr     = 30
		trials  = 60
		// matchPx is how far a detection may lie from its tracer: half the
		// smallest separation less the fits' scatter.
		matchPx = 1.2
		// maxSplitSingles bounds the share of single tracers reported as
		// two: the chi-square tests' 0.1 % points, with room for the
		// noise of 60 trials.
		maxSplitSingles = 0.02
	)
	sc := scene{w: 64, h: 64, bgPhotons: 20, readNoise: 2, bitDepth: 8, gain: 1}
	ph := sc.photonsFor(snr, sigmaPx)
	for _, tc := range []struct{ sepPx, minRecall float64 }{
		// Before the split about half (a merged pair is one elongated
		// spot, kept or cut by the eccentricity limit); the logged figures
		// are the split's.
		{3, 0.85}, {3.5, 0.9}, {4, 0.8},
	} {
		rng := rand.New(rand.NewPCG(21, uint64(tc.sepPx*10)))
		var found, total int
		for range trials {
			// Across the flow, within 90 - streakAngleDeg - 10 degrees.
			off := (90 - streakAngleDeg - 10) * math.Pi / 180
			ang := math.Pi/2 + (2*rng.Float64()-1)*off + math.Pi*float64(rng.IntN(2))
			ux, uy := math.Cos(ang), math.Sin(ang)
			cx, cy := 32+rng.Float64(), 32+rng.Float64()
			pair := []spot{
				{cx - ux*tc.sepPx/2, cy - uy*tc.sepPx/2, sigmaPx, ph},
				{cx + ux*tc.sepPx/2, cy + uy*tc.sepPx/2, sigmaPx, ph},
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
			for _, j := range match(pair, dets, matchPx) {
				total++
				if j >= 0 {
					found++
				}
			}
		}
		rec := float64(found) / float64(total)
		t.Logf("pairs %g px apart: %.3f of %d tracers found", tc.sepPx, rec, total)
		if rec < tc.minRecall {
			t.Errorf("pairs %g px apart: recall %.3f, want at least %g", tc.sepPx, rec, tc.minRecall)
		}
	}
	rng := rand.New(rand.NewPCG(22, 1))
	split := 0
	for range trials {
		img := sc.render(t, []spot{{32 + rng.Float64(), 32 + rng.Float64(), sigmaPx, ph}}, rng)
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
		if len(dets) > 1 {
			split++
		}
	}
	t.Logf("single tracers reported as more than one: %d of %d", split, trials)
	if float64(split) > maxSplitSingles*trials {
		t.Errorf("%d of %d single tracers reported as more than one, want at most %g", split, trials, maxSplitSingles*trials)
	}
}
