package rheolog

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib/geometry"
)

// FuzzRead checks that no log file makes Read or Log.Program panic, that
// Read's errors are one line, and that a log it accepts has finite times
// in increasing order, one motion value per time (and one torque and
// stress value when those columns are read), and gives a motion program
// of finite steps in time order. The seed corpus is the repository's
// reference log, the forms of the package's tests below, and the inputs
// checked in under testdata/fuzz/FuzzRead (Go's layout), which every
// `go test` replays; `go test -fuzz FuzzRead ./calib/rheolog` searches
// further.
func FuzzRead(f *testing.F) {
	if b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "rheometer", "cone-plate-step.csv")); err == nil {
		lines := strings.SplitAfterN(string(b), "\n", 40)
		f.Add([]byte(strings.Join(lines[:len(lines)-1], "")))
	}
	f.Add([]byte("time [s];strain [1]\n0;0\n0,5;0\n1,0;0,5\n1,5;1,0\n2,0;1,0\n"))
	f.Add([]byte("Sample: made-up gel\ntime\tangle\ttorque\n[s]\t[mrad]\t[mN m]\n0\t0\t0\n1\t1\t0.1\n2\t2\t0.2\n"))
	f.Add([]byte("t_s,rate_1/s,stress_Pa\n0,0,0\n1,1,10\n2,1,11\n3,0,0\n"))
	f.Add([]byte("\xef\xbb\xbftime (s),speed (rpm)\n0,0\n1,1e308\n2,-1e308\n"))
	f.Add([]byte("\xff\xfet\x00,\x00r\x00a\x00t\x00e\x00\n\x000\x00,\x000\x00\n\x001\x00,\x001\x00\n\x00"))
	f.Add([]byte("time;strain\n0;NaN\n1;Inf\n1;0\n"))
	g := geometry.Geometry{Kind: geometry.Plates, GapUM: 800}
	cone := geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 1}
	f.Fuzz(func(t *testing.T, b []byte) {
		l, err := Read(bytes.NewReader(b), Spec{})
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
			return
		}
		n := len(l.TimeS)
		if n < minSamples || len(l.Motion) != n {
			t.Fatalf("accepted %d times and %d motion values", n, len(l.Motion))
		}
		if (l.TorqueNM != nil && len(l.TorqueNM) != n) || (l.StressPa != nil && len(l.StressPa) != n) {
			t.Fatalf("accepted %d times, %d torques, %d stresses", n, len(l.TorqueNM), len(l.StressPa))
		}
		for i, ts := range l.TimeS {
			if math.IsNaN(ts) || math.IsInf(ts, 0) || (i > 0 && !(ts > l.TimeS[i-1])) {
				t.Fatalf("accepted time %g s at sample %d after %v", ts, i, l.TimeS[max(0, i-1):i])
			}
		}
		for _, geo := range []geometry.Geometry{g, cone} {
			p, err := l.Program(geo)
			if err != nil {
				if strings.Contains(err.Error(), "\n") {
					t.Errorf("error of several lines: %q", err)
				}
				continue
			}
			for i, s := range p {
				if !(s.EndS > s.StartS) || math.IsInf(s.EndS, 0) || (i > 0 && s.StartS < p[i-1].EndS) {
					t.Fatalf("step %d of the program: %+v (after %+v)", i, s, p[max(0, i-1)])
				}
			}
		}
	})
}
