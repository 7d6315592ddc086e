package detect

import (
	"math"
	"testing"

	"gaptrace/track/synth"
	"gocv.io/x/gocv"
)

// TestBuiltinScenarios runs the detector as the track command does (no
// background image, automatic polarity, the gap's mask from the
// calibration) on frames of synth's built-in scenarios, with walls,
// vignetting, jitter, out-of-focus tracers and both polarities, and checks
// recall and accuracy on the isolated in-focus tracers of SNR 5 or more, and
// that out-of-focus ones are mostly rejected as too large.
func TestBuiltinScenarios(t *testing.T) {
	const (
		isolationDiameters = 2.5 // no other tracer within this many diameters
		minRecall          = 0.99
		// maxBoundRatio bounds the RMS error of the tracers of SNR 10 or
		// more over the RMS of their Thompson, Larson & Webb (2002) least-squares
		// precisions (tlwPrecision, an approximation, not a bound),
		// as in TestLocalizationPrecision.
		maxBoundRatio = 1.3
		// maxOutOfFocus is the largest fraction of out-of-focus tracers
		// that may be kept: they are 2.5 times wider than in-focus ones.
		maxOutOfFocus = 0.05
	)
	for _, name := range []string{"homogeneous", "dark", "demo"} {
		t.Run(name, func(t *testing.T) {
			s, err := synth.Builtin(name, 3)
			if err != nil {
				t.Fatal(err)
			}
			c := s.Calibration()
			mask := &Mask{Stationary: c.StationaryWallPx, Moving: c.MovingWallPx, MarginPx: s.DiameterPx}
			d, err := NewDetector(Options{DiameterPx: s.DiameterPx, Mask: mask})
			if err != nil {
				t.Fatal(err)
			}
			defer d.Close()
			img := gocv.NewMat()
			defer img.Close()
			gain := s.Gain
			if gain == 0 {
				gain = map[int]float64{8: 0.8, 16: 200}[max(8, s.BitDepth)]
			}
			sigma := s.DiameterPx / 4
			noise := gain * math.Sqrt(s.BackgroundPhotons+s.ReadNoise*s.ReadNoise)
			var found, total, oofKept, oof int
			var se, seHi, boundHi float64
			var nHi int
			inner := &Mask{Stationary: mask.Stationary, Moving: mask.Moving, MarginPx: mask.MarginPx + 1}
			for f := 0; f < s.Frames; f += s.Frames / 6 {
				if err := s.Render(f, &img); err != nil {
					t.Fatal(err)
				}
				dets, err := d.Frame(img, f, nil)
				if err != nil {
					t.Fatal(err)
				}
				truth := s.Positions(f)
				for i, tr := range truth {
					if !inner.Contains(tr.XPx, tr.YPx) || tr.XPx < 10 || tr.XPx > float64(s.WidthPx-10) {
						continue
					}
					isolated := true
					for j, o := range truth {
						if j != i && math.Hypot(o.XPx-tr.XPx, o.YPx-tr.YPx) < isolationDiameters*s.DiameterPx {
							isolated = false
							break
						}
					}
					if !isolated {
						continue
					}
					best, bd := -1, 1.5
					for k, de := range dets {
						if dd := math.Hypot(de.XPx-tr.XPx, de.YPx-tr.YPx); dd < bd {
							best, bd = k, dd
						}
					}
					if !tr.InFocus {
						oof++
						if best >= 0 {
							oofKept++
						}
						continue
					}
					snr := gain * tr.Photons / (2 * math.Pi * sigma * sigma) / noise
					if snr < 5 {
						continue
					}
					total++
					if best >= 0 {
						found++
						se += bd * bd
						if snr >= 10 {
							nHi++
							seHi += bd * bd
							b := tlwPrecision(tr.SigmaPx, tr.Photons, math.Sqrt(s.BackgroundPhotons+s.ReadNoise*s.ReadNoise))
							boundHi += b * b
						}
					}
				}
			}
			rec := ratio(found, total)
			rms := math.Sqrt(se / float64(2*max(found, 1)))
			rmsHi, bHi := math.Sqrt(seHi/float64(2*max(nHi, 1))), math.Sqrt(boundHi/float64(max(nHi, 1)))
			t.Logf("%s: polarity %s, %d isolated in-focus tracers of SNR >= 5: recall %.4f, RMS error %.4f px per axis; SNR >= 10: %d, RMS %.4f px, TLW %.4f px, ratio %.2f; out of focus kept %d of %d",
				name, d.Polarity(), total, rec, rms, nHi, rmsHi, bHi, rmsHi/bHi, oofKept, oof)
			if total < 100 || rec < minRecall {
				t.Errorf("%s: recall %.4f of %d, want >= %g of at least 100", name, rec, total, minRecall)
			}
			if nHi < 50 || rmsHi > maxBoundRatio*bHi {
				t.Errorf("%s: SNR >= 10: RMS %.4f px over %d tracers is %.2fx the TLW precision %.4f px, want <= %g", name, rmsHi, nHi, rmsHi/bHi, bHi, maxBoundRatio)
			}
			if oof > 0 && float64(oofKept) > maxOutOfFocus*float64(oof) {
				t.Errorf("%s: %d of %d out-of-focus tracers kept, want at most %g", name, oofKept, oof, maxOutOfFocus)
			}
		})
	}
}
