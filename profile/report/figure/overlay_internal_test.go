package figure

import (
	"math"
	"testing"

	"gaptrace/calib"
)

func TestClipLine(t *testing.T) {
	// Clipping of the infinite line through two points to the image
	// [-0.5, w-0.5] x [-0.5, h-0.5]; expected ends worked out by hand.
	const w, h = 100, 50
	cases := []struct {
		name string
		l    calib.Line
		a, b PointPx
		ok   bool
	}{
		{"horizontal", calib.Line{{10, 20}, {30, 20}}, PointPx{-0.5, 20}, PointPx{99.5, 20}, true},
		{"vertical", calib.Line{{40, 5}, {40, 6}}, PointPx{40, -0.5}, PointPx{40, 49.5}, true},
		{"reversed", calib.Line{{30, 20}, {10, 20}}, PointPx{99.5, 20}, PointPx{-0.5, 20}, true},
		{"sloped", calib.Line{{-0.5, -0.5}, {0.5, 0.5}}, PointPx{-0.5, -0.5}, PointPx{49.5, 49.5}, true},
		{"outside", calib.Line{{0, 80}, {10, 80}}, PointPx{}, PointPx{}, false},
	}
	// clipTol: exact arithmetic up to rounding.
	const clipTol = 1e-9
	for _, c := range cases {
		a, b, ok := clipLine(c.l, w, h)
		if ok != c.ok {
			t.Errorf("%s: ok %v, want %v", c.name, ok, c.ok)
			continue
		}
		if !ok {
			continue
		}
		if math.Hypot(a.XPx-c.a.XPx, a.YPx-c.a.YPx) > clipTol || math.Hypot(b.XPx-c.b.XPx, b.YPx-c.b.YPx) > clipTol {
			t.Errorf("%s: clipped to %v-%v, want %v-%v", c.name, a, b, c.a, c.b)
		}
	}
}

func TestRoundLength(t *testing.T) {
	for _, c := range []struct{ v, want float64 }{
		{256, 200}, {199, 100}, {1000, 1000}, {0.7, 0.5}, {4.9, 2}, {55, 50},
	} {
		if got := roundLength(c.v); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("roundLength(%g) = %g, want %g", c.v, got, c.want)
		}
	}
}
