package figure_test

import (
	"os"
	"path/filepath"
	"testing"

	. "gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/scenario"
)

func TestDump(t *testing.T) {
	dir := os.Getenv("FIGDUMP")
	if dir == "" {
		t.Skip("FIGDUMP not set")
	}
	frame, tracks := scenario.Frame()
	defer frame.Close()
	figs := map[string]func() (*Figure, error){
		"profile":   func() (*Figure, error) { return ProfilePlot(scenario.Profile()) },
		"spacetime": func() (*Figure, error) { return SpaceTimePlot(scenario.SpaceTime()) },
		"slip":      func() (*Figure, error) { return SlipPlot(scenario.Slip()) },
		"afterstop": func() (*Figure, error) { return AfterStopPlot(scenario.AfterStop()) },
		"detection": func() (*Figure, error) { return DetectionPlot(scenario.Detection()) },
		"overlay": func() (*Figure, error) {
			return OverlayPlot(&Overlay{Frame: frame, Calibration: scenario.Calibration(), Tracks: tracks})
		},
	}
	for name, f := range figs {
		fig, err := f()
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		os.WriteFile(filepath.Join(dir, name+".png"), fig.PNG, 0o644)
		os.WriteFile(filepath.Join(dir, name+".svg"), fig.SVG, 0o644)
	}
}
