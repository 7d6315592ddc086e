package synth

import (
	"math"
	"testing"

	"gocv.io/x/gocv"
)

// TestRenderSpotsAtPositions checks that the frame shows each tracer where
// Positions says: the background-subtracted centroid of every isolated
// in-focus spot of the noiseless image lies within 0.01 px of the truth.
func TestRenderSpotsAtPositions(t *testing.T) {
	s := mustBuiltin(t, "banded2", 11)
	s.Vignetting = 0 // a flat background, so that subtracting it is exact
	s.JitterPx = 0.4
	r, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	const frame = 120
	img := r.Expected(frame)
	all := s.positionsAt(s.geom(), nil, s.Program(), frame, s.FrameTimeS(frame), nil, false, nil)
	const win = 5                            // px: 4 sigma of an in-focus spot
	isolation := 4*s.SigmaPx()*2.5 + win + 1 // no other spot's box reaches the window
	c := s.Calibration()
	checked, worst := 0, 0.0
	for _, p := range s.Positions(frame) {
		if !p.InFocus {
			continue
		}
		lonely := true
		for _, q := range all {
			if q.ID != p.ID && math.Hypot(q.XPx-p.XPx, q.YPx-p.YPx) < isolation {
				lonely = false
				break
			}
		}
		_, yUM := c.ToGap(p.XPx, p.YPx)
		farFromWalls := yUM > 12*s.UMPerPx && yUM < s.GapUM()-12*s.UMPerPx
		x0, y0 := int(math.Round(p.XPx)), int(math.Round(p.YPx))
		if !lonely || !farFromWalls || x0 < win || y0 < win || x0 >= s.WidthPx-win || y0 >= s.HeightPx-win {
			continue
		}
		var sx, sy, sw float64
		for y := y0 - win; y <= y0+win; y++ {
			for x := x0 - win; x <= x0+win; x++ {
				v := img[y*s.WidthPx+x] - s.BackgroundPhotons
				sx += v * float64(x)
				sy += v * float64(y)
				sw += v
			}
		}
		d := math.Hypot(sx/sw-p.XPx, sy/sw-p.YPx)
		worst = max(worst, d)
		if d > centroidTolPx {
			t.Errorf("tracer %d: spot centroid (%.4f, %.4f), truth (%.4f, %.4f)", p.ID, sx/sw, sy/sw, p.XPx, p.YPx)
		}
		checked++
	}
	if checked < 50 {
		t.Errorf("only %d isolated tracers checked", checked)
	}
	t.Logf("%d isolated spots, largest centroid error %.2g px", checked, worst)
}

// edgeTolPx is how far the mid-level crossing of a rendered wall edge may be
// from the true line: the pixel-integrated blurred step is symmetric about
// the line, and linear interpolation between rows of a curve of sd 0.6 px
// misplaces the crossing by well under 0.05 px.
const edgeTolPx = 0.05

// TestRenderWallsAndPolarity checks the image across the gap at one column:
// plate level beyond the walls, the sample's level inside, the reflection
// line's peak on the true wall line, and tracers brighter or darker than the
// sample by polarity.
func TestRenderWallsAndPolarity(t *testing.T) {
	for _, name := range []string{"homogeneous", "dark"} {
		s := mustBuiltin(t, name, 1)
		s.Vignetting = 0
		s.JitterPx = 0
		r, err := NewRenderer(s)
		if err != nil {
			t.Fatal(err)
		}
		img := append([]float64(nil), r.Expected(0)...)
		flat := *s
		flat.Walls.ReflectionPhotons = 0
		rf, err := NewRenderer(&flat)
		if err != nil {
			t.Fatal(err)
		}
		noLine := rf.Expected(0)
		c := s.Calibration()
		const col = 400
		at := func(l [2][2]float64) float64 { // row of a wall line at the column
			return l[0][1] + (l[1][1]-l[0][1])*(col-l[0][0])/(l[1][0]-l[0][0])
		}
		for _, wall := range [][2][2]float64{c.StationaryWallPx, c.MovingWallPx} {
			y := at(wall)
			// The reflection line alone: its peak is on the wall line.
			best, bestRow := math.Inf(-1), -1
			for row := int(y) - 3; row <= int(y)+3; row++ {
				if v := img[row*s.WidthPx+col] - noLine[row*s.WidthPx+col]; v > best {
					best, bestRow = v, row
				}
			}
			if math.Abs(float64(bestRow)-y) > 0.5+1e-9 {
				t.Errorf("%s: reflection peak on row %d, wall line at %.2f", name, bestRow, y)
			}
			// The edge alone: halfway between plate and sample levels on the
			// wall line (linear interpolation between rows).
			mid := (s.Walls.PlatePhotons + s.BackgroundPhotons) / 2
			for row := int(y) - 3; row < int(y)+3; row++ {
				a, b := noLine[row*s.WidthPx+col]-mid, noLine[(row+1)*s.WidthPx+col]-mid
				if a*b <= 0 && a != b {
					if cross := float64(row) + a/(a-b); math.Abs(cross-y) > edgeTolPx {
						t.Errorf("%s: edge crosses mid-level at row %.3f, wall line at %.3f", name, cross, y)
					}
				}
			}
		}
		plateRows := []int{int(at(c.MovingWallPx)) - 10, int(at(c.StationaryWallPx)) + 10}
		for _, row := range plateRows {
			if v := img[row*s.WidthPx+col]; math.Abs(v-s.Walls.PlatePhotons) > 1e-6 {
				t.Errorf("%s: plate pixel (%d, %d) = %g photons, want %g", name, col, row, v, s.Walls.PlatePhotons)
			}
		}
		// The sample between spots is at the background level; every
		// in-focus spot's centre pixel is off it in the polarity's sense.
		for _, p := range s.Positions(0) {
			if !p.InFocus {
				continue
			}
			v := img[int(math.Round(p.YPx))*s.WidthPx+int(math.Round(p.XPx))] - s.BackgroundPhotons
			if (name == "dark") != (v < 0) {
				t.Fatalf("%s: tracer %d's centre is %+g photons off the background", name, p.ID, v)
			}
		}
	}
}

// TestRenderMat checks the Mat Render makes: type by bit depth, reuse of
// the destination, determinism of the noise per frame.
func TestRenderMat(t *testing.T) {
	s := mustBuiltin(t, "dark", 1)
	m := gocv.NewMat()
	defer m.Close()
	if err := s.Render(3, &m); err != nil {
		t.Fatal(err)
	}
	if m.Type() != gocv.MatTypeCV16U || m.Rows() != 480 || m.Cols() != 640 {
		t.Fatalf("16-bit scenario: Mat %dx%d of type %v", m.Cols(), m.Rows(), m.Type())
	}
	first := m.ToBytes()
	ptr := m.Ptr()
	if err := s.Render(4, &m); err != nil {
		t.Fatal(err)
	}
	if m.Ptr() != ptr {
		t.Error("Render replaced a destination Mat of the right size and type")
	}
	if string(m.ToBytes()) == string(first) {
		t.Error("frames 3 and 4 are identical")
	}
	if err := s.Render(3, &m); err != nil {
		t.Fatal(err)
	}
	if string(m.ToBytes()) != string(first) {
		t.Error("frame 3 rendered twice differs")
	}
	s.BitDepth = 8 // a changed scenario gets a new renderer and a new Mat
	if err := s.Render(3, &m); err != nil {
		t.Fatal(err)
	}
	if m.Type() != gocv.MatTypeCV8U {
		t.Errorf("after switching to 8 bit: type %v", m.Type())
	}
	var zero gocv.Mat
	if err := s.Render(0, &zero); err != nil {
		t.Fatal(err)
	}
	zero.Close()
}

// BenchmarkRender640x480x500 renders frames of a 640x480 scenario with 500
// tracers in the field, noise and vignetting on, into one reused Mat.
func BenchmarkRender640x480x500(b *testing.B) {
	s := mustBuiltin(b, "banded2", 1)
	s.Tracers = 500
	r, err := NewRenderer(s)
	if err != nil {
		b.Fatal(err)
	}
	m := gocv.NewMat()
	defer m.Close()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		if err := r.Render(i%s.Frames, &m); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "frames/s")
}

// TestVignetting checks the fall-off: the corner pixel, on a plate, is at
// PlatePhotons x (1 - Vignetting), the centre of the plate rows untouched
// in the middle column.
func TestVignetting(t *testing.T) {
	s := mustBuiltin(t, "homogeneous", 1)
	s.Tracers = 0
	r, err := NewRenderer(s)
	if err != nil {
		t.Fatal(err)
	}
	img := r.Expected(0)
	w, h := s.WidthPx, s.HeightPx
	for _, p := range [][2]int{{0, 0}, {w - 1, 0}, {0, h - 1}, {w - 1, h - 1}} {
		if got, want := img[p[1]*w+p[0]], s.Walls.PlatePhotons*(1-s.Vignetting); math.Abs(got-want) > 1e-9 {
			t.Errorf("corner %v: %g photons, want %g", p, got, want)
		}
	}
	mid := h/2*w + (w-1)/2 // next to the image centre, in the gap
	want := s.BackgroundPhotons * s.vignettingAt(float64((w-1)/2), float64(h/2))
	if got := img[mid]; math.Abs(got-want) > 1e-9 || want < s.BackgroundPhotons*0.999 {
		t.Errorf("centre: %g photons, want %g", got, want)
	}
}

// BenchmarkRenderJitter640x480x500 is BenchmarkRender640x480x500 with camera
// jitter, which redraws the walls every frame.
func BenchmarkRenderJitter640x480x500(b *testing.B) {
	s := mustBuiltin(b, "banded2", 1)
	s.Tracers = 500
	s.JitterPx = 0.3
	r, err := NewRenderer(s)
	if err != nil {
		b.Fatal(err)
	}
	m := gocv.NewMat()
	defer m.Close()
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		if err := r.Render(i%s.Frames, &m); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "frames/s")
}
