package frames_test

import (
	"math"
	"slices"
	"testing"

	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gocv.io/x/gocv"
)

// Bounds of TestChooseGrey.
const (
	// greyNearOptimum: the chosen weights' contrast-to-noise ratio, in
	// the renderer's noise model, is within 3 % of the optimum (the
	// measurement's own scatter: contrast from a few thousand tracer
	// pixels, noise from the MADs of a quarter of a million samples).
	greyNearOptimum = 0.97
	// fractionAgree: luma's measured fraction of the best ratio agrees
	// with the model's within that scatter.
	fractionAgree = 0.03
	// lumaLine is where luma is given up (frames' lumaLossFraction, 5 %);
	// a case within lineBand of it in the model, where the measurement's
	// scatter decides, is not in the table.
	lumaLine = 0.95
	lineBand = 0.015
)

// TestChooseGrey renders a colour frame (track/synth: a three-chip camera,
// or an RGGB mosaic, under tinted light) and checks the reduction to grey
// frames.ChooseGrey picks from it against the renderer's noise model: each
// channel c sees tint_c times the light, with Poisson noise of variance
// tint_c lambda and Gaussian read noise of sd r (synth.AddNoise), so the
// contrast-to-noise ratio of weights w on a background of lambda
// photoelectrons is sum w_c tint_c / sqrt(sum w_c^2 (tint_c lambda + r^2))
// for independent channels, at most sqrt(sum tint_c^2 / (tint_c lambda +
// r^2)) (Cauchy-Schwarz: the matched filter w_c = tint_c / var_c). Luma
// must be kept where the model says it loses less than 5 % of that ratio
// and given up where it loses more; the weights chosen must reach the
// optimum within greyNearOptimum. A grey camera's frame (identical
// channels) keeps luma. The mosaic's demosaicing correlates the channels'
// noise, which the independent model does not hold for: those cases are
// logged only.
func TestChooseGrey(t *testing.T) {
	cases := []struct {
		name  string
		tint  [3]float64 // B, G, R; zero: a grey camera, its frame as BGR
		bayer bool
	}{
		{"grey camera", [3]float64{}, false},
		{"neutral", [3]float64{1, 1, 1}, false},
		{"green", [3]float64{0.2, 1, 0.35}, false},
		{"red", [3]float64{0.15, 0.4, 1}, false},
		{"deep red", [3]float64{0.05, 0.1, 1}, false},
		{"blue", [3]float64{1, 0.3, 0.1}, false},
		{"green mosaic", [3]float64{0.2, 1, 0.35}, true},
		{"red mosaic", [3]float64{0.15, 0.4, 1}, true},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			s, err := synth.Builtin("colour-red", 5)
			if err != nil {
				t.Fatal(err)
			}
			s.Colour = synth.Colour{Tint: tc.tint, Bayer: tc.bayer}
			r, err := synth.NewRenderer(s)
			if err != nil {
				t.Fatal(err)
			}
			m, m2 := gocv.NewMat(), gocv.NewMat()
			defer m.Close()
			defer m2.Close()
			if err := r.Render(0, &m); err != nil {
				t.Fatal(err)
			}
			if err := r.Render(1, &m2); err != nil {
				t.Fatal(err)
			}
			grey := tc.tint == [3]float64{}
			if grey {
				gocv.CvtColor(m, &m, gocv.ColorGrayToBGR)
				gocv.CvtColor(m2, &m2, gocv.ColorGrayToBGR)
			}
			g, err := frames.ChooseGrey(m, m2)
			if err != nil {
				t.Fatal(err)
			}
			if sum := g.WeightsBGR[0] + g.WeightsBGR[1] + g.WeightsBGR[2]; math.Abs(sum-1) > 1e-9 || slices.Min(g.WeightsBGR[:]) < 0 {
				t.Errorf("weights %v: want non-negative weights summing to 1", g.WeightsBGR)
			}
			if grey || tc.bayer {
				// Identical channels: every weighting is luma. The
				// mosaic: no independent model (logged only).
				t.Logf("%s: %s, weights B G R %.3f, luma at %.3f of the best measured", tc.name, g.Method, g.WeightsBGR, g.LumaFraction)
				if grey && (g.Method != frames.GreyLuma || g.LumaFraction < 1-1e-9) {
					t.Errorf("grey camera: %s at luma fraction %g, want luma at 1", g.Method, g.LumaFraction)
				}
				return
			}
			lam := median(r.Expected(0))
			r2 := s.ReadNoise * s.ReadNoise
			model := func(w [3]float64) float64 {
				var num, v float64
				for c := range 3 {
					num += w[c] * tc.tint[c]
					v += w[c] * w[c] * (tc.tint[c]*lam + r2)
				}
				return num / math.Sqrt(v)
			}
			var opt float64
			for c := range 3 {
				opt += tc.tint[c] * tc.tint[c] / (tc.tint[c]*lam + r2)
			}
			opt = math.Sqrt(opt)
			luma := model([3]float64{0.114, 0.587, 0.299}) / opt
			t.Logf("%s: %s, weights B G R %.3f, luma at %.3f of the best measured; model: chosen %.3f, luma %.3f of the optimum",
				tc.name, g.Method, g.WeightsBGR, g.LumaFraction, model(g.WeightsBGR)/opt, luma)
			if math.Abs(luma-lumaLine) < lineBand {
				t.Fatalf("case too near the line: luma at %.3f of the optimum in the noise model", luma)
			}
			want := frames.GreyLuma
			if luma < lumaLine {
				want = frames.GreyWeighted
			}
			if g.Method != want {
				t.Fatalf("method %q, want %q: luma at %.3f of the best measured, %.3f of the optimum in the noise model", g.Method, want, g.LumaFraction, luma)
			}
			if got := model(g.WeightsBGR) / opt; g.Method == frames.GreyWeighted && got < greyNearOptimum {
				t.Errorf("chosen weights reach %.3f of the optimum in the noise model, want >= %g", got, greyNearOptimum)
			}
			if math.Abs(g.LumaFraction-luma) > fractionAgree {
				t.Errorf("luma measured at %.3f of the best, the noise model says %.3f", g.LumaFraction, luma)
			}
		})
	}
}

func median(v []float64) float64 {
	v = slices.Clone(v)
	slices.Sort(v)
	return v[len(v)/2]
}

// TestOpenColourVideo writes a three-chip camera's recording under red
// light (track/synth's colour-red: the weighting wins on full-resolution
// colour) as Motion JPEG (whose colour OpenCV's writer subsamples: luma is
// kept unmeasured) and FFV1, and a grey one as Motion JPEG, opens each with
// frames.Open and checks the
// reduction recorded in Info.Grey and the frames delivered: every pixel
// of a weighted frame is the weighted sum, rounded, of the channels OpenCV
// decodes from the same frame (its FFmpeg reader, or for Motion JPEG its
// JPEG decoder), within 1 grey level; a grey Motion JPEG's frames are the
// JPEG's own luma plane (OpenCV's grey decode of the packet).
func TestOpenColourVideo(t *testing.T) {
	for _, tc := range []struct {
		scenario, format, method string
		measured                 bool
	}{
		// OpenCV's Motion JPEG subsamples the colour: luma, unmeasured.
		{"colour-red", synth.FormatMJPEG, frames.GreyLuma, false},
		{"colour-red", synth.FormatFFV1, frames.GreyWeighted, true},
		{"homogeneous", synth.FormatMJPEG, frames.GreyLuma, false},
	} {
		t.Run(tc.scenario+" "+tc.format, func(t *testing.T) {
			s, err := synth.Builtin(tc.scenario, 3)
			if err != nil {
				t.Fatal(err)
			}
			s.Frames = 3
			dir := t.TempDir()
			tr, err := s.Write(dir, synth.Output{Format: tc.format})
			if err != nil {
				t.Fatal(err)
			}
			path := tr.Summary.Input.Path
			src, err := frames.Open(path, 0, frames.All)
			if err != nil {
				t.Fatal(err)
			}
			defer src.Close()
			g := src.Info().Grey
			if g == nil || g.Method != tc.method || g.Measured != tc.measured {
				t.Fatalf("Info.Grey %+v, want method %s, measured %v", g, tc.method, tc.measured)
			}
			got := gocv.NewMat()
			defer got.Close()
			if _, err := src.Next(&got); err != nil {
				t.Fatal(err)
			}
			// The reference: frame 0 decoded by OpenCV, in colour by its
			// FFmpeg reader, or for Motion JPEG its packet by OpenCV's JPEG
			// decoder (which frames uses: FFmpeg's upsamples the chroma
			// differently), in colour or straight to the luma plane.
			ref := gocv.NewMat()
			defer ref.Close()
			c, err := gocv.VideoCaptureFile(path)
			if err != nil {
				t.Fatal(err)
			}
			defer c.Close()
			if tc.format == synth.FormatMJPEG {
				c.Set(gocv.VideoCaptureFormat, -1)
				raw := gocv.NewMat()
				defer raw.Close()
				if !c.Read(&raw) {
					t.Fatal("reference: no packet")
				}
				b, _ := raw.DataPtrUint8()
				flag := gocv.IMReadColor
				if tc.method == frames.GreyLuma {
					flag = gocv.IMReadGrayScale
				}
				ref.Close()
				if ref, err = gocv.IMDecode(b, flag); err != nil {
					t.Fatal(err)
				}
			} else if !c.Read(&ref) {
				t.Fatal("reference: no frame")
			}
			px, _ := ref.DataPtrUint8()
			want := make([]float64, got.Rows()*got.Cols())
			for i := range want {
				if tc.method == frames.GreyWeighted {
					want[i] = math.Round(g.WeightsBGR[0]*float64(px[3*i]) + g.WeightsBGR[1]*float64(px[3*i+1]) + g.WeightsBGR[2]*float64(px[3*i+2]))
				} else {
					want[i] = float64(px[i])
				}
			}
			gp, _ := got.DataPtrUint8()
			worst := 0.0
			for i, w := range want {
				worst = math.Max(worst, math.Abs(float64(gp[i])-w))
			}
			t.Logf("%s %s: %s, weights %.3f, luma fraction %.3f; largest difference from the reference %g grey levels", tc.scenario, tc.format, g.Method, g.WeightsBGR, g.LumaFraction, worst)
			if worst > 1 {
				t.Errorf("a pixel differs from the reference by %g grey levels, want <= 1", worst)
			}
		})
	}
}
