package synth

import (
	"math"
	"testing"

	"gocv.io/x/gocv"
)

// plain returns a built-in scenario with the camera's own variations off
// (no vignetting, no jitter, walls untilted), so that a fault's effect can
// be computed by hand.
func plain(t testing.TB, name string) *Scenario {
	t.Helper()
	s := mustBuiltin(t, name, 5)
	s.Vignetting, s.JitterPx, s.TiltDeg = 0, 0, 0
	return s
}

// normCDF is the standard normal distribution function, from the
// complementary error function (Abramowitz & Stegun 1964, eq. 26.2.29).
func normCDF(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }

// cdfIntegral is an antiderivative of normCDF: d/dz [z Phi(z) + phi(z)] =
// Phi(z) + z phi(z) - z phi(z) = Phi(z) (integration by parts).
func cdfIntegral(z float64) float64 {
	return z*normCDF(z) + math.Exp(-z*z/2)/math.Sqrt(2*math.Pi)
}

// streakPixel is the share of a spot's photons that pixel i (extent
// [i-0.5, i+0.5]) receives along the streak's direction when the spot of
// sd sigma moves at constant speed from a to b during the exposure: the
// time mean of Phi((i+0.5-x)/sigma) - Phi((i-0.5-x)/sigma) over x in
// [a, b], in closed form through cdfIntegral.
func streakPixel(i int, a, b, sigma float64) float64 {
	if b == a {
		return normCDF((float64(i)+0.5-a)/sigma) - normCDF((float64(i)-0.5-a)/sigma)
	}
	f := func(edge float64) float64 {
		// The integral over x of Phi((edge-x)/sigma) from a to b.
		return sigma * (cdfIntegral((edge-a)/sigma) - cdfIntegral((edge-b)/sigma))
	}
	return (f(float64(i)+0.5) - f(float64(i)-0.5)) / (b - a)
}

// blurTolFrac is the largest error allowed per pixel, as a fraction of the
// tracer's photons: the spots are drawn in +-4 sigma boxes (which lose at
// most 1.3e-4 of the mass, Abramowitz & Stegun 1964, table 26.1) and the
// exposure is integrated by the midpoint rule at sigma/4, whose error on a
// Gaussian is of order (h/sigma)^2/24 of the peak, well below that.
const blurTolFrac = 2e-4

// TestMotionBlurIntegral renders tracers moving at constant speed along
// untilted walls with an exposure of half the frame interval, and checks
// every pixel of the image against the analytic integral of a Gaussian
// moving at constant speed (the error function's antiderivative), with the
// streak's middle at the truth's position.
func TestMotionBlurIntegral(t *testing.T) {
	for _, c := range []struct {
		name     string
		fraction float64
		ratePerS float64
	}{
		{"half exposure, 6 px streak at the moving wall", 0.5, 3},
		{"full exposure, 4 px streak", 1, 1},
		{"short exposure", 0.1, 3},
	} {
		t.Run(c.name, func(t *testing.T) {
			s := plain(t, "homogeneous")
			s.Tracers = 60
			s.Motion[0].RatePerS = ptr(c.ratePerS)
			s.ExposureFraction = c.fraction
			clean := *s
			clean.Tracers = 0
			rc, err := NewRenderer(&clean)
			if err != nil {
				t.Fatal(err)
			}
			r, err := NewRenderer(s)
			if err != nil {
				t.Fatal(err)
			}
			const frame = 120 // steady shear
			bg := append([]float64(nil), rc.Expected(frame)...)
			img := r.Expected(frame)
			w, h := s.WidthPx, s.HeightPx
			want := make([]float64, w*h)
			e := c.fraction / s.FPS
			v := s.Program()[0].WallSpeedUMPerS / s.UMPerPx // px/s of the moving wall
			longest := 0.0
			for _, tr := range r.Drawn() {
				// Constant speed at the tracer's height: v(y) = V y/H.
				speed := v * tr.YUM / s.GapUM()
				a, b := tr.XPx-speed*e/2, tr.XPx+speed*e/2
				longest = max(longest, b-a)
				y0, x0 := int(tr.YPx)-8, int(a)-8
				for j := max(y0, 0); j < min(y0+17, h); j++ {
					fy := normCDF((float64(j)+0.5-tr.YPx)/tr.SigmaPx) - normCDF((float64(j)-0.5-tr.YPx)/tr.SigmaPx)
					for i := max(x0, 0); i < min(int(b)+9, w); i++ {
						want[j*w+i] += tr.Photons * fy * streakPixel(i, a, b, tr.SigmaPx)
					}
				}
			}
			if want := c.fraction * c.ratePerS * s.GapPx() / s.FPS; math.Abs(longest-want) > 0.5 {
				t.Fatalf("longest streak %.2f px, want about %.2f", longest, want)
			}
			worst := 0.0
			for i := range img {
				d := math.Abs(img[i] - bg[i] - want[i])
				worst = max(worst, d)
			}
			if tol := blurTolFrac * s.Photons * 2; worst > tol {
				t.Errorf("largest pixel error %.3g photons, allowed %.3g", worst, tol)
			}
			t.Logf("streaks up to %.2f px; largest pixel error %.2g photons of %g per tracer", longest, worst, s.Photons)
		})
	}
}

// TestMotionBlurOff checks that an exposure of 0 and a tracer at rest with
// an exposure draw the same image as before the feature existed: the spot
// at the truth's position.
func TestMotionBlurAtRest(t *testing.T) {
	s := plain(t, "homogeneous")
	r0, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	a := append([]float64(nil), r0.Expected(10)...) // at rest before the shear
	s.ExposureFraction = 0.5
	r1, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	b := r1.Expected(10)
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("pixel %d: %g photons without exposure, %g with, at rest", i, a[i], b[i])
		}
	}
}

// flickerTol is the agreement allowed between the rendered mean level and
// the level computed here: the noiseless image is the background times the
// factor, exact up to rounding.
const flickerTol = 1e-9

// simpsonMean is the mean of f over [a, b] by Simpson's rule on n (even)
// intervals (Abramowitz & Stegun 1964, eq. 25.4.5).
func simpsonMean(f func(float64) float64, a, b float64, n int) float64 {
	if b == a {
		return f(a)
	}
	h := (b - a) / float64(n)
	sum := f(a) + f(b)
	for i := 1; i < n; i++ {
		w := 2.0
		if i%2 == 1 {
			w = 4
		}
		sum += w * f(a+float64(i)*h)
	}
	return sum * h / 3 / (b - a)
}

// TestFlickerMeanLevel renders the empty gap under a flickering lamp and
// checks each frame's mean level against the lamp's light averaged over
// the exposure by Simpson's rule, and the random part's sd.
func TestFlickerMeanLevel(t *testing.T) {
	for _, c := range []struct {
		name       string
		fps, lamp  float64
		exposure   float64
		depth, rnd float64
		interlaced bool
	}{
		{"100 Hz lamp at 97 frames/s, short exposure", 97, 100, 0, 0.1, 0, false},
		{"100 Hz lamp at 97 frames/s, half exposure", 97, 100, 0.5, 0.1, 0, false},
		{"120 Hz lamp at 100 frames/s, interlaced", 100, 120, 0.3, 0.08, 0, true},
		{"unsteady supply only", 100, 0, 0, 0, 0.03, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			s := plain(t, "homogeneous")
			s.Tracers = 0
			s.FPS, s.ExposureFraction, s.Interlaced = c.fps, c.exposure, c.interlaced
			s.Flicker = Flicker{LampHz: c.lamp, Depth: c.depth, Noise: c.rnd}
			r, err := NewRenderer(s)
			if err != nil {
				t.Fatal(err)
			}
			ph := s.flickerPhase()
			lamp := func(tS float64) float64 { return 1 + c.depth*math.Sin(2*math.Pi*c.lamp*tS+ph) }
			illum := s.Illumination()
			e := c.exposure / c.fps
			var resid []float64
			for f := 0; f < 200; f += 7 {
				img := r.Expected(f)
				// Two pixels in the middle of the gap, on an even and an odd
				// row: the sample's level in each field.
				row := int(s.centreYPx()) &^ 1
				mid := (img[row*s.WidthPx+s.WidthPx/2] + img[(row+1)*s.WidthPx+s.WidthPx/2]) / 2
				if got, want := mid, s.BackgroundPhotons*illum[f]; math.Abs(got-want) > flickerTol*want {
					t.Fatalf("frame %d: level %g photons, want %g", f, got, want)
				}
				tS := float64(f) / c.fps
				periodic := simpsonMean(lamp, tS-e/2, tS+e/2, 64)
				if c.interlaced {
					q := 1 / (4 * c.fps)
					periodic = (simpsonMean(lamp, tS-q-e/2, tS-q+e/2, 64) + simpsonMean(lamp, tS+q-e/2, tS+q+e/2, 64)) / 2
				}
				resid = append(resid, illum[f]-periodic)
			}
			var ss float64
			for _, v := range resid {
				ss += v * v
			}
			sd := math.Sqrt(ss / float64(len(resid)))
			if c.rnd == 0 && sd > 1e-6 {
				t.Errorf("factor differs from the lamp's exposure mean by %.2g rms", sd)
			}
			// The sd of 29 normal draws lies within +-40 % of sigma with
			// probability above 99.9 % (chi distribution, 28 degrees of freedom).
			if c.rnd > 0 && math.Abs(sd/c.rnd-1) > 0.4 {
				t.Errorf("random part sd %.4f, want %.4f", sd, c.rnd)
			}
		})
	}
}

// TestFlickerOnEverything checks that the lamp's factor scales the
// tracers and plates as well as the sample: the flickering image is the
// steady one times the frame's factor, pixel for pixel.
func TestFlickerOnEverything(t *testing.T) {
	s := plain(t, "slip")
	s.Vignetting = 0.15
	r0, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	steady := append([]float64(nil), r0.Expected(77)...)
	s.Flicker = Flicker{LampHz: 100, Depth: 0.2, Noise: 0.02}
	r1, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	k := s.Illumination()[77]
	for i, v := range r1.Expected(77) {
		if math.Abs(v-k*steady[i]) > 1e-9*max(1, v) {
			t.Fatalf("pixel %d: %g photons, want %g x %g", i, v, k, steady[i])
		}
	}
	if k == 1 {
		t.Error("the flicker left frame 77 unchanged")
	}
}

// TestDust checks each dust spot: at its centre pixel the image differs from
// the clean window's by the spot's contrast times its pixel-integrated
// profile (computed here from the error function), it lies in its region,
// and it stays put while the sample moves.
func TestDust(t *testing.T) {
	s := plain(t, "homogeneous")
	s.Tracers = 0
	clean := *s
	s.Dust = Dust{InGap: 30, OnPlates: 10, BrightFraction: 0.3}
	rc, err := NewRenderer(&clean)
	if err != nil {
		t.Fatal(err)
	}
	r, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	spots := s.DustSpots()
	if len(spots) != 40 {
		t.Fatalf("%d dust spots, want 40", len(spots))
	}
	c := s.Calibration()
	w := s.WidthPx
	for _, f := range []int{0, 120} { // at rest and in the shear
		base := append([]float64(nil), rc.Expected(f)...)
		img := r.Expected(f)
		kinds := map[string]int{}
		for k, d := range spots {
			kinds[d.Kind]++
			_, yUM := c.ToGap(d.XPx, d.YPx)
			inGap := yUM >= 0 && yUM <= s.GapUM()
			if inGap != (d.Region == RegionGap) {
				t.Errorf("spot %d at (%.1f, %.1f) is said to be on the %s, but lies %.1f um from the stationary wall",
					k, d.XPx, d.YPx, d.Region, yUM)
			}
			if d.SigmaPx < s.SigmaPx() || d.SigmaPx > 2*s.SigmaPx() || d.Contrast < 0.15 || d.Contrast > 0.6 {
				t.Errorf("spot %d: sd %.2f px, contrast %.2f out of the default ranges", k, d.SigmaPx, d.Contrast)
			}
			i, j := int(math.Round(d.XPx)), int(math.Round(d.YPx))
			if i < 0 || j < 0 || i >= w || j >= s.HeightPx {
				continue
			}
			// Peak-1 profile integrated over the pixel.
			g := 2 * math.Pi * d.SigmaPx * d.SigmaPx *
				(normCDF((float64(i)+0.5-d.XPx)/d.SigmaPx) - normCDF((float64(i)-0.5-d.XPx)/d.SigmaPx)) *
				(normCDF((float64(j)+0.5-d.YPx)/d.SigmaPx) - normCDF((float64(j)-0.5-d.YPx)/d.SigmaPx))
			// Other spots may overlap: compare only isolated ones.
			lonely := true
			for q, o := range spots {
				if q != k && math.Hypot(o.XPx-d.XPx, o.YPx-d.YPx) < 4*(o.SigmaPx+d.SigmaPx) {
					lonely = false
				}
			}
			if !lonely {
				continue
			}
			got, b := img[j*w+i], base[j*w+i]
			want := b * (1 - d.Contrast*g)
			if d.Kind == DustBright {
				// A tracer's peak: photons x the centred pixel's share (the
				// erf difference across one pixel, squared).
				frac := normCDF(0.5/s.SigmaPx()) - normCDF(-0.5/s.SigmaPx())
				want = b + d.Contrast*g*s.Photons*frac*frac
			}
			if math.Abs(got-want) > 1e-9*b {
				t.Errorf("frame %d, %s spot %d: centre pixel %g photons, want %g", f, d.Kind, k, got, want)
			}
		}
		if kinds[DustBright] == 0 || kinds[DustDark] == 0 {
			t.Errorf("dust kinds %v: want both", kinds)
		}
	}
}

// TestStuckTracers checks that tracers stuck to a wall move with it: those
// on the stationary wall stay put, those on the moving wall travel the
// wall's distance, and both keep their heights.
func TestStuckTracers(t *testing.T) {
	s := plain(t, "slip")
	s.StuckTracers = 10
	a, b := byID(s.Positions(80)), byID(s.Positions(90))
	travel := s.Program()[0].WallSpeedUMPerS * 10 / s.FPS
	n := map[string]int{}
	for id, p := range a {
		q, ok := b[id]
		if !ok || p.Stuck == "" {
			continue
		}
		n[p.Stuck]++
		want := 0.0
		if p.Stuck == WallMoving {
			want = travel
		}
		if d := q.XUM - p.XUM; math.Abs(d-want) > 1e-6 {
			t.Errorf("tracer %d stuck to the %s wall moved %.4f um in 10 frames, want %.4f", id, p.Stuck, d, want)
		}
	}
	if n[WallStationary] == 0 || n[WallMoving] == 0 {
		t.Errorf("stuck tracers in view %v: want some at each wall", n)
	}
}

// TestColourCamera checks the colour camera: each channel's mean level of
// the empty gap is the grey level times its tint (up to the noise's
// standard error), and the Bayer image demosaiced here agrees with
// OpenCV's bilinear demosaic (an independent implementation) inside the
// image.
func TestColourCamera(t *testing.T) {
	for _, c := range []struct {
		name  string
		tint  [3]float64
		bayer bool
	}{
		{"green light", [3]float64{0.2, 1, 0.35}, false},
		{"red light, Bayer", [3]float64{0.15, 0.4, 1}, true},
		{"green light, Bayer", [3]float64{0.2, 1, 0.35}, true},
	} {
		t.Run(c.name, func(t *testing.T) {
			s := plain(t, "homogeneous")
			s.Tracers = 0
			s.BackgroundPhotons = 120
			s.Colour = Colour{Tint: c.tint, Bayer: c.bayer}
			r, err := NewRenderer(s)
			if err != nil {
				t.Fatal(err)
			}
			m := gocv.NewMat()
			defer m.Close()
			if err := r.Render(3, &m); err != nil {
				t.Fatal(err)
			}
			if m.Type() != gocv.MatTypeCV8UC3 {
				t.Fatalf("Mat type %v, want CV_8UC3", m.Type())
			}
			b := m.ToBytes()
			w := s.WidthPx
			y0, y1 := int(s.centreYPx())-100, int(s.centreYPx())+100
			for ch := range 3 {
				var sum float64
				n := 0
				for j := y0; j < y1; j++ {
					for i := 8; i < w-8; i++ {
						sum += float64(b[(j*w+i)*3+ch])
						n++
					}
				}
				lam := s.BackgroundPhotons * c.tint[ch]
				want := s.gain() * lam
				// The standard error of the mean; the Bayer image's pixels
				// are interpolated from a quarter or half as many.
				se := s.gain() * math.Sqrt(lam+s.ReadNoise*s.ReadNoise) / math.Sqrt(float64(n)/4)
				if got := sum / float64(n); math.Abs(got-want) > 4*se+0.5 {
					t.Errorf("channel %d: mean %.3f grey levels, want %.3f (tint %.2f)", ch, got, want, c.tint[ch])
				}
			}
			if !c.bayer {
				return
			}
			// Rebuild the mosaic from the demosaiced image (each pixel keeps
			// its own channel) and demosaic it with OpenCV.
			mos := make([]byte, w*s.HeightPx)
			for j := range s.HeightPx {
				for i := range w {
					mos[j*w+i] = b[(j*w+i)*3+bayerChannel(i, j)]
				}
			}
			pm, err := gocv.NewMatFromBytes(s.HeightPx, w, gocv.MatTypeCV8U, mos)
			if err != nil {
				t.Fatal(err)
			}
			defer pm.Close()
			cv := gocv.NewMat()
			defer cv.Close()
			// OpenCV names a Bayer pattern by the second row's second and
			// third pixels: RGGB is its "BG" (OpenCV documentation, color
			// conversions, Bayer; checked below by the tint).
			gocv.CvtColor(pm, &cv, gocv.ColorBayerBGToBGR)
			ob := cv.ToBytes()
			worst := 0
			for j := 2; j < s.HeightPx-2; j++ {
				for i := 2; i < w-2; i++ {
					for ch := range 3 {
						k := (j*w+i)*3 + ch
						worst = max(worst, absInt(int(ob[k])-int(b[k])))
					}
				}
			}
			// OpenCV rounds its means in fixed point: one grey level.
			if worst > 1 {
				t.Errorf("demosaic differs from OpenCV's by up to %d grey levels", worst)
			}
		})
	}
}

func absInt(v int) int {
	if v < 0 {
		return -v
	}
	return v
}
