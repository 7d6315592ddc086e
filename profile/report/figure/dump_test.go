package figure

import (
	"os"
	"path/filepath"
	"testing"
)

func TestDump(t *testing.T) {
	dir := os.Getenv("FIGDUMP")
	if dir == "" {
		t.Skip("FIGDUMP not set")
	}
	frame, tracks := demoFrame()
	defer frame.Close()
	figs := map[string]func() (*Figure, error){
		"profile":   func() (*Figure, error) { return ProfilePlot(demoProfile()) },
		"spacetime": func() (*Figure, error) { return SpaceTimePlot(demoSpaceTime()) },
		"slip":      func() (*Figure, error) { return SlipPlot(demoSlip()) },
		"afterstop": func() (*Figure, error) { return AfterStopPlot(demoAfterStop()) },
		"detection": func() (*Figure, error) { return DetectionPlot(demoDetection()) },
		"overlay": func() (*Figure, error) {
			return OverlayPlot(&Overlay{Frame: frame, Calibration: demoCalibration(), Tracks: tracks})
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
