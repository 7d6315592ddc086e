package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/profile"
	"gaptrace/profile/cessation"
	"gaptrace/profile/summary"
	"gaptrace/track/synth"
	"gaptrace/track/synth/acceptance"
	"gaptrace/track/tracks"
)

// writeProfileInput writes tracks.csv, calibration.json and the experiment
// file of synth's built-in scenario into dir, from the true positions (each
// tracer's track cut where it wraps around the scenario's strip).
func writeProfileInput(t *testing.T, dir, name string) (tracksPath, expPath string) {
	t.Helper()
	s, err := synth.Builtin(name, 3)
	if err != nil {
		t.Fatal(err)
	}
	pts := s.TrackPoints()
	last := map[int]tracks.Point{}
	ids := map[int]int{}
	next := 0
	for i, p := range pts {
		q, ok := last[p.Track]
		if !ok || math.Abs(p.XUM-q.XUM) > float64(s.WidthPx)*s.UMPerPx/2 {
			ids[p.Track] = next
			next++
		}
		last[p.Track] = p
		pts[i].Track = ids[p.Track]
	}
	var b bytes.Buffer
	if err := tracks.WriteCSV(&b, pts); err != nil {
		t.Fatal(err)
	}
	tracksPath = filepath.Join(dir, "tracks.csv")
	if err := os.WriteFile(tracksPath, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	cb, err := json.Marshal(s.Calibration())
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "calibration.json"), cb, 0o644); err != nil {
		t.Fatal(err)
	}
	var eb bytes.Buffer
	if err := s.Experiment().Write(&eb); err != nil {
		t.Fatal(err)
	}
	expPath = filepath.Join(dir, "experiment.yaml")
	if err := os.WriteFile(expPath, eb.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return tracksPath, expPath
}

func TestProfileCommand(t *testing.T) {
	dir := t.TempDir()
	in, exp := writeProfileInput(t, dir, "step-plane")
	out := filepath.Join(dir, "out")
	var stderr bytes.Buffer
	if st := mainArgs([]string{"profile", "-e", exp, "-o", out, in}, &stderr); st != 0 {
		t.Fatalf("exit %d: %s", st, stderr.String())
	}
	s, err := summary.Read(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if len(s.ShearPhases) != 1 || s.AfterStop == nil || s.AfterStop.Verdict != cessation.Moving ||
		s.AfterStop.Mode == nil || *s.AfterStop.Mode != cessation.ModeBulk {
		t.Errorf("summary: %d shear phases, after stop %+v; want one phase and a failure plane", len(s.ShearPhases), s.AfterStop)
	}
	for name, head := range map[string][]string{"profiles.csv": profile.ProfilesHeader, "after_stop.csv": profile.AfterStopHeader} {
		f, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		rows, err := csv.NewReader(bytes.NewReader(f)).ReadAll()
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if strings.Join(rows[0], ",") != strings.Join(head, ",") || len(rows) < 2 {
			t.Errorf("%s: header %v and %d rows", name, rows[0], len(rows))
		}
	}
	// The contract's null: no NaN may reach summary.json.
	b, _ := os.ReadFile(filepath.Join(out, "summary.json"))
	if bytes.Contains(b, []byte("NaN")) {
		t.Error("summary.json holds NaN")
	}
}

func TestProfileCommandBadInput(t *testing.T) {
	dir := t.TempDir()
	in, exp := writeProfileInput(t, dir, "homogeneous")
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"no experiment", []string{"profile", "-o", dir, in}, "experiment file"},
		{"no calibration", []string{"profile", "-e", exp, "-o", dir, "--calibration", filepath.Join(dir, "none.json"), in}, "calibration"},
		{"bad window", []string{"profile", "-e", exp, "-o", dir, "--window", "2:1", in}, "window"},
		{"missing tracks", []string{"profile", "-e", exp, "-o", dir, filepath.Join(dir, "none.csv")}, "none.csv"},
	}
	for _, c := range cases {
		var stderr bytes.Buffer
		st := mainArgs(c.args, &stderr)
		// The flag package prints its own usage before a flag error (see
		// newFlags), so only the last line is checked.
		lines := strings.Split(strings.TrimSpace(stderr.String()), "\n")
		msg := lines[len(lines)-1]
		if st != 2 || !strings.HasPrefix(msg, "gaptrace: ") || !strings.Contains(msg, c.want) {
			t.Errorf("%s: exit %d, stderr %q; want 2 and one line naming %q", c.name, st, msg, c.want)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "summary.json")); err == nil {
		t.Error("a failed run left summary.json behind")
	}
}

// TestProfileTestdata runs profile on the reference tracks of testdata/slip
// (tracked by gaptrace track from a rendered MJPEG video) and compares the
// result with the rendering's truth, within the end-to-end tolerances.
func TestProfileTestdata(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "slip")
	out := t.TempDir()
	var stderr bytes.Buffer
	if st := mainArgs([]string{"profile", "-e", filepath.Join(dir, "experiment.yaml"), "-o", out, filepath.Join(dir, "tracks.csv")}, &stderr); st != 0 {
		t.Fatalf("exit %d: %s", st, stderr.String())
	}
	got, err := summary.Read(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	truth, err := synth.ReadTruth(filepath.Join(dir, synth.TruthFile))
	if err != nil {
		t.Fatal(err)
	}
	if len(got.ShearPhases) != 1 || len(truth.Summary.ShearPhases) != 1 {
		t.Fatalf("%d shear phases, want 1", len(got.ShearPhases))
	}
	sp, tp := got.ShearPhases[0], truth.Summary.ShearPhases[0]
	v := float64(tp.WallSpeedUMPerS)
	if math.Abs(float64(sp.BulkRatePerS/tp.BulkRatePerS)-1) > e2eRateTol ||
		math.Abs(float64(sp.SlipStationaryUMPerS-tp.SlipStationaryUMPerS))/v > acceptance.SlipFrac ||
		math.Abs(float64(sp.SlipMovingUMPerS-tp.SlipMovingUMPerS))/v > acceptance.SlipFrac || sp.Verdict != tp.Verdict {
		t.Errorf("rate %v, slips %v and %v um/s, %s; truth %v, %v, %v, %s", sp.BulkRatePerS, sp.SlipStationaryUMPerS,
			sp.SlipMovingUMPerS, sp.Verdict, tp.BulkRatePerS, tp.SlipStationaryUMPerS, tp.SlipMovingUMPerS, tp.Verdict)
	}
}
