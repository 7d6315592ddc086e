package experiment

import (
	"math"
	"strings"
	"testing"
)

// TestRotationalMotion reads motion segments in a rotational instrument's
// units. An rpm is 2 pi / 60 rad/s (the definition of the revolution per
// minute); a tool turning at omega moves its rim, at radius R, at omega R
// (rigid rotation); a deflection theta over a step of duration d is the
// angular velocity theta / d.
func TestRotationalMotion(t *testing.T) {
	const cone = "geometry: {kind: cone-plate, radius_mm: 20, cone_angle_rad: 0.04}\n"
	for _, c := range []struct {
		seg      string
		wantUMPS float64
	}{
		{"angular_velocity_rad_per_s: 0.05", 0.05 * 20e3},
		{"rpm: 3", 3 * 2 * math.Pi / 60 * 20e3},
		{"angle_rad: 0.1", 0.1 / 2 * 20e3},
	} {
		e, err := Parse(strings.NewReader(cone + "motion:\n  - {start_s: 1, end_s: 3, " + c.seg + "}\n"))
		if err != nil {
			t.Fatalf("%s: %v", c.seg, err)
		}
		p := e.Program()
		// The cone's nominal rate is the rim speed over the rim gap R tan(a).
		wantRate := c.wantUMPS / (20e3 * math.Tan(0.04))
		if len(p) != 1 || math.Abs(p[0].WallSpeedUMPerS/c.wantUMPS-1) > 1e-12 || math.Abs(p[0].RatePerS/wantRate-1) > 1e-12 ||
			math.Abs(p[0].Strain/(2*wantRate)-1) > 1e-12 {
			t.Errorf("%s: program %+v, want wall speed %g um/s, rate %g /s", c.seg, p, c.wantUMPS, wantRate)
		}
	}
	for _, bad := range []struct{ file, want string }{
		{"geometry: {kind: plates, gap_um: 800}\nmotion:\n  - {start_s: 0, end_s: 1, rpm: 2}\n", "rotating tool"},
		{cone + "motion:\n  - {start_s: 0, end_s: 1, rpm: 2, rate_per_s: 1}\n", "give only one"},
		{"geometry: {kind: cone-plate, radius_mm: 20, cone_angle_rad: 0.04, cone_angle_deg: 2}\n", "not both"},
		{"geometry: {kind: plates, gap_um: 800, rate_at: inner}\n", "couette"},
		{"geometry: {kind: couette, inner_radius_mm: 10, outer_radius_mm: 11, rate_at: middle}\n", `"middle"`},
	} {
		if _, err := Parse(strings.NewReader(bad.file)); err == nil || !strings.Contains(err.Error(), bad.want) {
			t.Errorf("%q: %v, want %q", bad.file, err, bad.want)
		}
	}
}
