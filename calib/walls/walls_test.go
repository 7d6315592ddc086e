package walls

import (
	"math"
	"math/rand"
	randv2 "math/rand/v2"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/track/synth/acceptance"
)

// gapImage describes a simple test picture: two plates with a blurred edge,
// the sample between them, optional reflection lines, stuck particles and
// a scratch. It is not a rendering of a real experiment; the full renderer
// lives in track/synth.
type gapImage struct {
	w, h       int
	topY, botY float64 // wall heights at x = 0, px
	tiltDeg    float64
	plate, gap float64 // grey levels
	noise      float64 // Gaussian noise sigma, grey levels
	reflect    float64 // added brightness of a thin line near each wall
	reflectAt  float64 // its distance from the wall in px, positive inside the gap
	stuck      int     // number of stuck dark blobs on the top wall
	scratch    bool    // a bright diagonal scratch across the gap
	blurPx     float64
	seed       int64
}

// render returns the image as 8-bit levels (float).
func (g gapImage) render() []float32 {
	r := rand.New(rand.NewSource(g.seed))
	s := math.Tan(g.tiltDeg * math.Pi / 180)
	blur := g.blurPx
	if blur == 0 {
		blur = 1
	}
	pix := make([]float32, g.w*g.h)
	type blob struct{ x, y float64 }
	var blobs []blob
	for i := 0; i < g.stuck; i++ {
		x := r.Float64() * float64(g.w)
		blobs = append(blobs, blob{x, g.topY + s*x + 2})
	}
	for y := 0; y < g.h; y++ {
		for x := 0; x < g.w; x++ {
			fx, fy := float64(x), float64(y)
			cos := math.Cos(math.Atan(s))
			dt := (fy - (g.topY + s*fx)) * cos // >0 inside the gap
			db := ((g.botY + s*fx) - fy) * cos
			in := phi(dt/blur) * phi(db/blur)
			v := g.plate + (g.gap-g.plate)*in
			if g.reflect != 0 {
				v += g.reflect * (math.Exp(-sq(dt-g.reflectAt)/(2*reflSigma*reflSigma)) + math.Exp(-sq(db-g.reflectAt)/(2*reflSigma*reflSigma)))
			}
			for _, b := range blobs {
				if d2 := sq(fx-b.x) + sq(fy-b.y); d2 < 25 {
					v -= 0.6 * (g.gap) * math.Exp(-d2/4)
				}
			}
			if g.scratch && math.Abs(fy-(0.2*fx+g.topY)) < 1 && in > 0.5 {
				v += 60
			}
			v += g.noise * r.NormFloat64()
			pix[y*g.w+x] = float32(v)
		}
	}
	return pix
}

func sq(x float64) float64 { return x * x }

// reflSigma is the sd of the test reflection lines, px.
const reflSigma = 0.7

func checkWalls(t *testing.T, g gapImage, r *Result) {
	t.Helper()
	s := math.Tan(g.tiltDeg * math.Pi / 180)
	for _, x := range []float64{0, float64(g.w-1) / 2, float64(g.w - 1)} {
		if d := r.Top.YAt(x) - (g.topY + s*x); math.Abs(d) > acceptance.WallLinePx {
			t.Errorf("top wall at x=%g off by %.3f px", x, d)
		}
		if d := r.Bottom.YAt(x) - (g.botY + s*x); math.Abs(d) > acceptance.WallLinePx {
			t.Errorf("bottom wall at x=%g off by %.3f px", x, d)
		}
	}
	if d := r.TiltDeg - g.tiltDeg; math.Abs(d) > acceptance.TiltDeg {
		t.Errorf("tilt %.4f deg, want %.4f", r.TiltDeg, g.tiltDeg)
	}
	wantGap := (g.botY - g.topY) * math.Cos(math.Atan(s))
	if d := r.GapPx - wantGap; math.Abs(d) > acceptance.WallLinePx {
		t.Errorf("gap %.3f px, want %.3f", r.GapPx, wantGap)
	}
}

func TestFindSimple(t *testing.T) {
	base := gapImage{w: 320, h: 240, topY: 40.3, botY: 200.8, plate: 200, gap: 60, noise: 4}
	cases := []struct {
		name string
		mod  func(*gapImage)
	}{
		{"bright plates", func(g *gapImage) {}},
		{"dark plates", func(g *gapImage) { g.plate, g.gap = 20, 150 }},
		{"tilt +3", func(g *gapImage) { g.tiltDeg = 3 }},
		{"tilt -3", func(g *gapImage) { g.tiltDeg = -3; g.topY, g.botY = 60.7, 220.2 }},
		{"tilt -1.3 dark", func(g *gapImage) { g.tiltDeg = -1.3; g.plate, g.gap = 30, 170; g.topY, g.botY = 50.1, 210.6 }},
		{"bright reflection on the wall", func(g *gapImage) { g.reflect = 100; g.tiltDeg = 0.7 }},
		{"dark reflection on the wall", func(g *gapImage) { g.reflect = -80; g.tiltDeg = -0.4 }},
		{"reflection, dark plate", func(g *gapImage) { g.plate, g.gap = 20, 150; g.reflect = 90; g.tiltDeg = 2.9 }},
		{"reflection 10 px inside", func(g *gapImage) { g.reflect = 60; g.reflectAt = 10; g.tiltDeg = 1.5 }},
		{"stuck particles", func(g *gapImage) { g.stuck = 6; g.tiltDeg = 1.1 }},
		{"scratch", func(g *gapImage) { g.scratch = true }},
		{"noisy", func(g *gapImage) { g.noise = 12; g.tiltDeg = 2.2 }},
		{"soft edge", func(g *gapImage) { g.blurPx = 2.5; g.tiltDeg = -2; g.topY, g.botY = 50.5, 210 }},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			g := base
			g.seed = int64(i + 1)
			c.mod(&g)
			r, err := FindPixels(g.render(), g.w, g.h, Options{})
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("reflection found: top %v, bottom %v", r.Top.Reflection, r.Bottom.Reflection)
			checkWalls(t, g, r)
		})
	}
}

// toMat packs float levels into an 8- or 16-bit Mat (16 bit at full range).
func toMat(t *testing.T, pix []float32, w, h int, sixteen bool) gocv.Mat {
	t.Helper()
	if !sixteen {
		b := make([]byte, len(pix))
		for i, v := range pix {
			b[i] = uint8(math.Max(0, math.Min(255, math.Round(float64(v)))))
		}
		m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8U, b)
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
	b := make([]byte, 2*len(pix))
	for i, v := range pix {
		u := uint16(math.Max(0, math.Min(65535, math.Round(float64(v)*257))))
		b[2*i], b[2*i+1] = byte(u), byte(u>>8)
	}
	m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV16U, b)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func TestFindMat8And16(t *testing.T) {
	g := gapImage{w: 320, h: 240, topY: 40.3, botY: 200.8, plate: 220, gap: 40, noise: 3, tiltDeg: 1.7, seed: 9}
	pix := g.render()
	for _, sixteen := range []bool{false, true} {
		m := toMat(t, pix, g.w, g.h, sixteen)
		r, err := Find(m, Options{})
		m.Close()
		if err != nil {
			t.Fatalf("16 bit %v: %v", sixteen, err)
		}
		checkWalls(t, g, r)
		if c := math.Abs(r.Top.ContrastLevels); math.Abs(c-180) > 20 {
			t.Errorf("16 bit %v: top contrast %.1f levels, want about 180", sixteen, c)
		}
	}
	// A colour image is read as grey.
	m := toMat(t, pix, g.w, g.h, false)
	defer m.Close()
	bgr := gocv.NewMat()
	defer bgr.Close()
	gocv.CvtColor(m, &bgr, gocv.ColorGrayToBGR)
	r, err := Find(bgr, Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkWalls(t, g, r)
}

func TestFindErrors(t *testing.T) {
	cases := []struct {
		name string
		g    gapImage
		want string
	}{
		{"no walls", gapImage{w: 320, h: 240, topY: -100, botY: 1000, plate: 100, gap: 100, noise: 2}, "walls not found: strongest horizontal edge"},
		{"one wall outside", gapImage{w: 320, h: 240, topY: 60, botY: 400, plate: 200, gap: 50, noise: 2}, "outside"},
		{"gap of 3 px", gapImage{w: 320, h: 240, topY: 100, botY: 103, plate: 200, gap: 50, noise: 2, blurPx: 0.6}, "gap of 3."},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := FindPixels(c.g.render(), c.g.w, c.g.h, Options{})
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want one containing %q", err, c.want)
			}
			t.Log(err)
		})
	}
}

func TestCheckInside(t *testing.T) {
	if err := CheckInside("moving wall", Line{Y0: -40, Slope: 0.001}, 640, 480); err == nil || !strings.Contains(err.Error(), "outside the 640x480 image") {
		t.Fatalf("got %v", err)
	}
	if err := CheckInside("moving wall", Line{Y0: 40, Slope: 0.001}, 640, 480); err != nil {
		t.Fatal(err)
	}
}

// brentMin on functions whose minima are known in closed form: a parabola
// (x = 0.3), cos on [2, 5] (x = pi) and x^4 - 3x on [0, 2] (x = (3/4)^(1/3)),
// each to within its tolerance (Brent 1973, Algorithms for Minimization
// without Derivatives, ch. 5: localmin meets |x - x*| <= about 2 tol).
func TestBrentMin(t *testing.T) {
	cases := []struct {
		name     string
		f        func(float64) float64
		a, b, x0 float64
		want     float64
	}{
		{"parabola", func(x float64) float64 { return (x - 0.3) * (x - 0.3) }, -1, 2, 1.5, 0.3},
		{"cosine", math.Cos, 2, 5, 2.5, math.Pi},
		{"quartic", func(x float64) float64 { return x*x*x*x - 3*x }, 0, 2, 1.8, math.Cbrt(0.75)},
	}
	const tol = 1e-6
	for _, c := range cases {
		x, fx := brentMin(c.a, c.b, c.x0, c.f(c.x0), tol, c.f)
		if math.Abs(x-c.want) > 3*tol || math.Abs(fx-c.f(c.want)) > 1e-9 {
			t.Errorf("%s: minimum at %.9g (f %.9g), want %.9g (f %.9g)", c.name, x, fx, c.want, c.f(c.want))
		}
	}
}

// HeightErrPx against the scatter of the fitted height over repeated
// noisy lines: the standard error of a straight-line fit's value at x is
// s sqrt(1/n + (x - xbar)^2 / Sxx) (Draper & Smith 1998, Applied
// Regression Analysis, eq. 1.4.7; from memory), here for 40 strips with
// 0.2 px of Gaussian noise, at the middle and at an end of the frame.
func TestHeightErrPx(t *testing.T) {
	rng := randv2.New(randv2.NewPCG(5, 6))
	const n, sigma, trials = 40, 0.2, 400
	x := make([]float64, n)
	for i := range x {
		x[i] = 8 + 16*float64(i)
	}
	for _, xc := range []float64{319.5, 0} {
		var s, s2, rep float64
		for range trials {
			y := make([]float64, n)
			for i := range y {
				y[i] = 100 + 0.02*x[i] + sigma*rng.NormFloat64()
			}
			l, res, wt := robustLine(x, y)
			w := Wall{Line: l, ResidualPx: res, fit: momentsOf(x, wt)}
			h := l.YAt(xc) - (100 + 0.02*xc)
			s += h
			s2 += h * h
			rep += w.HeightErrPx(xc) / trials
		}
		sd := math.Sqrt(s2/trials - (s/trials)*(s/trials))
		// 400 trials give the scatter to 1/sqrt(800) = 3.5 %; the robust
		// scale (MAD of 40 points) and the biweight add about 10 %.
		const agreement = 0.2
		if math.Abs(rep/sd-1) > agreement {
			t.Errorf("at x = %g px: reported %.4f px, scatter %.4f px", xc, rep, sd)
		}
	}
}
