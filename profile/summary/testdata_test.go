package summary

import (
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
)

// testdataSummary is a summary.json written by gaptrace profile on the
// reference tracks (testdata/slip).
var testdataSummary = filepath.Join("..", "..", "testdata", "slip", "summary.json")

// TestTestdataSchema checks the reference summary.json against the fields
// the interface contract (CONTRACT.md, "summary.json") requires, read as
// plain JSON so that the check does not go through this package's types,
// and that Read takes it.
func TestTestdataSchema(t *testing.T) {
	b, err := os.ReadFile(testdataSummary)
	if err != nil {
		t.Fatal(err)
	}
	var doc map[string]any
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	required := map[string][]string{
		"":             {"tool", "input", "calibration", "tracking", "phases", "shear_phases", "after_stop", "warnings"},
		"tool":         {"name", "version"},
		"input":        {"path", "frames", "fps", "width_px", "height_px"},
		"calibration":  {"um_per_px", "gap_um", "tilt_deg", "scale_source", "stationary_wall_px", "moving_wall_px"},
		"tracking":     {"detections", "tracks", "median_track_frames"},
		"phases":       {"kind", "start_s", "end_s", "source"},
		"shear_phases": {"start_s", "end_s", "window_s", "wall_speed_um_per_s", "nominal_rate_per_s", "bulk_rate_per_s", "bulk_rate_err_per_s", "slip_stationary_um_per_s", "slip_stationary_err_um_per_s", "slip_moving_um_per_s", "slip_moving_err_um_per_s", "slip_length_stationary_um", "slip_length_moving_um", "slip_fraction", "wall_slip", "bands", "banded", "verdict"},
		"after_stop":   {"stop_s", "observed_s", "noise_floor_um", "max_displacement_um", "recovered_strain", "verdict", "mode", "plane_um", "onset_after_stop_s"},
	}
	for obj, keys := range required {
		m := doc
		switch v := doc[obj].(type) {
		case map[string]any:
			m = v
		case []any: // a list: its first element
			if len(v) == 0 {
				t.Fatalf("%s is empty in the reference summary", obj)
			}
			m = v[0].(map[string]any)
		}
		for _, k := range keys {
			if _, ok := m[k]; !ok {
				t.Errorf("%s lacks %q", obj, k)
			}
		}
	}
	if _, err := Read(testdataSummary); err != nil {
		t.Errorf("Read: %v", err)
	}
}
