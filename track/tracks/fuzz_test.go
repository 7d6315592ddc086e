package tracks

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzReadCSV checks that no tracks.csv makes ReadCSV panic or accept a
// row that is not a detection, and that what it accepts survives a write
// and a second read. The seed corpus is the repository's reference tracks
// (their first lines), a few edge cases below, and the inputs checked in
// under testdata/fuzz/FuzzReadCSV (Go's layout), which every `go test`
// replays; `go test -fuzz FuzzReadCSV ./track/tracks` searches further.
func FuzzReadCSV(f *testing.F) {
	if b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "slip", "tracks.csv")); err == nil {
		lines := strings.SplitAfterN(string(b), "\n", 30)
		f.Add([]byte(strings.Join(lines[:len(lines)-1], "")))
	}
	head := strings.Join(Header, ",") + "\n"
	f.Add([]byte(head + "0,1,0.01,1,2,3,4,5,6\n"))
	f.Add([]byte(head + "-1,0,0,NaN,2,3,4,5,6\n"))
	f.Add([]byte(head + "0,-3,0,1,2,3,4,5,6\n"))
	f.Add([]byte(head + "0,1e300,0,1,2,3,4,5,6\n"))
	f.Add([]byte(head + "1.5,1,0,1,2,3,4,5,6\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		pts, err := ReadCSV(bytes.NewReader(b))
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
			return
		}
		for i, p := range pts {
			for _, x := range []float64{p.TS, p.XPx, p.YPx, p.XUM, p.YUM, p.Brightness, p.SizePx} {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Fatalf("row %d accepted with %g: %+v", i, x, p)
				}
			}
			if p.Frame < 0 || p.Frame > MaxFrame || p.Track < Unlinked {
				t.Fatalf("row %d accepted with frame %d, track %d", i, p.Frame, p.Track)
			}
		}
		var buf bytes.Buffer
		if err := WriteCSV(&buf, pts); err != nil {
			t.Fatalf("writing accepted rows: %v", err)
		}
		again, err := ReadCSV(&buf)
		if err != nil {
			t.Fatalf("accepted rows, written, are refused: %v", err)
		}
		if len(again) != len(pts) {
			t.Fatalf("%d rows read back as %d", len(pts), len(again))
		}
	})
}
