package calib_test

import (
	"encoding/binary"
	"fmt"
	"image/color"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/experiment"
	"gaptrace/calib/internal/testtarget"
	"gaptrace/calib/target"
	"gaptrace/track/frames"
	"gaptrace/track/synth"
	"gaptrace/track/synth/acceptance"
)

func medianOf(t testing.TB, s *synth.Scenario, n int) gocv.Mat {
	t.Helper()
	m, err := frames.Median(s.Source(s.Frames/n), n)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestCalibrateOnSynth calibrates rendered videos (track/synth) with the
// scale from the gap, across tilts, polarities, both moving sides and both
// flow directions, and maps the true tracer positions to gap coordinates.
func TestCalibrateOnSynth(t *testing.T) {
	type variant struct {
		scenario string
		tiltDeg  float64
		moving   string
		flow     float64
	}
	cases := []variant{
		{"homogeneous", -3, "top", 1}, {"homogeneous", 3, "bottom", -1}, {"homogeneous", 0.4, "top", -1},
		{"dark", -2.5, "bottom", 1}, {"dark", 3, "top", 1}, {"couette", 1.1, "top", 1},
	}
	var worstScale, worstY float64
	for i, c := range cases {
		t.Run(fmt.Sprintf("%s/%+.1f/%s", c.scenario, c.tiltDeg, c.moving), func(t *testing.T) {
			s, err := synth.Builtin(c.scenario, int64(7+i))
			if err != nil {
				t.Fatal(err)
			}
			s.TiltDeg, s.MovingSide, s.FlowSign, s.OmitScale = c.tiltDeg, c.moving, c.flow, true
			s.Frames = 60
			med := medianOf(t, s, 30)
			defer med.Close()
			e := s.Experiment()
			cal, err := calib.Calibrate(med, e, calib.Options{FlowSign: c.flow})
			if err != nil {
				t.Fatal(err)
			}
			if cal.ScaleSource != calib.ScaleGap || cal.WallSource != calib.WallsDetected {
				t.Errorf("scale source %q, wall source %q", cal.ScaleSource, cal.WallSource)
			}
			d := cal.UMPerPx/s.UMPerPx - 1
			worstScale = math.Max(worstScale, math.Abs(d))
			if math.Abs(d) > acceptance.ScaleFromGapFrac {
				t.Errorf("um_per_px %.5f, truth %g (%+.3f%%)", cal.UMPerPx, s.UMPerPx, 100*d)
			}
			if dd := cal.TiltDeg - c.tiltDeg; math.Abs(dd) > acceptance.TiltDeg {
				t.Errorf("tilt %.4f, want %g", cal.TiltDeg, c.tiltDeg)
			}
			truth := s.Calibration()
			for k, pair := range [][2]calib.Line{{cal.StationaryWallPx, truth.StationaryWallPx}, {cal.MovingWallPx, truth.MovingWallPx}} {
				for j := range 2 {
					if dy := pair[0][j][1] - pair[1][j][1]; math.Abs(dy) > acceptance.WallLinePx {
						t.Errorf("wall %d point %d: y off by %.3f px", k, j, dy)
					}
				}
			}
			// True tracers of a frame, without the frame's camera shift.
			frame := 30
			jx, jy := s.JitterAt(frame)
			for _, tr := range s.Positions(frame) {
				x, y := cal.ToGap(tr.XPx-jx, tr.YPx-jy)
				dy := (y - tr.YUM) / s.UMPerPx
				worstY = math.Max(worstY, math.Abs(dy))
				if math.Abs(dy) > acceptance.WallLinePx+acceptance.ScaleFromGapFrac*s.GapPx() {
					t.Fatalf("tracer %d at (%.1f, %.1f) px: y %.2f um, truth %.2f um", tr.ID, tr.XPx, tr.YPx, y, tr.YUM)
				}
				if dx := (x - tr.XUM) / s.UMPerPx; math.Abs(dx) > 1+acceptance.ScaleFromGapFrac*float64(s.WidthPx) {
					t.Fatalf("tracer %d: x %.2f um, truth %.2f um (flow sign %g)", tr.ID, x, tr.XUM, c.flow)
				}
			}
		})
	}
	t.Logf("worst um_per_px error %.3f%% (limit %.1f%%), worst tracer height error %.3f px", 100*worstScale, 100*acceptance.ScaleFromGapFrac, worstY)
}

func TestCalibrateManualWalls(t *testing.T) {
	s, err := synth.Builtin("homogeneous", 3)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = 4
	s.StateWalls = true
	med := medianOf(t, s, 4)
	defer med.Close()
	e := s.Experiment()
	cal, err := calib.Calibrate(med, e, calib.Options{})
	if err != nil {
		t.Fatal(err)
	}
	truth := s.Calibration()
	if cal.WallSource != calib.WallsExperiment || cal.ScaleSource != calib.ScaleExperiment {
		t.Errorf("wall source %q, scale source %q", cal.WallSource, cal.ScaleSource)
	}
	for j := range 2 {
		for k := range 2 {
			if d := cal.MovingWallPx[j][k] - truth.MovingWallPx[j][k]; math.Abs(d) > 1e-9 {
				t.Errorf("moving wall %v, want %v", cal.MovingWallPx, truth.MovingWallPx)
			}
		}
	}
	// The moving side follows from the lines when walls.moving is left out.
	e.Walls.Moving = ""
	e.Walls.StationaryPx, e.Walls.MovingPx = e.Walls.MovingPx, e.Walls.StationaryPx
	cal, err = calib.Calibrate(med, e, calib.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if cal.MovingWallPx[0][1] < cal.StationaryWallPx[0][1] {
		t.Errorf("swapped lines: moving wall %v should be below %v", cal.MovingWallPx, cal.StationaryWallPx)
	}
}

func TestCalibrateErrors(t *testing.T) {
	s, err := synth.Builtin("homogeneous", 5)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = 4
	med := medianOf(t, s, 4)
	defer med.Close()
	blank := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(40, 0, 0, 0), 480, 640, gocv.MatTypeCV8U)
	defer blank.Close()
	dir := t.TempDir()
	blankPath := filepath.Join(dir, "blank.png")
	if !gocv.IMWrite(blankPath, blank) {
		t.Fatal("cannot write the blank target")
	}
	cases := []struct {
		name string
		img  gocv.Mat
		mod  func(*experiment.Experiment)
		want string
	}{
		{"frame without walls", blank, func(*experiment.Experiment) {}, "walls not found"},
		{"walls outside the image", med, func(e *experiment.Experiment) {
			e.Walls.StationaryPx = [][2]float64{{0, 300}, {639, 310}}
			e.Walls.MovingPx = [][2]float64{{0, 700}, {639, 705}}
		}, "outside the 640x480 image"},
		{"wall running out of the image", med, func(e *experiment.Experiment) {
			e.Walls.StationaryPx = [][2]float64{{0, 300}, {300, 310}}
			e.Walls.MovingPx = [][2]float64{{0, 10}, {300, 0}}
		}, "outside the 640x480 image"},
		{"gap of 3 px", med, func(e *experiment.Experiment) {
			e.Walls.StationaryPx = [][2]float64{{0, 203}, {639, 203}}
			e.Walls.MovingPx = [][2]float64{{0, 200}, {639, 200}}
		}, "gap of 3.0 px"},
		{"moving side contradicts the lines", med, func(e *experiment.Experiment) {
			e.Walls.Moving = experiment.Top
			e.Walls.StationaryPx = [][2]float64{{0, 100}, {639, 100}}
			e.Walls.MovingPx = [][2]float64{{0, 400}, {639, 400}}
		}, "walls.moving is \"top\""},
		{"walls 74 % off the gap at the stated scale", med, func(e *experiment.Experiment) {
			e.Camera.UMPerPx *= 1.74
		}, "more than 25%"},
		{"checkerboard that cannot be found", med, func(e *experiment.Experiment) {
			e.Camera.UMPerPx = 0
			e.Camera.Target = &experiment.Target{Image: "blank.png", Kind: experiment.Checkerboard, PitchUM: 100, Corners: [2]int{9, 6}}
		}, "checkerboard not found"},
		{"unreadable target", med, func(e *experiment.Experiment) {
			e.Camera.Target = &experiment.Target{Image: "missing.png", Kind: experiment.Ruler, PitchUM: 100}
		}, "cannot read"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e := s.Experiment()
			c.mod(e)
			_, err := calib.Calibrate(c.img, e, calib.Options{BaseDir: dir})
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("got %v, want an error containing %q", err, c.want)
			}
			t.Log(err)
		})
	}
}

// TestCalibrateWithCheckerboard takes the scale and the lens from a
// checkerboard image next to the experiment file.
func TestCalibrateWithCheckerboard(t *testing.T) {
	s, err := synth.Builtin("homogeneous", 11)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = 4
	med := medianOf(t, s, 4)
	defer med.Close()
	lens := target.Lens{Fx: 1200, Fy: 1200, Cx: 319.5, Cy: 239.5, K: [5]float64{-0.05}}
	b := testtarget.Board{W: 640, H: 480, Cols: 9, Rows: 6, SquarePx: 50, X0: 120, Y0: 110, Undistort: lens.Undistort, Noise: 2, PSFPx: 1}
	dir := writeBoard(t, b)
	e := s.Experiment()
	e.Camera.UMPerPx = 0
	// The board's squares are 100 um, so 2 um/px as the scenario.
	e.Camera.Target = &experiment.Target{Image: "board.png", Kind: experiment.Checkerboard, PitchUM: 100, Corners: [2]int{9, 6}}
	cal, err := calib.Calibrate(med, e, calib.Options{BaseDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	if cal.ScaleSource != calib.ScaleTarget || cal.Distortion == nil {
		t.Fatalf("scale source %q, distortion %v", cal.ScaleSource, cal.Distortion)
	}
	if d := cal.UMPerPx/2 - 1; math.Abs(d) > acceptance.ScaleFromGapFrac {
		t.Errorf("um_per_px %.5f, want 2 (%+.3f%%)", cal.UMPerPx, 100*d)
	}
	// The video was rendered without distortion, so the walls now carry the
	// (small) correction; the scale agrees with the gap within the warning
	// limit.
	t.Logf("um_per_px %.5f from the target, warnings %q", cal.UMPerPx, cal.Warnings)
}

// distort resamples img as seen through lens: each output pixel takes the
// value at its undistorted position (bilinear, OpenCV's remap).
func distort(t *testing.T, img gocv.Mat, lens target.Lens) gocv.Mat {
	t.Helper()
	w, h := img.Cols(), img.Rows()
	mx := make([]byte, 4*w*h)
	my := make([]byte, 4*w*h)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			ux, uy := lens.Undistort(float64(x), float64(y))
			binary.LittleEndian.PutUint32(mx[4*(y*w+x):], math.Float32bits(float32(ux)))
			binary.LittleEndian.PutUint32(my[4*(y*w+x):], math.Float32bits(float32(uy)))
		}
	}
	m1, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV32F, mx)
	if err != nil {
		t.Fatal(err)
	}
	defer m1.Close()
	m2, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV32F, my)
	if err != nil {
		t.Fatal(err)
	}
	defer m2.Close()
	out := gocv.NewMat()
	gocv.Remap(img, &out, &m1, &m2, gocv.InterpolationLinear, gocv.BorderReplicate, color.RGBA{})
	return out
}

// TestCalibrateThroughLens films a rendered gap (track/synth) through a
// lens with barrel distortion, calibrates it with a checkerboard seen
// through the same lens, and checks that the walls, in undistorted pixels,
// and the gap positions of the true tracers are right.
func TestCalibrateThroughLens(t *testing.T) {
	s, err := synth.Builtin("homogeneous", 13)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames, s.TiltDeg, s.OmitScale = 30, 2.1, true
	med := medianOf(t, s, 30)
	defer med.Close()
	// A made-up macro lens: k1 = -0.12 at a focal length of 900 px bends the
	// walls by about 1.5 px across the image.
	lens := target.Lens{Fx: 900, Fy: 900, Cx: 319.5, Cy: 239.5, K: [5]float64{-0.12}}
	seen := distort(t, med, lens)
	defer seen.Close()
	b := testtarget.Board{W: 640, H: 480, Cols: 11, Rows: 8, SquarePx: 45, X0: 95, Y0: 82, Undistort: lens.Undistort, Noise: 2, PSFPx: 1}
	dir := writeBoard(t, b)
	e := s.Experiment()
	e.Camera.Target = &experiment.Target{Image: "board.png", Kind: experiment.Checkerboard, PitchUM: 90, Corners: [2]int{11, 8}}
	cal, err := calib.Calibrate(seen, e, calib.Options{BaseDir: dir})
	if err != nil {
		t.Fatal(err)
	}
	if cal.Distortion == nil || cal.ScaleSource != calib.ScaleTarget {
		t.Fatalf("distortion %v, scale source %q", cal.Distortion, cal.ScaleSource)
	}
	truth := s.Calibration()
	var worst float64
	for k, pair := range [][2]calib.Line{{cal.StationaryWallPx, truth.StationaryWallPx}, {cal.MovingWallPx, truth.MovingWallPx}} {
		for j := range 2 {
			d := pair[0][j][1] - pair[1][j][1]
			worst = math.Max(worst, math.Abs(d))
			if math.Abs(d) > acceptance.WallLinePx {
				t.Errorf("wall %d point %d: y off by %.3f px (undistorted)", k, j, d)
			}
		}
	}
	if d := cal.UMPerPx/s.UMPerPx - 1; math.Abs(d) > acceptance.ScaleFromGapFrac {
		t.Errorf("um_per_px %.5f from the target, truth %g", cal.UMPerPx, s.UMPerPx)
	}
	// Tracers as the lens shows them map to their true heights.
	var worstY float64
	for _, tr := range s.Positions(15) {
		jx, jy := s.JitterAt(15)
		dx, dy := lens.Distort(tr.XPx-jx, tr.YPx-jy)
		_, y := cal.ToGap(dx, dy)
		worstY = math.Max(worstY, math.Abs(y-tr.YUM)/s.UMPerPx)
	}
	// Heights are off by the wall error plus the scale's error across the gap.
	heightTol := acceptance.WallLinePx + math.Abs(cal.UMPerPx/s.UMPerPx-1)*s.GapPx()
	if worstY > heightTol {
		t.Errorf("tracer heights off by up to %.3f px, want within %.3f", worstY, heightTol)
	}
	t.Logf("through the lens: walls within %.3f px, tracer heights within %.3f px, um_per_px %.5f, k1 %.4f", worst, worstY, cal.UMPerPx, cal.Distortion.K[0])
	// Control: ignoring the lens puts the tracers off by more than the limit,
	// so the check above can fail.
	e.Camera.Target = nil
	plain, err := calib.Calibrate(seen, e, calib.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var worstPlain float64
	for _, tr := range s.Positions(15) {
		jx, jy := s.JitterAt(15)
		dx, dy := lens.Distort(tr.XPx-jx, tr.YPx-jy)
		_, y := plain.ToGap(dx, dy)
		worstPlain = math.Max(worstPlain, math.Abs(y-tr.YUM)/s.UMPerPx)
	}
	if worstPlain <= acceptance.WallLinePx {
		t.Errorf("without the lens the tracer heights are still within %.3f px: the lens is too weak to test", worstPlain)
	}
	t.Logf("ignoring the lens: tracer heights off by up to %.3f px", worstPlain)
}

// writeBoard renders b and writes it as board.png into a new temporary
// folder, which it returns.
func writeBoard(t *testing.T, b testtarget.Board) string {
	t.Helper()
	img, err := b.Render()
	if err != nil {
		t.Fatal(err)
	}
	defer img.Close()
	dir := t.TempDir()
	if !gocv.IMWrite(filepath.Join(dir, "board.png"), img) {
		t.Fatal("cannot write the target")
	}
	return dir
}

// TestLoadTestdata reads the reference calibration.json (testdata/slip),
// written by gaptrace track on a rendered slip experiment at 4 um/px with
// the 800 um gap filling 200 px.
func TestLoadTestdata(t *testing.T) {
	c, err := calib.Load(filepath.Join("..", "testdata", "slip", "calibration.json"))
	if err != nil {
		t.Fatal(err)
	}
	// The wall distance is measured to a small fraction of a pixel.
	const gapPxTol = 0.5
	if c.UMPerPx != 4 || c.ScaleSource != calib.ScaleExperiment || math.Abs(c.GapPx-200) > gapPxTol {
		t.Errorf("calibration %+v, want 4 um/px from the experiment and a 200 px gap", c)
	}
}
