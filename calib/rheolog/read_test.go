package rheolog

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf16"

	"gaptrace/calib/experiment"
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

func program(t *testing.T, csv string, s Spec, g geometry.Geometry) experiment.Program {
	t.Helper()
	l, err := Read(strings.NewReader(csv), s)
	if err != nil {
		t.Fatal(err)
	}
	p, err := l.Program(g)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func TestProgramFromAngle(t *testing.T) {
	cone := geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 2}
	const omega = 0.05
	// The nominal rate of a cone is omega / tan(angle) (see the geometry tests).
	wantRate := omega / math.Tan(2*math.Pi/180)
	for _, c := range []struct {
		name string
		csv  string
		spec Spec
	}{
		{"angle in rad by number", logCSV(omega, 0.1, false), Spec{Time: "1", Motion: "2", Kind: AngleRad}},
		{"angle in degrees by name", logCSV(omega, 0.05, true), Spec{Time: "time [s]", Motion: "Deflection", Kind: AngleDeg, OffsetS: 0.2}},
		{"found by the header's names", logCSV(omega, 0.1, false), Spec{}},
	} {
		p := program(t, c.csv, c.spec, cone)
		if len(p) != 1 {
			t.Fatalf("%s: %d steps %+v, want 1", c.name, len(p), p)
		}
		s := p[0]
		if math.Abs(s.StartS-1-c.spec.OffsetS) > 1e-9 || math.Abs(s.EndS-3-c.spec.OffsetS) > 1e-9 {
			t.Errorf("%s: step %g-%g s", c.name, s.StartS, s.EndS)
		}
		if math.Abs(s.RatePerS/wantRate-1) > 1e-6 {
			t.Errorf("%s: rate %g, want %g", c.name, s.RatePerS, wantRate)
		}
		if math.Abs(s.WallSpeedUMPerS/(omega*25000)-1) > 1e-6 {
			t.Errorf("%s: wall speed %g um/s, want %g", c.name, s.WallSpeedUMPerS, omega*25000)
		}
	}
}

// TestProgramBetweenSamples: steps that start and end between samples are
// placed inside the interval where the travel adds up, for a strain log
// sampled every 0.1 s with steps at 0.537 s and 1.262 s, then a second step
// at twice the rate from 1.262 to 1.9 s.
func TestProgramBetweenSamples(t *testing.T) {
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: 500}
	strain := func(tS float64) float64 {
		g := 0.0
		g += 1.5 * (math.Min(math.Max(tS, 0.537), 1.262) - 0.537)
		g += 3 * (math.Min(math.Max(tS, 1.262), 1.9) - 1.262)
		return g
	}
	var b strings.Builder
	b.WriteString("time;strain\n")
	for k := 0; k <= 25; k++ {
		tS := float64(k) / 10
		fmt.Fprintf(&b, "%s;%s\n", strings.Replace(fmt.Sprintf("%.2f", tS), ".", ",", 1), strings.Replace(fmt.Sprintf("%.9f", strain(tS)), ".", ",", 1))
	}
	p := program(t, b.String(), Spec{}, plates)
	want := []struct{ a, b, rate float64 }{{0.537, 1.262, 1.5}, {1.262, 1.9, 3}}
	// The strains are written to 1e-9; the placement then holds to 1e-6 s.
	const tolS = 1e-6
	if len(p) != len(want) {
		t.Fatalf("%d steps %+v, want %d", len(p), p, len(want))
	}
	for i, w := range want {
		if math.Abs(p[i].StartS-w.a) > tolS || math.Abs(p[i].EndS-w.b) > tolS || math.Abs(p[i].RatePerS-w.rate) > 1e-6 {
			t.Errorf("step %d: %.6f-%.6f s at %.6f/s, want %.3f-%.3f s at %g/s", i, p[i].StartS, p[i].EndS, p[i].RatePerS, w.a, w.b, w.rate)
		}
	}
}

// TestReadFormats reads the same made-up log written as instruments export
// it: decimal commas with semicolons or tabs, units in the headers or on a
// line of their own, metadata above the header, and in UTF-16 and Latin-1.
func TestReadFormats(t *testing.T) {
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: 500}
	rows := [][3]float64{{0, 0, 0}, {1, 0, 0}, {2, 150, 2}, {3, 300, 2}, {4, 300, 0}}
	write := func(head, sep string, comma bool) string {
		var b strings.Builder
		b.WriteString(head)
		for _, r := range rows {
			f := []string{fmt.Sprint(r[0]), fmt.Sprintf("%.1f", r[1]), fmt.Sprintf("%.3f", r[2])}
			for k := range f {
				if comma {
					f[k] = strings.Replace(f[k], ".", ",", 1)
				}
			}
			b.WriteString(strings.Join(f, sep) + "\n")
		}
		return b.String()
	}
	utf16le := func(s string) string {
		u := utf16.Encode([]rune(s))
		b := []byte{0xFF, 0xFE}
		for _, c := range u {
			b = append(b, byte(c), byte(c>>8))
		}
		return string(b)
	}
	latin1 := func(s string) string {
		var b []byte
		for _, r := range s {
			b = append(b, byte(r))
		}
		return string(b)
	}
	for _, c := range []struct {
		name string
		csv  string
		spec Spec
	}{
		{"semicolons, decimal commas, units", write("time [s];strain [%];torque [mN m]\n", ";", true), Spec{}},
		{"tabs, decimal commas", write("Time (s)\tStrain (%)\tTorque (mNm)\n", "\t", true), Spec{}},
		{"commas, units line", write("time,strain,torque\n[s],[%],[mN m]\n", ",", false), Spec{}},
		{"metadata, columns by number", write("Sample: made-up gel A\nOperator: nobody\n\nt;g [%];M\n", ";", true), Spec{Time: "1", Motion: "2", Kind: Strain, Torque: "3", TorqueUnit: "mN m"}},
		{"UTF-16 with a byte-order mark", utf16le(write("time [s];strain [%];torque [µN m]\n", ";", true)), Spec{TorqueUnit: "mN m"}},
		{"Latin-1", latin1(write("time [s];strain [%];torque [µN m]\n", ";", true)), Spec{TorqueUnit: "mN m"}},
	} {
		l, err := Read(strings.NewReader(c.csv), c.spec)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		p, err := l.Program(plates)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		// 150 % of strain over 1 s is a rate of 1.5 /s from 1 to 3 s.
		if len(p) != 1 || p[0].StartS != 1 || p[0].EndS != 3 || math.Abs(p[0].RatePerS-1.5) > 1e-12 || math.Abs(p[0].WallSpeedUMPerS-750) > 1e-9 {
			t.Errorf("%s: program %+v", c.name, p)
		}
		if len(l.TorqueNM) != len(rows) || math.Abs(l.TorqueNM[2]-2e-3) > 1e-15 {
			t.Errorf("%s: torque %v N m, want 2 mN m in the middle", c.name, l.TorqueNM)
		}
	}
}

func TestReadAngularVelocity(t *testing.T) {
	cone := geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 20, ConeAngleDeg: 2}
	// 6 rpm is 2 pi x 6 / 60 = 0.6283 rad/s.
	csv := "time [s],speed [rpm],stress [kPa]\n0,0,0\n1,0,0\n1.5,6,1\n2,6,1\n2.5,6,1\n3,0,0\n4,0,0\n"
	l, err := Read(strings.NewReader(csv), Spec{})
	if err != nil {
		t.Fatal(err)
	}
	if l.Kind != RPM || l.StressPa[2] != 1000 {
		t.Fatalf("kind %q, stress %v", l.Kind, l.StressPa)
	}
	p, err := l.Program(cone)
	if err != nil {
		t.Fatal(err)
	}
	w := 2 * math.Pi * 6 / 60
	// Samples give the speed at their times: the changes come midway
	// between the samples on either side.
	if len(p) != 1 || math.Abs(p[0].StartS-1.25) > 1e-12 || math.Abs(p[0].EndS-2.75) > 1e-12 ||
		math.Abs(p[0].RatePerS-w/math.Tan(2*math.Pi/180)) > 1e-9 {
		t.Errorf("program %+v, want 1.25-2.75 s at %g /s", p, w/math.Tan(2*math.Pi/180))
	}
}

func TestReadBad(t *testing.T) {
	plates := geometry.Geometry{Kind: geometry.Plates, GapUM: 500}
	for _, bad := range []struct {
		csv  string
		spec Spec
		want string
	}{
		{"t,a\nx,y\n", Spec{Time: "t", Motion: "a", Kind: Strain}, "no data lines"},
		{"t,a\n0,0\n1,1\n2,x\n", Spec{Time: "t", Motion: "a", Kind: Strain}, `"x"`},
		{"t,a\n0,0\n1,1\n", Spec{Time: "t", Motion: "b", Kind: Strain}, `no motion column named "b"`},
		{"t,a\n0,0\n0,1\n", Spec{Time: "t", Motion: "a", Kind: Strain}, "does not come after"},
		{"t,a\n0,0\n1,1\n", Spec{Kind: "torque"}, `"torque"`},
		{"t,a\n0,0\n1,1\n", Spec{Motion: "7", Kind: Strain}, "column 7"},
		{"time,colour\n0,0\n1,1\n", Spec{}, "no motion column"},
		{"t,a,q\n0,0,1\n1,1,1\n", Spec{Time: "1", Motion: "2", Kind: Strain, Torque: "3", TorqueUnit: "ft lb"}, "ft lb"},
		{"t,a\n0,0\n1,1,3\n", Spec{Kind: Strain}, "line 3 has 3 columns"},
		{"t,a\n0,0\n", Spec{Kind: Strain}, "1 samples"},
	} {
		_, err := Read(strings.NewReader(bad.csv), bad.spec)
		if err == nil || !strings.Contains(err.Error(), bad.want) {
			t.Errorf("%q: got %v, want %q", bad.csv, err, bad.want)
		}
	}
	l, err := Read(strings.NewReader("t,a\n0,0\n1,1\n"), Spec{Kind: AngleRad})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := l.Program(plates); err == nil || !strings.Contains(err.Error(), "rotating tool") {
		t.Errorf("an angle between sliding plates: %v", err)
	}
}

// logStepTolS is how closely a step read from the reference log must be
// timed: the log is sampled every 0.02 s and its steps start and end on
// samples, so only rounding separates them.
const logStepTolS = 1e-9

// TestTestdataLog reads the reference rheometer log: the 4 degree cone
// turns at a constant rate by twice the cone angle between 0.2 and 0.7 s.
// At the observed rim the sample between the plate and the cone's surface,
// R tan a above it, is sheared by the rim's travel R theta over that gap,
// so the strain is theta / tan a (the small-angle textbook form theta / a,
// e.g. Macosko 1994, Rheology: Principles, Measurements and Applications,
// ch. 5 (from memory), differs from it by 0.16 % at 4 degrees).
func TestTestdataLog(t *testing.T) {
	testdata := filepath.Join("..", "..", "testdata")
	e, err := experiment.Load(filepath.Join(testdata, "experiments", "cone-plate.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(testdata, "rheometer", "cone-plate-step.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	l, err := Read(f, Spec{})
	if err != nil {
		t.Fatal(err)
	}
	if l.Kind != AngleRad || l.TorqueHeader != "torque_mNm" || math.Abs(l.TorqueNM[11]-0.072e-3) > 1e-15 {
		t.Errorf("kind %q, torque column %q, torque %g N m at 0.22 s, want angle_rad, torque_mNm, 0.072 mN m", l.Kind, l.TorqueHeader, l.TorqueNM[11])
	}
	p, err := l.Program(e.Geometry)
	if err != nil {
		t.Fatal(err)
	}
	// The log's angles are written to 1e-6 rad of 0.14 rad.
	const rateTol = 1e-4
	a := 4 * math.Pi / 180
	strain := 2 * a / math.Tan(a)
	if len(p) != 1 || math.Abs(p[0].StartS-0.2) > logStepTolS || math.Abs(p[0].EndS-0.7) > logStepTolS ||
		math.Abs(p[0].Strain/strain-1) > rateTol || math.Abs(p[0].RatePerS/(strain/0.5)-1) > rateTol {
		t.Errorf("program %+v, want one step 0.2-0.7 s of strain %.6f", p, strain)
	}
}
