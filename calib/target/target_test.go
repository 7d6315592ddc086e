package target

import (
	"math"
	"math/rand"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/calib/internal/testtarget"
	"gaptrace/track/synth/acceptance"
)

func renderBoard(t *testing.T, b testtarget.Board) gocv.Mat {
	t.Helper()
	m, err := b.Render()
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func TestCheckerboardDistortion(t *testing.T) {
	cases := []struct {
		name   string
		k1, k2 float64
		noise  float64
	}{
		{"barrel", -0.12, 0.02, 2},
		{"pincushion", 0.08, 0, 2},
		{"none", 0, 0, 3},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			// A made-up macro lens: focal length 900 px on a 480x360 sensor,
			// so the corners reach r = 0.3 in normalised units.
			lens := Lens{Fx: 900, Fy: 900, Cx: 239.5, Cy: 179.5, K: [5]float64{c.k1, c.k2, 0, 0, 0}}
			b := testtarget.Board{W: 480, H: 360, Cols: 9, Rows: 6, SquarePx: 40, X0: 80, Y0: 80,
				Undistort: lens.Undistort, Noise: c.noise, PSFPx: 1, Seed: int64(i)}
			m := renderBoard(t, b)
			defer m.Close()
			got, err := Checkerboard(m, b.Cols, b.Rows, 250)
			if err != nil {
				t.Fatal(err)
			}
			if d := got.SquarePx/b.SquarePx - 1; math.Abs(d) > acceptance.TargetSquareFrac {
				t.Errorf("square %.4f px, want %g (%.3f%%)", got.SquarePx, b.SquarePx, 100*d)
			}
			if d := got.UMPerPx/(250/b.SquarePx) - 1; math.Abs(d) > acceptance.TargetSquareFrac {
				t.Errorf("um_per_px %.5f, want %.5f", got.UMPerPx, 250/b.SquarePx)
			}
			var worst, ss float64
			for k, p := range got.Corners {
				wx, wy := b.Corner(k)
				ux, uy := got.Lens.Undistort(p[0], p[1])
				d := math.Hypot(ux-wx, uy-wy)
				worst = math.Max(worst, d)
				ss += d * d
			}
			t.Logf("square %.4f px (truth %g), undistorted corners RMS %.3f px, worst %.3f px, reprojection %.3f px, k=%v",
				got.SquarePx, b.SquarePx, math.Sqrt(ss/float64(len(got.Corners))), worst, got.ReprojectionPx, got.Lens.K)
			if worst > acceptance.UndistortPx {
				t.Errorf("undistorted corner off by %.3f px, want within %g", worst, acceptance.UndistortPx)
			}
		})
	}
}

func TestCheckerboardNotFound(t *testing.T) {
	b := testtarget.Board{W: 320, H: 240, Cols: 9, Rows: 6, SquarePx: 20, X0: 60, Y0: 60, PSFPx: 1}
	m := renderBoard(t, b)
	defer m.Close()
	// Ask for more corners than the board has.
	_, err := Checkerboard(m, 11, 8, 250)
	if err == nil || !strings.Contains(err.Error(), "checkerboard not found") {
		t.Fatalf("got %v, want checkerboard not found", err)
	}
	blank := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(128, 0, 0, 0), 240, 320, gocv.MatTypeCV8U)
	defer blank.Close()
	if _, err := Checkerboard(blank, 9, 6, 250); err == nil || !strings.Contains(err.Error(), "9x6 inner corners") {
		t.Fatalf("blank image: got %v", err)
	}
	if _, err := Checkerboard(blank, 9, 6, -1); err == nil || !strings.Contains(err.Error(), "-1") {
		t.Fatalf("negative square: got %v", err)
	}
}

// TestUndistortAgainstOpenCV checks Lens.Undistort against OpenCV's
// cv::undistortPoints (a general-purpose reference library) and the round
// trip with Distort.
func TestUndistortAgainstOpenCV(t *testing.T) {
	l := Lens{Fx: 800, Fy: 790, Cx: 320, Cy: 240, K: [5]float64{-0.2, 0.05, 0.001, -0.0007, 0.01}}
	pts := []gocv.Point2f{{X: 10, Y: 15}, {X: 320, Y: 240}, {X: 600, Y: 100}, {X: 50, Y: 470}, {X: 400, Y: 300}}
	src := gocv.NewMatWithSize(len(pts), 1, gocv.MatTypeCV64FC2)
	defer src.Close()
	for i, p := range pts {
		src.SetDoubleAt(i, 0, float64(p.X))
		src.SetDoubleAt(i, 1, float64(p.Y))
	}
	cam := gocv.NewMatWithSize(3, 3, gocv.MatTypeCV64F)
	defer cam.Close()
	for i, v := range []float64{l.Fx, 0, l.Cx, 0, l.Fy, l.Cy, 0, 0, 1} {
		cam.SetDoubleAt(i/3, i%3, v)
	}
	dist := gocv.NewMatWithSize(1, 5, gocv.MatTypeCV64F)
	defer dist.Close()
	for i, v := range l.K {
		dist.SetDoubleAt(0, i, v)
	}
	dst := gocv.NewMat()
	defer dst.Close()
	rect := gocv.NewMat()
	defer rect.Close()
	gocv.UndistortPoints(src, &dst, cam, dist, rect, cam)
	got, err := dst.DataPtrFloat64()
	if err != nil {
		t.Fatal(err)
	}
	// OpenCV iterates a fixed number of times; agreement to 1e-3 px.
	const agreePx = 1e-3
	for i, p := range pts {
		x, y := l.Undistort(float64(p.X), float64(p.Y))
		if math.Abs(x-got[2*i]) > agreePx || math.Abs(y-got[2*i+1]) > agreePx {
			t.Errorf("point %v: undistorted (%.4f, %.4f), OpenCV (%.4f, %.4f)", p, x, y, got[2*i], got[2*i+1])
		}
		dx, dy := l.Distort(x, y)
		if math.Hypot(dx-float64(p.X), dy-float64(p.Y)) > 1e-6 {
			t.Errorf("point %v: round trip gives (%g, %g)", p, dx, dy)
		}
	}
}

// rulerSuper is the supersampling of the ruler test image across its lines.
const rulerSuper = 16

// ruler renders vertical (or horizontal) dark lines of widthPx every
// pitchPx starting at x0.
func rulerImage(t *testing.T, w, h int, pitchPx, x0, widthPx float64, vertical bool, noise float64) gocv.Mat {
	t.Helper()
	r := rand.New(rand.NewSource(3))
	pix := make([]byte, w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			c := float64(x)
			if !vertical {
				c = float64(y)
			}
			var cover float64
			for s := 0; s < rulerSuper; s++ {
				u := c + (float64(s)+0.5)/rulerSuper - 0.5
				ph := math.Mod(u-x0+100*pitchPx, pitchPx)
				if ph < widthPx {
					cover++
				}
			}
			v := 210 - 160*cover/rulerSuper + noise*r.NormFloat64()
			pix[y*w+x] = uint8(math.Max(0, math.Min(255, v)))
		}
	}
	m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8U, pix)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// rulerTolFrac: the ruler pitch is an average over tens of periods; its
// scale is needed to the same 0.5% as the checkerboard's.
const rulerTolFrac = 0.001

func TestRuler(t *testing.T) {
	cases := []struct {
		pitch    float64
		vertical bool
	}{{23.7, true}, {11.35, false}, {41.2, true}}
	for _, c := range cases {
		m := rulerImage(t, 480, 360, c.pitch, 7.3, 3, c.vertical, 5)
		got, err := MeasureRuler(m, 100)
		m.Close()
		if err != nil {
			t.Fatal(err)
		}
		if d := got.PitchPx/c.pitch - 1; math.Abs(d) > rulerTolFrac {
			t.Errorf("pitch %.4f px, want %g", got.PitchPx, c.pitch)
		}
		want := map[bool]string{true: "x", false: "y"}[c.vertical]
		if got.Along != want {
			t.Errorf("pitch %g: along %s, want %s", c.pitch, got.Along, want)
		}
		t.Logf("pitch %.4f px (truth %g) along %s, contrast %.0f", got.PitchPx, c.pitch, got.Along, got.Contrast)
	}
	blank := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(128, 0, 0, 0), 240, 320, gocv.MatTypeCV8U)
	defer blank.Close()
	if _, err := MeasureRuler(blank, 100); err == nil || !strings.Contains(err.Error(), "ruler not found") {
		t.Fatalf("blank: got %v", err)
	}
}
