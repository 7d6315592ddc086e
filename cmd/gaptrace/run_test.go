package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/profile/cessation"
	"gaptrace/profile/report"
	"gaptrace/profile/summary"
	"gaptrace/track/synth"
	"gaptrace/track/synth/acceptance"
)

// End-to-end tolerances: the whole chain on rendered MJPEG video, where
// compression, detection and linking all add their errors to the
// profile's. The package tests of profile hold the analysis alone to the
// issue's tighter limits on exact positions.
const (
	// e2eRateTol is the relative error allowed on the bulk rate.
	e2eRateTol = 0.02
	// The slip velocities, the failure plane and the onset after the stop
	// are held to issue 6's limits (package acceptance) end to end, too.
	// e2eStrainTol is the absolute error allowed on the recovered strain.
	e2eStrainTol = 0.005
)

// renderScenario writes a built-in scenario into a temporary folder and
// returns the experiment file, the video and the truth.
func renderScenario(t *testing.T, name string, seed int64, change ...func(*synth.Scenario)) (expPath, video string, truth *synth.SummaryTruth) {
	t.Helper()
	sc, err := synth.Builtin(name, seed)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range change {
		f(sc)
	}
	dir := filepath.Join(t.TempDir(), "in")
	// Video holds 8-bit frames only: 16-bit scenarios go to PNG frames.
	format, input := synth.FormatMJPEG, filepath.Join(dir, "video.avi")
	if sc.BitDepth == 16 {
		format, input = synth.FormatPNG, filepath.Join(dir, synth.FramesDir)
	}
	tr, err := sc.Write(dir, synth.Output{Format: format})
	if err != nil {
		t.Fatal(err)
	}
	return filepath.Join(dir, synth.ExperimentFile), input, tr.Summary
}

// runGaptrace runs the command with args and returns its exit status and
// stderr.
func runGaptrace(args ...string) (int, string) {
	var errw bytes.Buffer
	code := mainArgs(args, &errw)
	return code, errw.String()
}

// runGaptraceOut runs the command with args and returns its exit status,
// stdout and stderr.
func runGaptraceOut(args ...string) (code int, out, errs string) {
	var o bytes.Buffer
	old := stdout
	stdout = &o
	defer func() { stdout = old }()
	code, errs = runGaptrace(args...)
	return code, o.String(), errs
}

func TestRunEndToEnd(t *testing.T) {
	cases := []struct {
		name, scenario string
		change         func(*synth.Scenario)
	}{
		{"homogeneous", "homogeneous", nil},
		{"slip", "slip", nil},
		{"banded2", "banded2", nil},
		{"step-quiescent", "step-quiescent", nil},
		{"step-plane", "step-plane", nil},
		{"step-wallslip", "step-wallslip", nil},
		// The moving wall at the bottom of the image, travelling to -x: the
		// gap coordinates must come out the same.
		{"slip reversed", "slip", func(s *synth.Scenario) { s.FlowSign, s.MovingSide = -1, "bottom" }},
		// Dark tracers on a bright field, 16-bit PNG frames, camera jitter.
		{"dark", "dark", nil},
		// The exact Newtonian Couette profile is homogeneous, not banded.
		{"couette", "couette", nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var change []func(*synth.Scenario)
			if c.change != nil {
				change = append(change, c.change)
			}
			exp, video, want := renderScenario(t, c.scenario, 3, change...)
			out := filepath.Join(t.TempDir(), "out")
			code, printed, errs := runGaptraceOut("run", "-e", exp, "-o", out, video)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			got, err := summary.Read(filepath.Join(out, "summary.json"))
			if err != nil {
				t.Fatal(err)
			}
			checkPrinted(t, printed, got, filepath.Join(out, report.FileName))
			for _, f := range []string{"tracks.csv", "profiles.csv", "after_stop.csv", report.FileName, "calibration.json"} {
				if _, err := os.Stat(filepath.Join(out, f)); err != nil {
					t.Errorf("missing %s", f)
				}
			}
			compareSummaries(t, got, want)
		})
	}
}

// checkPrinted checks what run prints on stdout: a line per verdict,
// starting with its word in summary.json, then the report's path.
func checkPrinted(t *testing.T, printed string, s *summary.Summary, reportPath string) {
	t.Helper()
	lines := strings.Split(strings.TrimSpace(printed), "\n")
	want := len(s.ShearPhases) + 1
	if s.AfterStop == nil {
		want--
	}
	if len(lines) != want+1 || lines[len(lines)-1] != reportPath {
		t.Fatalf("run printed %q, want %d verdict lines and the report's path %s", printed, want, reportPath)
	}
	for i, sp := range s.ShearPhases {
		if !strings.HasPrefix(lines[i], sp.Verdict+": Shear phase ") {
			t.Errorf("line %d %q does not start with the verdict %s", i+1, lines[i], sp.Verdict)
		}
	}
	if a := s.AfterStop; a != nil && !strings.HasPrefix(lines[want-1], a.Verdict) {
		t.Errorf("line %q does not start with the after-stop verdict %s", lines[want-1], a.Verdict)
	}
}

func compareSummaries(t *testing.T, got *summary.Summary, want *synth.SummaryTruth) {
	t.Helper()
	if len(got.ShearPhases) != len(want.ShearPhases) {
		t.Fatalf("%d shear phases, want %d", len(got.ShearPhases), len(want.ShearPhases))
	}
	for i, g := range got.ShearPhases {
		w := want.ShearPhases[i]
		v := float64(w.WallSpeedUMPerS)
		t.Logf("phase %d: %s, bulk %.4g (true %.4g) 1/s, slips %.4g / %.4g (true %.4g / %.4g) um/s, %d bands",
			i, g.Verdict, g.BulkRatePerS, w.BulkRatePerS, g.SlipStationaryUMPerS, g.SlipMovingUMPerS,
			w.SlipStationaryUMPerS, w.SlipMovingUMPerS, len(g.Bands))
		if g.Verdict != w.Verdict {
			t.Errorf("phase %d verdict %s, want %s", i, g.Verdict, w.Verdict)
		}
		if d := math.Abs(float64(g.BulkRatePerS-w.BulkRatePerS)) / float64(w.BulkRatePerS); !(d <= e2eRateTol) {
			t.Errorf("phase %d bulk rate %g, want %g", i, g.BulkRatePerS, w.BulkRatePerS)
		}
		for _, s := range [][2]summary.Num{{g.SlipStationaryUMPerS, w.SlipStationaryUMPerS}, {g.SlipMovingUMPerS, w.SlipMovingUMPerS}} {
			if d := math.Abs(float64(s[0]-s[1])) / v; !(d <= acceptance.SlipFrac) {
				t.Errorf("phase %d slip %g um/s, want %g (wall speed %g)", i, s[0], s[1], v)
			}
		}
		if len(g.Bands) != len(w.Bands) {
			t.Errorf("phase %d: %d bands, want %d", i, len(g.Bands), len(w.Bands))
		}
	}
	g, w := got.AfterStop, want.AfterStop
	if (g == nil) != (w == nil) {
		t.Fatalf("after_stop %v, want %v", g, w)
	}
	if g == nil {
		return
	}
	t.Logf("after stop: %s mode %v plane %.4g onset %.4g strain %.4g (true %s %v %.4g %.4g %.4g)",
		g.Verdict, deref(g.Mode), g.PlaneUM, g.OnsetAfterStopS, g.RecoveredStrain,
		w.Verdict, deref(w.Mode), w.PlaneUM, w.OnsetAfterStopS, w.RecoveredStrain)
	if g.Verdict != w.Verdict || deref(g.Mode) != deref(w.Mode) {
		t.Errorf("after stop %s/%s, want %s/%s", g.Verdict, deref(g.Mode), w.Verdict, deref(w.Mode))
	}
	if w.PlaneUM.Known() && !(math.Abs(float64(g.PlaneUM-w.PlaneUM)) <= acceptance.PlaneFrac*got.Calibration.GapUM) {
		t.Errorf("plane at %g um, want %g", g.PlaneUM, w.PlaneUM)
	}
	if w.OnsetAfterStopS.Known() && !(math.Abs(float64(g.OnsetAfterStopS-w.OnsetAfterStopS)) <= acceptance.OnsetFrames/got.Input.FPS) {
		t.Errorf("onset %g s, want %g", g.OnsetAfterStopS, w.OnsetAfterStopS)
	}
	if w.Verdict == cessation.Moving && !(math.Abs(float64(g.RecoveredStrain-w.RecoveredStrain)) <= e2eStrainTol) {
		t.Errorf("recovered strain %g, want %g", g.RecoveredStrain, w.RecoveredStrain)
	}
}

func deref(s *string) string {
	if s == nil {
		return "null"
	}
	return *s
}

// TestRunBadInput checks every bad-input case of the contract: exit 2,
// one line on stderr starting "gaptrace: ", and no summary.json.
func TestRunBadInput(t *testing.T) {
	exp, video, _ := renderScenario(t, "homogeneous", 1)
	tmp := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(tmp, name)
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	garbage := write("garbage.avi", strings.Repeat("not a video ", 1000))
	badExp := write("bad.yaml", "geometry: {kind: plates, gap_um: 800}\ncamera: {fps: 100, shutter: 2}\n")
	noFPS := write("nofps.yaml", "geometry: {kind: plates, gap_um: 800}\n")
	// A folder of frames without walls or tracers: uniform grey.
	blank := filepath.Join(tmp, "blank")
	os.Mkdir(blank, 0o755)
	grey := gocv.NewMatWithSizeFromScalar(gocv.NewScalar(90, 0, 0, 0), 240, 320, gocv.MatTypeCV8UC1)
	for i := 0; i < 5; i++ {
		gocv.IMWrite(filepath.Join(blank, "frame_"+string(rune('0'+i))+".png"), grey)
	}
	grey.Close()
	// Frames with walls but no tracers: the truth's background alone.
	sc, _ := synth.Builtin("homogeneous", 1)
	sc.Tracers = 0
	sc.Frames = 20
	noTracers := filepath.Join(tmp, "notracers")
	_, errNoTracers := sc.Write(noTracers, synth.Output{Format: synth.FormatPNG})
	empty := filepath.Join(tmp, "empty")
	os.Mkdir(empty, 0o755)
	full := filepath.Join(tmp, "full")
	os.Mkdir(full, 0o755)
	write("full/keep.txt", "an earlier result")

	cases := []struct {
		name string
		args []string
		want string
	}{
		{"unreadable video", []string{"-e", exp, garbage}, "garbage.avi"},
		{"missing video", []string{"-e", exp, filepath.Join(tmp, "nope.avi")}, "nope.avi"},
		{"wrong experiment file", []string{"-e", badExp, video}, "camera.shutter"},
		{"no frame rate", []string{"-e", noFPS, filepath.Join(noTracers, synth.FramesDir)}, "fps"},
		{"walls not found", []string{"-e", exp, blank}, "wall"},
		{"empty frame folder", []string{"-e", exp, empty}, "empty"},
		{"no experiment file", []string{video}, "-e"},
		{"no input", []string{"-e", exp}, "INPUT"},
	}
	if errNoTracers == nil {
		cases = append(cases, struct {
			name string
			args []string
			want string
		}{"no tracers", []string{"-e", filepath.Join(noTracers, synth.ExperimentFile), filepath.Join(noTracers, synth.FramesDir)}, "tracers"})
	} else {
		t.Logf("cannot render a video without tracers: %v", errNoTracers)
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			code, errs := runGaptrace(append([]string{"run", "-o", out}, c.args...)...)
			checkBadInput(t, code, errs, c.want)
			if _, err := os.Stat(filepath.Join(out, "summary.json")); err == nil {
				t.Errorf("summary.json left behind")
			}
		})
	}
	t.Run("output folder not empty", func(t *testing.T) {
		code, errs := runGaptrace("run", "-e", exp, "-o", full, video)
		checkBadInput(t, code, errs, "--force")
		if _, err := os.Stat(filepath.Join(full, "summary.json")); err == nil {
			t.Errorf("summary.json written into a folder that was not empty")
		}
	})
}

func checkBadInput(t *testing.T, code int, stderr, want string) {
	t.Helper()
	lines := strings.Split(strings.TrimRight(stderr, "\n"), "\n")
	last := lines[len(lines)-1]
	if code != 2 {
		t.Errorf("exit %d, want 2; stderr %q", code, stderr)
	}
	if len(lines) != 1 || !strings.HasPrefix(last, "gaptrace: ") {
		t.Errorf("stderr is not one line starting \"gaptrace: \": %q", stderr)
	}
	if !strings.Contains(strings.ToLower(last), strings.ToLower(want)) {
		t.Errorf("message %q does not mention %q", last, want)
	}
}

// TestStages runs the stage commands one after the other, track then
// profile, on a recording whose moving wall travels to -x of the image:
// their summary must agree with the truth as run's does.
func TestStages(t *testing.T) {
	exp, video, want := renderScenario(t, "slip", 2, func(s *synth.Scenario) { s.FlowSign = -1 })
	out := filepath.Join(t.TempDir(), "stages")
	if code, errs := runGaptrace("track", "-e", exp, "-o", out, video); code != 0 {
		t.Fatalf("track: exit %d: %s", code, errs)
	}
	for _, f := range []string{"calibration.json", "tracks.csv"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Fatalf("track wrote no %s", f)
		}
	}
	if code, errs := runGaptrace("profile", "-e", exp, "-o", out, filepath.Join(out, "tracks.csv")); code != 0 {
		t.Fatalf("profile: exit %d: %s", code, errs)
	}
	got, err := summary.Read(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	compareSummaries(t, got, want)
}
