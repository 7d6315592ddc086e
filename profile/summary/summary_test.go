package summary

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestNumNull checks the contract's rule that unknown numbers are null,
// never 0, NaN or a string, and that null reads back as unknown.
func TestNumNull(t *testing.T) {
	cases := []struct {
		v    Num
		want string
	}{
		{Num(1.5), "1.5"}, {Num(0), "0"}, {Num(-2e-7), "-2e-07"}, {Null, "null"},
		{Num(math.Inf(1)), "null"}, {Num(math.Inf(-1)), "null"},
	}
	for _, c := range cases {
		b, err := json.Marshal(c.v)
		if err != nil || string(b) != c.want {
			t.Errorf("Marshal(%v) = %s, %v; want %s", float64(c.v), b, err, c.want)
		}
	}
	var sp ShearPhase
	if err := json.Unmarshal([]byte(`{"bulk_rate_per_s": null, "slip_fraction": 0.25}`), &sp); err != nil {
		t.Fatal(err)
	}
	if sp.BulkRatePerS.Known() || sp.SlipFraction != 0.25 {
		t.Errorf("read back %v, %v", sp.BulkRatePerS, sp.SlipFraction)
	}
	if err := json.Unmarshal([]byte(`{"bulk_rate_per_s": "fast"}`), &sp); err == nil {
		t.Error("a string read as a number")
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
