package calib_test

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib"
)

// roundTripTolPx: ToImage(ToGap(p)) returns p to rounding (the distortion's
// inverse iterates to 1e-12 in normalised units).
const roundTripTolPx = 1e-6

func TestToGapToImage(t *testing.T) {
	// Walls 400 px apart, the stationary one below.
	flat := calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 440}, {639, 440}},
		MovingWallPx: calib.Line{{0, 40}, {639, 40}}, FlowSign: 1}
	cases := []struct {
		name         string
		c            calib.Calibration
		xPx, yPx     float64
		wantX, wantY float64
	}{
		{"flat, moving on top", flat, 100, 340, 200, 200},
		{"on the moving wall", flat, 0, 40, 0, 800},
		{"flow to -x", func() calib.Calibration { c := flat; c.FlowSign = -1; return c }(), 100, 340, -200, 200},
		{"moving at the bottom", func() calib.Calibration {
			c := flat
			c.StationaryWallPx, c.MovingWallPx = calib.Line{{0, 40}, {639, 40}}, calib.Line{{0, 440}, {639, 440}}
			return c
		}(), 100, 140, 200, 200},
		// Tilted by atan(0.1): a point 100 px along the stationary wall and
		// 50 px perpendicular to it towards the moving wall (up the image).
		{"tilted", calib.Calibration{UMPerPx: 1, GapUM: 400, FlowSign: 1,
			StationaryWallPx: calib.Line{{0, 400}, {100, 410}}, MovingWallPx: calib.Line{{0, 0}, {100, 10}}},
			100/math.Sqrt(1.01) + 50*0.1/math.Sqrt(1.01), 400 + 10/math.Sqrt(1.01) - 50/math.Sqrt(1.01), 100, 50},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x, y := c.c.ToGap(c.xPx, c.yPx)
			if math.Abs(x-c.wantX) > 1e-9 || math.Abs(y-c.wantY) > 1e-9 {
				t.Errorf("ToGap(%g, %g) = (%g, %g), want (%g, %g)", c.xPx, c.yPx, x, y, c.wantX, c.wantY)
			}
			bx, by := c.c.ToImage(x, y)
			if math.Hypot(bx-c.xPx, by-c.yPx) > roundTripTolPx {
				t.Errorf("round trip to (%g, %g)", bx, by)
			}
		})
	}
}

func TestToGapDistortion(t *testing.T) {
	c := calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 440}, {639, 440}},
		MovingWallPx: calib.Line{{0, 40}, {639, 40}}, FlowSign: 1,
		Distortion: &calib.Distortion{Fx: 640, Fy: 640, Cx: 319.5, Cy: 239.5, K: [5]float64{-0.1, 0.01, 0, 0, 0}}}
	for _, p := range [][2]float64{{0, 0}, {639, 479}, {320, 240}, {17, 300}} {
		x, y := c.ToGap(p[0], p[1])
		bx, by := c.ToImage(x, y)
		if math.Hypot(bx-p[0], by-p[1]) > roundTripTolPx {
			t.Errorf("round trip of %v gives (%g, %g)", p, bx, by)
		}
		// ToGap must differ from the distortion-free mapping away from the
		// centre: barrel distortion pulls the corners in.
		nd := c
		nd.Distortion = nil
		ux, uy := nd.ToGap(p[0], p[1])
		if p != [2]float64{320, 240} && math.Hypot(ux-x, uy-y) < 1 {
			t.Errorf("point %v: distortion changed the gap position by only %g um", p, math.Hypot(ux-x, uy-y))
		}
	}
}

func TestLoadAndCheck(t *testing.T) {
	dir := t.TempDir()
	good := calib.Calibration{UMPerPx: 2, GapUM: 800, StationaryWallPx: calib.Line{{0, 440}, {639, 440}},
		MovingWallPx: calib.Line{{0, 40}, {639, 40}}, FlowSign: -1, ScaleSource: calib.ScaleGap,
		Distortion: &calib.Distortion{Fx: 640, Fy: 640, Cx: 319.5, Cy: 239.5, K: [5]float64{-0.1}}}
	b, err := json.Marshal(good)
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "calibration.json")
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	got, err := calib.Load(p)
	if err != nil {
		t.Fatal(err)
	}
	if got.FlowSign != -1 || got.Distortion == nil || got.Distortion.K[0] != -0.1 {
		t.Errorf("loaded %+v", got)
	}
	for _, bad := range []struct {
		mod  func(*calib.Calibration)
		want string
	}{
		{func(c *calib.Calibration) { c.UMPerPx = 0 }, "um_per_px"},
		{func(c *calib.Calibration) { c.FlowSign = 2 }, "flow_sign"},
		{func(c *calib.Calibration) { c.Distortion.Fx = 0 }, "focal"},
		{func(c *calib.Calibration) { c.MovingWallPx[1] = c.MovingWallPx[0] }, "moving_wall_px"},
	} {
		c := good
		d := *good.Distortion
		c.Distortion = &d
		bad.mod(&c)
		if err := c.Check(); err == nil || !strings.Contains(err.Error(), bad.want) {
			t.Errorf("Check: got %v, want an error about %s", err, bad.want)
		}
	}
}
