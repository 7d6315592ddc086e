package experiment

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"gaptrace/calib/geometry"
)

// logCSV writes a made-up instrument log: time and angle of a cone that
// rests until 1 s, turns at omega rad/s until 3 s, then rests, sampled every
// dt s, with a header line and semicolons.
func logCSV(omega, dt float64, deg bool) string {
	var b strings.Builder
	b.WriteString("Time [s];Deflection;Torque\n")
	for t := 0.0; t <= 4+1e-9; t += dt {
		th := omega * (math.Min(math.Max(t, 1), 3) - 1)
		if deg {
			th *= 180 / math.Pi
		}
		fmt.Fprintf(&b, "%.4f;%.8g;0.1\n", t, th)
	}
	return b.String()
}

func TestReadLog(t *testing.T) {
	cone := geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 2}
	const omega = 0.05
	// The nominal rate of a cone is omega / tan(angle) (see the geometry tests).
	wantRate := omega / math.Tan(2*math.Pi/180)
	for _, c := range []struct {
		name string
		csv  string
		cols LogColumns
	}{
		{"angle in rad by number", logCSV(omega, 0.1, false), LogColumns{Time: "1", Value: "2", Kind: LogAngleRad}},
		{"angle in degrees by name", logCSV(omega, 0.05, true), LogColumns{Time: "time [s]", Value: "Deflection", Kind: LogAngleDeg, OffsetS: 0.2}},
	} {
		p, err := ReadLog(strings.NewReader(c.csv), c.cols, cone)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if len(p) != 1 {
			t.Fatalf("%s: %d steps %+v, want 1", c.name, len(p), p)
		}
		s := p[0]
		if math.Abs(s.StartS-1-c.cols.OffsetS) > 1e-9 || math.Abs(s.EndS-3-c.cols.OffsetS) > 1e-9 {
			t.Errorf("%s: step %g-%g s", c.name, s.StartS, s.EndS)
		}
		if math.Abs(s.RatePerS/wantRate-1) > 1e-6 {
			t.Errorf("%s: rate %g, want %g", c.name, s.RatePerS, wantRate)
		}
		if math.Abs(s.WallSpeedUMPerS/(omega*25000)-1) > 1e-6 {
			t.Errorf("%s: wall speed %g um/s, want %g", c.name, s.WallSpeedUMPerS, omega*25000)
		}
	}
	// Strain and rate columns, plates, commas, no header.
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: 500}
	p, err := ReadLog(strings.NewReader("0,0,0\n1,0,0\n2,1.5,1.5\n3,3,1.5\n4,3,0\n"), LogColumns{Time: "1", Value: "2", Kind: LogStrain}, plates)
	if err != nil || len(p) != 1 || p[0].StartS != 1 || p[0].EndS != 3 || p[0].RatePerS != 1.5 || p[0].WallSpeedUMPerS != 750 {
		t.Errorf("strain log: %+v, %v", p, err)
	}
	for _, bad := range []struct {
		csv  string
		cols LogColumns
		g    geometry.Geometry
		want string
	}{
		{"t,a\n0,0\n1,1\n", LogColumns{Time: "t", Value: "a", Kind: LogAngleRad}, plates, "rotating tool"},
		{"t,a\n0,0\n1,1\n", LogColumns{Time: "t", Value: "b", Kind: LogStrain}, plates, `no column named "b"`},
		{"t,a\n0,0\n0,1\n", LogColumns{Time: "t", Value: "a", Kind: LogStrain}, plates, "does not come after"},
		{"t,a\n0,0\n1,x\n", LogColumns{Time: "t", Value: "a", Kind: LogStrain}, plates, `"x"`},
		{"t,a\n0,0\n", LogColumns{Time: "t", Value: "a", Kind: "torque"}, plates, `"torque"`},
	} {
		if _, err := ReadLog(strings.NewReader(bad.csv), bad.cols, bad.g); err == nil || !strings.Contains(err.Error(), bad.want) {
			t.Errorf("%q: got %v, want %q", bad.csv, err, bad.want)
		}
	}
}
