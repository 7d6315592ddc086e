package summary

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestNumNull checks that a shear phase's unknown numbers read back as
// unknown (the encoding itself is tested in calib/jsonnum).
func TestNumNull(t *testing.T) {
	var sp ShearPhase
	if err := json.Unmarshal([]byte(`{"bulk_rate_per_s": null, "slip_fraction": 0.25}`), &sp); err != nil {
		t.Fatal(err)
	}
	if sp.BulkRatePerS.Known() || sp.SlipFraction != 0.25 {
		t.Errorf("read back %v, %v", sp.BulkRatePerS, sp.SlipFraction)
	}
	if b, err := json.Marshal(ShearPhase{BulkRatePerS: Null}); err != nil || !strings.Contains(string(b), `"bulk_rate_per_s":null`) {
		t.Errorf("unknown bulk rate written as %s (%v)", b, err)
	}
}

// TestWrite checks that Write leaves the contract's empty lists as [] and
// after_stop as null.
func TestWrite(t *testing.T) {
	path := filepath.Join(t.TempDir(), "summary.json")
	if err := New().Write(path); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"phases": []`, `"shear_phases": []`, `"warnings": []`, `"after_stop": null`, `"name": "gaptrace"`} {
		if !strings.Contains(string(b), want) {
			t.Errorf("summary.json lacks %s:\n%s", want, b)
		}
	}
}

// TestMissingNumbersAreNull reads back records without some of their
// numbers (a summary of an earlier version): those are null, not 0, and
// the numbers given are kept.
func TestMissingNumbersAreNull(t *testing.T) {
	var s Summary
	in := `{"shear_phases": [{"start_s": 0.5, "bulk_rate_per_s": 1.5, "bands": [{"from_um": 0, "rate_per_s": 1.5}],
		"in_time": [{"t_start_s": 0.5, "strain": 0.1}]}],
		"after_stop": {"stop_s": 2, "noise_floor_um": 0.4}}`
	if err := json.Unmarshal([]byte(in), &s); err != nil {
		t.Fatal(err)
	}
	sp := s.ShearPhases[0]
	cases := []struct {
		name      string
		got       Num
		known     bool
		wantValue float64
	}{
		{"bulk_rate_per_s", sp.BulkRatePerS, true, 1.5},
		{"slip_stationary_um_per_s", sp.SlipStationaryUMPerS, false, 0},
		{"inhomogeneity_onset_s", sp.InhomogeneityOnsetS, false, 0},
		{"wall_stress_pa (embedded)", sp.WallStressPa, false, 0},
		{"band rate_per_s", sp.Bands[0].RatePerS, true, 1.5},
		{"band to_um", sp.Bands[0].ToUM, false, 0},
		{"in_time strain", sp.InTime[0].Strain, true, 0.1},
		{"in_time bulk_rate_per_s", sp.InTime[0].BulkRatePerS, false, 0},
		{"after_stop noise_floor_um", s.AfterStop.NoiseFloorUM, true, 0.4},
		{"after_stop plane_um", s.AfterStop.PlaneUM, false, 0},
	}
	for _, c := range cases {
		if c.got.Known() != c.known || (c.known && float64(c.got) != c.wantValue) {
			t.Errorf("%s = %v, want known %v (%g)", c.name, c.got, c.known, c.wantValue)
		}
	}
	if sp.StartS != 0.5 || s.AfterStop.StopS != 2 {
		t.Errorf("plain numbers lost: start %g, stop %g", sp.StartS, s.AfterStop.StopS)
	}
}
