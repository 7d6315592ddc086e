package experiment

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib/geometry"
)

// Fuzz targets of the experiment file's and the rheometer log's readers.
// Their seed corpora are the repository's example files (added below) and
// the inputs checked in under testdata/fuzz/FuzzParse and
// testdata/fuzz/FuzzReadLog (Go's layout), which every `go test` replays;
// `go test -fuzz FuzzParse ./calib/experiment` searches further.

// FuzzParse checks that no experiment file makes Parse panic, and that a
// file it accepts is valid and survives a write and a second read.
func FuzzParse(f *testing.F) {
	names, _ := filepath.Glob(filepath.Join("..", "..", "testdata", "experiments", "*.yaml"))
	for _, n := range names {
		if b, err := os.ReadFile(n); err == nil {
			f.Add(b)
		}
	}
	f.Add([]byte(base))
	f.Fuzz(func(t *testing.T, b []byte) {
		e, err := Parse(bytes.NewReader(b))
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
			return
		}
		if err := e.Validate(); err != nil {
			t.Fatalf("Parse accepted a file Validate refuses: %v", err)
		}
		var buf bytes.Buffer
		if err := e.Write(&buf); err != nil {
			t.Fatalf("writing an accepted file: %v", err)
		}
		if _, err := Parse(&buf); err != nil {
			t.Fatalf("an accepted file, written, is refused: %v\n%s", err, buf.Bytes())
		}
	})
}

// FuzzReadLog checks that no log makes ReadLog panic, and that a program
// it returns is valid.
func FuzzReadLog(f *testing.F) {
	if b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "rheometer", "cone-plate-step.csv")); err == nil {
		f.Add(b, "time_s", "angle_rad", LogAngleRad)
	}
	f.Add([]byte("0,0,0\n1,0,0\n2,1.5,1.5\n3,3,1.5\n4,3,0\n"), "1", "2", LogStrain)
	f.Add([]byte("t;rate\n0;0\n0,5;1\n1;1\n"), "t", "rate", LogRate)
	cone := geometry.Geometry{Kind: geometry.ConePlate, RadiusMM: 25, ConeAngleDeg: 4}
	f.Fuzz(func(t *testing.T, b []byte, tc, vc, kind string) {
		p, err := ReadLog(bytes.NewReader(b), LogColumns{Time: tc, Value: vc, Kind: kind}, cone)
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
			return
		}
		for i, s := range p {
			if !(s.EndS > s.StartS) || s.StartS < 0 || (i > 0 && s.StartS < p[i-1].EndS) {
				t.Fatalf("step %d of the program is not valid: %+v", i, s)
			}
		}
	})
}
