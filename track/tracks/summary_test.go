package tracks

import (
	"bytes"
	"math"
	"strings"
	"testing"
)

func TestSummarize(t *testing.T) {
	pts := []Point{
		{Track: 1, Frame: 4, TS: 0.04, XUM: 30, YUM: 12},
		{Track: 0, Frame: 0, TS: 0, XUM: 0, YUM: 100},
		{Track: 1, Frame: 2, TS: 0.02, XUM: 10, YUM: 10},
		{Track: Unlinked, Frame: 3, TS: 0.03, XUM: 5, YUM: 5},
		{Track: 0, Frame: 1, TS: 0.01, XUM: 2, YUM: 100},
		{Track: 2, Frame: 7, TS: 0.07, XUM: 1, YUM: 50},
	}
	ss := Summarize(pts)
	if len(ss) != 3 {
		t.Fatalf("%d summaries, want 3: %+v", len(ss), ss)
	}
	// Expected values worked out by hand from the points above.
	// tol: float64 division of small numbers.
	const tol = 1e-9
	want := []Summary{
		{Track: 0, FirstFrame: 0, LastFrame: 1, Points: 2, TStartS: 0, TEndS: 0.01, MeanYUM: 100, VXUMPerS: 200, VYUMPerS: 0},
		{Track: 1, FirstFrame: 2, LastFrame: 4, Points: 2, TStartS: 0.02, TEndS: 0.04, MeanYUM: 11, VXUMPerS: 1000, VYUMPerS: 100},
	}
	for i, w := range want {
		g := ss[i]
		if g.Track != w.Track || g.FirstFrame != w.FirstFrame || g.LastFrame != w.LastFrame || g.Points != w.Points ||
			math.Abs(g.MeanYUM-w.MeanYUM) > tol || math.Abs(g.VXUMPerS-w.VXUMPerS) > tol || math.Abs(g.VYUMPerS-w.VYUMPerS) > tol {
			t.Errorf("summary %d = %+v, want %+v", i, g, w)
		}
	}
	if ss[1].Frames() != 3 {
		t.Errorf("track 1 spans %d frames, want 3", ss[1].Frames())
	}
	if !math.IsNaN(ss[2].VXUMPerS) {
		t.Errorf("single-point track has velocity %g, want NaN", ss[2].VXUMPerS)
	}
	var b bytes.Buffer
	if err := WriteSummaryCSV(&b, ss); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(b.String()), "\n")
	if len(lines) != 4 || lines[0] != strings.Join(SummaryHeader, ",") || !strings.HasSuffix(lines[3], ",,") {
		t.Errorf("summary CSV:\n%s", b.String())
	}
}
