package summary

import (
	"encoding/json"
	"errors"
	"io"
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

// TestWriteAtomic checks that Write leaves only the final file, readable by
// all, with the contract's empty lists as [] and after_stop as null, and
// that a failed write leaves nothing under the final name.
func TestWriteAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "summary.json")
	s := New()
	if err := s.Write(path); err != nil {
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
	if fi, _ := os.Stat(path); fi.Mode().Perm() != fileMode {
		t.Errorf("mode %v, want %v", fi.Mode().Perm(), os.FileMode(fileMode))
	}
	failing := filepath.Join(dir, "tracks.csv")
	err = WriteAtomic(failing, func(w io.Writer) error {
		w.Write([]byte("half a row,"))
		return errors.New("disk full")
	})
	if err == nil || !strings.Contains(err.Error(), "disk full") {
		t.Errorf("WriteAtomic error = %v", err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("after a failed write the folder holds %d entries, want only summary.json", len(ents))
	}
}
