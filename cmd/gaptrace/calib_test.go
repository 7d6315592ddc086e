package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/profile/report/figure"
	"gaptrace/track/synth"
)

// writeScenario renders a short synth scenario (track/synth) as PNG frames
// with its experiment file into dir.
func writeScenario(t *testing.T, dir, name string, mod func(*synth.Scenario)) *synth.Truth {
	t.Helper()
	s, err := synth.Builtin(name, 4)
	if err != nil {
		t.Fatal(err)
	}
	mod(s)
	tr, err := s.Write(dir, synth.Output{Format: synth.FormatPNG})
	if err != nil {
		t.Fatal(err)
	}
	return tr
}

func runCalibArgs(args ...string) (int, string) {
	var errw bytes.Buffer
	code := mainArgs(append([]string{"calib"}, args...), &errw)
	return code, errw.String()
}

func TestCalibCommand(t *testing.T) {
	in := t.TempDir()
	// A step strain with the moving wall at the bottom travelling to -x,
	// the scale left to the gap.
	tr := writeScenario(t, in, "step-quiescent", func(s *synth.Scenario) {
		s.Frames, s.TiltDeg, s.MovingSide, s.FlowSign, s.OmitScale = 140, -1.3, "bottom", -1, true
	})
	out := filepath.Join(t.TempDir(), "out")
	code, errs := runCalibArgs("-e", filepath.Join(in, synth.ExperimentFile), "-o", out, filepath.Join(in, synth.FramesDir))
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	t.Log(strings.TrimSpace(errs))
	cal, err := calib.Load(filepath.Join(out, "calibration.json"))
	if err != nil {
		t.Fatal(err)
	}
	want := tr.Summary.Calibration
	// Acceptance limits of issue 4.
	const scaleTolFrac, tiltTolDeg = 0.005, 0.05
	if d := cal.UMPerPx/want.UMPerPx - 1; math.Abs(d) > scaleTolFrac || cal.ScaleSource != calib.ScaleGap {
		t.Errorf("um_per_px %.5f (%s), truth %g", cal.UMPerPx, cal.ScaleSource, want.UMPerPx)
	}
	if math.Abs(cal.TiltDeg-want.TiltDeg) > tiltTolDeg {
		t.Errorf("tilt %.4f, truth %g", cal.TiltDeg, want.TiltDeg)
	}
	if cal.FlowSign != -1 {
		t.Errorf("flow sign %g, want -1 (found from the motion)", cal.FlowSign)
	}
	if cal.MovingWallPx[0][1] < cal.StationaryWallPx[0][1] {
		t.Errorf("moving wall %v is above the stationary wall %v", cal.MovingWallPx, cal.StationaryWallPx)
	}
	if !strings.Contains(errs, "calib: phases (experiment)") || strings.Contains(errs, "warning") {
		t.Errorf("stderr: %s", errs)
	}
	png := gocv.IMRead(filepath.Join(out, "calibration.png"), gocv.IMReadColor)
	defer png.Close()
	// The overlay is the report's frame figure: across both columns of a
	// journal page at the figures' resolution.
	if wantPx := figure.DoubleColumnCM / 2.54 * figure.DPI; png.Empty() || math.Abs(float64(png.Cols())-wantPx) > 1 {
		t.Errorf("calibration.png: %dx%d, want %.0f px wide", png.Cols(), png.Rows(), wantPx)
	}
	// Replacing only its own files: a foreign file stays.
	keep := filepath.Join(out, "notes.txt")
	if err := os.WriteFile(keep, []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	if code, errs := runCalibArgs("-e", filepath.Join(in, synth.ExperimentFile), "-o", out, "--motion=false", filepath.Join(in, synth.FramesDir)); code != 0 {
		t.Fatalf("second run: exit %d: %s", code, errs)
	}
	if _, err := os.Stat(keep); err != nil {
		t.Errorf("notes.txt gone: %v", err)
	}
	// A rheometer log whose step starts 10 frames (0.05 s) late: the phases
	// disagree and stderr says so.
	logPath := filepath.Join(in, "rheometer.csv")
	if err := os.WriteFile(logPath, []byte("time,strain\n0,0\n0.3,0\n0.55,0.5\n0.7,0.5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, errs = runCalibArgs("-e", filepath.Join(in, synth.ExperimentFile), "-o", out, "--log", logPath, "--log-time", "time",
		"--log-value", "strain", "--log-kind", "strain", filepath.Join(in, synth.FramesDir))
	if code != 0 || !strings.Contains(errs, "shear phase 1 starts at 0.300 s in the rheometer log but at 0.250 s in the video") ||
		!strings.Contains(errs, "phases (log)") {
		t.Errorf("with the log: exit %d, stderr %s", code, errs)
	}
}

func TestCalibCommandBadInput(t *testing.T) {
	in := t.TempDir()
	writeScenario(t, in, "homogeneous", func(s *synth.Scenario) { s.Frames = 3 })
	exp := filepath.Join(in, synth.ExperimentFile)
	// A frame without walls.
	blankDir := filepath.Join(t.TempDir(), "blank")
	if err := os.MkdirAll(blankDir, 0o755); err != nil {
		t.Fatal(err)
	}
	blank := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(60, 0, 0, 0), 480, 640, gocv.MatTypeCV8U)
	defer blank.Close()
	for _, n := range []string{"a.png", "b.png"} {
		if !gocv.IMWrite(filepath.Join(blankDir, n), blank) {
			t.Fatal("cannot write a blank frame")
		}
	}
	badExp := filepath.Join(t.TempDir(), "bad.yaml")
	if err := os.WriteFile(badExp, []byte("geometry:\n  kind: plates\n  gap_um: 800\ncolour: blue\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"walls not found", []string{"-e", exp, "-o", out, blankDir}, "walls not found"},
		{"unreadable input", []string{"-e", exp, "-o", out, filepath.Join(in, "nothing.avi")}, "nothing.avi"},
		{"wrong experiment file", []string{"-e", badExp, "-o", out, filepath.Join(in, synth.FramesDir)}, "colour"},
		{"no input", []string{"-e", exp, "-o", out}, "one INPUT"},
	} {
		code, errs := runCalibArgs(c.args...)
		lines := strings.Split(strings.TrimSpace(errs), "\n")
		last := lines[len(lines)-1]
		if code != 2 || !strings.HasPrefix(last, "gaptrace: ") || !strings.Contains(last, c.want) {
			t.Errorf("%s: exit %d, stderr %q; want 2 and a line naming %q", c.name, code, errs, c.want)
		}
		if _, err := os.Stat(filepath.Join(out, "calibration.json")); err == nil {
			t.Errorf("%s: calibration.json left behind", c.name)
		}
	}
}
