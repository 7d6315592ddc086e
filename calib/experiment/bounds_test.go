package experiment

import (
	"bytes"
	"strconv"
	"strings"
	"testing"
)

// base is a valid plates experiment; each case of TestBounds replaces one
// line of it.
const base = `geometry:
  kind: plates
  gap_um: 800
camera:
  fps: 100
motion:
  - start_s: 0.5
    end_s: 2
    rate_per_s: 1
tracers:
  diameter_px: 5
`

// TestBounds checks that every value outside the bounds of bounds.go is
// refused with the key and the bound, and that values inside pass (the
// cases of issue 18: fps 1e-6, gap 1e15 and 1e308, um_per_px 1e-300, rate
// 1e300, 800 000 steps of 1 us).
func TestBounds(t *testing.T) {
	long := &strings.Builder{}
	long.WriteString("geometry:\n  kind: plates\n  gap_um: 800\nmotion:\n")
	for i := range MaxSegments + 1 {
		t0 := float64(i) * 1e-3
		long.WriteString("  - {start_s: " + ftoa(t0) + ", end_s: " + ftoa(t0+1e-3) + ", rate_per_s: 1}\n")
	}
	cases := []struct {
		name, from, to string
		want           string // "" : accepted
	}{
		{"fps 1e-6", "fps: 100", "fps: 1e-6", "camera.fps"},
		{"fps 1e8", "fps: 100", "fps: 1e8", "camera.fps"},
		{"fps 1e5", "fps: 100", "fps: 1e5", ""},
		{"gap 1e15", "gap_um: 800", "gap_um: 1e15", "geometry.gap_um"},
		{"gap 1e308", "gap_um: 800", "gap_um: 1e308", "geometry.gap_um"},
		{"gap 0.5", "gap_um: 800", "gap_um: 0.5", "geometry.gap_um"},
		{"um_per_px 1e-300", "fps: 100", "fps: 100\n  um_per_px: 1e-300", "camera.um_per_px"},
		{"um_per_px: gap of 4 px", "fps: 100", "fps: 100\n  um_per_px: 200", "camera.um_per_px"},
		{"um_per_px 2", "fps: 100", "fps: 100\n  um_per_px: 2", ""},
		{"rate 1e300", "rate_per_s: 1", "rate_per_s: 1e300", "motion[0].rate_per_s"},
		{"rate -1e7", "rate_per_s: 1", "rate_per_s: -1e7", "motion[0].rate_per_s"},
		{"speed 1e9", "rate_per_s: 1", "wall_speed_um_per_s: 1e9", "motion[0].wall_speed_um_per_s"},
		{"strain rate", "rate_per_s: 1", "strain: 1e7", "motion[0].strain"},
		{"end past ten days", "end_s: 2", "end_s: 1e6", "motion[0].end_s"},
		{"step shorter than a frame", "end_s: 2", "end_s: 0.505", "motion[0]: lasts"},
		{"diameter 1000", "diameter_px: 5", "diameter_px: 1000", "tracers.diameter_px"},
		{"diameter 0.1", "diameter_px: 5", "diameter_px: 0.1", "tracers.diameter_px"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			src := strings.Replace(base, c.from, c.to, 1)
			if src == base {
				t.Fatalf("%q not in the base file", c.from)
			}
			_, err := Parse(strings.NewReader(src))
			switch {
			case c.want == "" && err != nil:
				t.Errorf("refused: %v", err)
			case c.want != "" && err == nil:
				t.Errorf("accepted, want an error naming %s", c.want)
			case c.want != "" && !strings.Contains(err.Error(), c.want):
				t.Errorf("error %q does not name %s", err, c.want)
			case err != nil && strings.Contains(err.Error(), "\n"):
				t.Errorf("error of several lines: %q", err)
			}
			if err != nil {
				t.Logf("%v", err)
			}
		})
	}
	if _, err := Parse(bytes.NewReader([]byte(long.String()))); err == nil || !strings.Contains(err.Error(), "steps, more than") {
		t.Errorf("%d steps: %v, want refused", MaxSegments+1, err)
	}
	e, err := Parse(strings.NewReader(strings.Replace(base, "  fps: 100\n", "", 1)))
	if err != nil {
		t.Fatal(err)
	}
	if err := e.CheckAgainstRate(1000); err != nil {
		t.Errorf("1.5 s step at 1000 frames/s: %v", err)
	}
	if err := e.CheckAgainstRate(0.5); err == nil {
		t.Error("1.5 s step at 0.5 frames/s: accepted")
	}
}

func ftoa(v float64) string { return strings.TrimRight(strings.TrimRight(fmtG(v), "0"), ".") }

func fmtG(v float64) string { return strconv.FormatFloat(v, 'f', 6, 64) }
