package calib

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzLoad checks that no calibration.json makes Load panic, that its
// errors are one line, and that a calibration it accepts maps a point of
// the gap into the image and back. The seed corpus is the repository's
// reference calibration and the inputs checked in under
// testdata/fuzz/FuzzLoad (Go's layout), which every `go test` replays.
func FuzzLoad(f *testing.F) {
	if b, err := os.ReadFile(filepath.Join("..", "testdata", "slip", "calibration.json")); err == nil {
		f.Add(b)
	}
	f.Add([]byte(`{"um_per_px": 2, "gap_um": 800}`))
	f.Add([]byte(`{"um_per_px": 1e-300, "gap_um": 1e308, "stationary_wall_px": [[0,1],[1,1]], "moving_wall_px": [[0,0],[1,0]]}`))
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(dir, "calibration.json")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		c, err := Load(p)
		if err != nil {
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error of several lines: %q", err)
			}
			return
		}
		x, y := c.ToImage(c.GapUM/2, c.GapUM/2)
		c.ToGap(x, y)
	})
}
