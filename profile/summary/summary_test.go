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
