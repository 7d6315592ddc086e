package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
	"gaptrace/track/synth"
)

// TestProfileWindows: every --window is analysed into its own entry of
// shear_phases, and a window in no shear phase is refused (exit 2).
func TestProfileWindows(t *testing.T) {
	dir := t.TempDir()
	in, exp := writeProfileInput(t, dir, "homogeneous") // shear 0.5-2 s
	out := filepath.Join(dir, "out")
	var stderr bytes.Buffer
	wins := [][2]float64{{0.6, 1.0}, {1.0, 1.5}, {1.5, 2.0}}
	args := []string{"profile", "-e", exp, "-o", out}
	for _, w := range wins {
		args = append(args, "--window", strconv.FormatFloat(w[0], 'g', -1, 64)+":"+strconv.FormatFloat(w[1], 'g', -1, 64))
	}
	if st := mainArgs(append(args, in), &stderr); st != 0 {
		t.Fatalf("exit %d: %s", st, stderr.String())
	}
	s, err := summary.Read(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	if len(s.ShearPhases) != len(wins) {
		t.Fatalf("%d shear phases for %d windows", len(s.ShearPhases), len(wins))
	}
	for i, w := range wins {
		sp := s.ShearPhases[i]
		if sp.WindowS != w || sp.StartS != 0.5 || sp.Verdict != rheometry.Homogeneous {
			t.Errorf("entry %d: window %v of phase %g-%g s, %s; want window %v of 0.5-2 s, homogeneous", i, sp.WindowS, sp.StartS, sp.EndS, sp.Verdict, w)
		}
	}
	stderr.Reset()
	st := mainArgs([]string{"profile", "-e", exp, "-o", filepath.Join(dir, "out2"), "--window", "1:1.5", "--window", "2.2:2.8", in}, &stderr)
	if msg := strings.TrimSpace(stderr.String()); st != 2 || !strings.HasPrefix(msg, "gaptrace: ") || !strings.Contains(msg, "overlaps no shear phase") || strings.Contains(msg, "\n") {
		t.Errorf("a window after the stop: exit %d, stderr %q; want 2 and one line", st, msg)
	}
}

// TestProfileLog analyses the three-step start-up (0.5, 2 and 1 /s on a
// cone) from its tracks with the rendered rheometer log (strain and torque
// in mN m, semicolons, decimal commas, units in the headers, its clock
// 3.2 s ahead): the phases come from the log (source log) within one
// frame of the truth, each step is homogeneous, each phase's wall stress
// is the log's torque over its window through the cone-plate relation
// tau = 3M / (2 pi R^3) (Macosko, Rheology, 1994, ch. 5, from memory)
// written out here, and the stress maximum lies within one log sample of
// the renderer's.
func TestProfileLog(t *testing.T) {
	dir := t.TempDir()
	in, exp := writeProfileInput(t, dir, "startup-3step")
	s, err := synth.Builtin("startup-3step", 3)
	if err != nil {
		t.Fatal(err)
	}
	var lb bytes.Buffer
	if err := s.WriteLog(&lb); err != nil {
		t.Fatal(err)
	}
	logPath := filepath.Join(dir, "log.csv")
	if err := os.WriteFile(logPath, lb.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	// The experiment file without its motion: the log alone gives it.
	e, err := os.ReadFile(exp)
	if err != nil {
		t.Fatal(err)
	}
	noMotion := string(e[:bytes.Index(e, []byte("motion:"))])
	if i := bytes.Index(e, []byte("tracers:")); i > 0 {
		noMotion += string(e[i:])
	}
	exp2 := filepath.Join(dir, "no-motion.yaml")
	if err := os.WriteFile(exp2, []byte(noMotion), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	var stderr bytes.Buffer
	if st := mainArgs([]string{"profile", "-e", exp2, "-o", out, "--log", logPath, "--log-offset", "-3.2", in}, &stderr); st != 0 {
		t.Fatalf("exit %d: %s", st, stderr.String())
	}
	got, err := summary.Read(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	truth := s.Truth()
	if len(got.ShearPhases) != len(truth.Steps) {
		t.Fatalf("%d shear phases, want %d", len(got.ShearPhases), len(truth.Steps))
	}
	for _, ph := range got.Phases {
		if ph.Source != "log" {
			t.Errorf("phase %+v: source %q, want log", ph, ph.Source)
		}
	}
	frame, sample := 1/s.FPS, 1/s.Log.RateHz
	r := s.Geometry.RadiusMM * 1e-3
	perNM := 3 / (2 * math.Pi * r * r * r)
	rows := logRows(t, lb.String())
	for i, sp := range got.ShearPhases {
		tr := truth.Steps[i]
		if math.Abs(sp.StartS-tr.StartS) > frame || math.Abs(sp.EndS-tr.EndS) > frame {
			t.Errorf("phase %d: %.4f-%.4f s, truth %.4f-%.4f s", i+1, sp.StartS, sp.EndS, tr.StartS, tr.EndS)
		}
		if sp.Verdict != rheometry.Homogeneous || math.Abs(float64(sp.NominalRatePerS)/tr.RatePerS-1) > 1e-6 {
			t.Errorf("phase %d: %s at %v /s, want homogeneous at %g /s", i+1, sp.Verdict, sp.NominalRatePerS, tr.RatePerS)
		}
		var sum float64
		n := 0
		for _, row := range rows {
			if tS := row[0] - 3.2; tS >= sp.WindowS[0] && tS <= sp.WindowS[1] {
				sum += row[2] * 1e-3 * perNM // mN m
				n++
			}
		}
		if want := sum / float64(n); math.Abs(float64(sp.WallStressPa)/want-1) > 1e-6 || !(sp.WallStressErrPa > 0) {
			t.Errorf("phase %d: wall stress %v ± %v Pa, the log's torque gives %.6g Pa", i+1, sp.WallStressPa, sp.WallStressErrPa, want)
		}
		if sp.StressPeakS.Known() != tr.StressPeakS.Known() {
			t.Errorf("phase %d: stress peak %v, truth %v", i+1, sp.StressPeakS, tr.StressPeakS)
		} else if tr.StressPeakS.Known() && math.Abs(float64(sp.StressPeakS)-(float64(tr.StressPeakS)-tr.StartS)) > sample {
			t.Errorf("phase %d: stress peak %v s after the start, truth %.4f s", i+1, sp.StressPeakS, float64(tr.StressPeakS)-tr.StartS)
		}
	}
}

// logRows parses a log of semicolons and decimal commas, header skipped.
func logRows(t *testing.T, log string) [][]float64 {
	t.Helper()
	var out [][]float64
	for _, l := range strings.Split(strings.TrimSpace(log), "\n")[1:] {
		var row []float64
		for _, f := range strings.Split(l, ";") {
			v, err := strconv.ParseFloat(strings.Replace(f, ",", ".", 1), 64)
			if err != nil {
				t.Fatalf("log line %q: %v", l, err)
			}
			row = append(row, v)
		}
		out = append(out, row)
	}
	return out
}
