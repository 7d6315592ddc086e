package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"gaptrace/profile/summary"
)

// TestHostileInputs feeds the profile command the odd inputs of issue 18
// that reach it (an experiment file with values beyond physics, more layers
// than the gap has pixels, a window outside the recording, a motion step
// shorter than a frame) and checks exit status 2 with one line on stderr
// naming the value, quickly and without summary.json. Before the bounds,
// --bins 1000000 ran for minutes at 5 GB; fps 1e-6 and gap_um 1e15 were
// accepted; gap_um 1e308 with um_per_px 1e-300 panicked in the flow prior;
// fps, um_per_px and diameter_px written as 0 silently meant "not given";
// -e /dev/zero read without end (out of memory under a 4 GB limit).
func TestHostileInputs(t *testing.T) {
	dir := t.TempDir()
	in, exp := writeProfileInput(t, dir, "homogeneous")
	orig, err := os.ReadFile(exp)
	if err != nil {
		t.Fatal(err)
	}
	// edited writes the experiment file with old replaced by new.
	edited := func(name, old, new string) string {
		s := string(orig)
		if !strings.Contains(s, old) {
			t.Fatalf("%q is not in the experiment file:\n%s", old, s)
		}
		p := filepath.Join(dir, name+".yaml")
		if err := os.WriteFile(p, []byte(strings.Replace(s, old, new, 1)), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	// quick: a refused input is refused before any work (the bound's
	// point), well within this on a loaded 2-core machine.
	const quick = 20 * time.Second
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"fps 1e-6", []string{"-e", edited("fps", "fps: 100", "fps: 1e-6")}, "camera.fps"},
		{"gap 1e15", []string{"-e", edited("gap", "gap_um: 800", "gap_um: 1e15")}, "gap_um"},
		{"gap 1e308", []string{"-e", edited("huge", "gap_um: 800", "gap_um: 1e308")}, "gap_um"},
		{"scale 1e-300", []string{"-e", edited("scale", "um_per_px: 2", "um_per_px: 1e-300")}, "um_per_px"},
		{"rate 1e300", []string{"-e", edited("rate", "rate_per_s: 1", "rate_per_s: 1e300")}, "rate_per_s"},
		{"step of 1 us", []string{"-e", edited("short", "end_s: 2", "end_s: 0.500001")}, "shorter than one frame"},
		{"bins 1000000", []string{"-e", exp, "--bins", "1000000"}, "--bins 1000000"},
		{"window outside", []string{"-e", exp, "--window", "100:200"}, "outside the recording"},
		{"field order", []string{"-e", edited("fields", "fps: 100", "fps: 100\n  fields: sideways")}, "camera.fields"},
		{"fps 0", []string{"-e", edited("fps0", "fps: 100", "fps: 0")}, "camera.fps: 0 is not a value"},
		{"scale 0", []string{"-e", edited("scale0", "um_per_px: 2", "um_per_px: 0")}, "camera.um_per_px: 0 is not a value"},
		{"diameter 0", []string{"-e", edited("diam0", "diameter_px: 5", "diameter_px: 0")}, "tracers.diameter_px: 0 is not a value"},
		{"experiment file /dev/zero", []string{"-e", "/dev/zero"}, "larger than"},
		{"bins 1e11", []string{"-e", exp, "--bins", "1e11"}, `invalid value "1e11" for flag -bins`},
		{"seq as file", []string{"-e", edited("seq", string(orig), "- 1\n- 2\n")}, "a list where a mapping"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out := filepath.Join(dir, "out-"+strings.ReplaceAll(c.name, " ", "-"))
			var stderr bytes.Buffer
			t0 := time.Now()
			code := mainArgs(append(append([]string{"profile"}, c.args...), "-o", out, in), &stderr)
			took := time.Since(t0)
			t.Logf("exit %d in %v: %s", code, took.Round(time.Millisecond), strings.TrimSpace(stderr.String()))
			checkBadInput(t, code, stderr.String(), c.want)
			if took > quick {
				t.Errorf("took %v to refuse", took)
			}
			if _, err := os.Stat(filepath.Join(out, "summary.json")); err == nil {
				t.Error("summary.json written")
			}
		})
	}
}

// TestProgramPastRecording gives the profile command a motion program that
// begins after the 3 s recording ends (5 to 9 s). Before, the shear phase
// of 5 to 9 s was analysed on no data, its verdict was empty, and the
// warning said the program was empty. Now the step is left out with a
// warning naming it, the phases come from the video (tracks.csv's own
// motion), and no shear phase is left with an empty verdict.
func TestProgramPastRecording(t *testing.T) {
	dir := t.TempDir()
	in, exp := writeProfileInput(t, dir, "homogeneous")
	b, err := os.ReadFile(exp)
	if err != nil {
		t.Fatal(err)
	}
	late := strings.Replace(strings.Replace(string(b), "start_s: 0.5", "start_s: 5", 1), "end_s: 2\n", "end_s: 9\n", 1)
	if late == string(b) {
		t.Fatalf("no motion step to move in\n%s", b)
	}
	if err := os.WriteFile(exp, []byte(late), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	var stderr bytes.Buffer
	if code := mainArgs([]string{"profile", "-e", exp, "-o", out, in}, &stderr); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	s, err := summary.Read(filepath.Join(out, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	warned := false
	for _, w := range s.Warnings {
		warned = warned || strings.Contains(w, "begins after the recording ends")
		if strings.Contains(w, "motion program is empty") {
			t.Errorf("misleading warning %q", w)
		}
	}
	if !warned {
		t.Errorf("no warning of the step past the recording among %q", s.Warnings)
	}
	for i, sp := range s.ShearPhases {
		if sp.Verdict == "" {
			t.Errorf("shear phase %d (%g to %g s) has an empty verdict", i+1, sp.StartS, sp.EndS)
		}
	}
	t.Logf("%d shear phases from the video; warnings %q", len(s.ShearPhases), s.Warnings)
}

// TestStderrQuietOnDamagedFrames runs, as a process of its own, a Motion
// JPEG recording whose middle frames have bytes overwritten: libjpeg,
// under OpenCV, printed "Corrupt JPEG data: premature end of data
// segment" on the process's stderr past OpenCV's log level, beside a run
// that gaptrace completed (exit 0). stderr must hold nothing but
// gaptrace's own lines.
func TestStderrQuietOnDamagedFrames(t *testing.T) {
	bin := gaptraceBinary(t)
	dir := t.TempDir()
	exp, video := tinyRecording(t, dir, 4, 1, 400)
	b, err := os.ReadFile(video)
	if err != nil {
		t.Fatal(err)
	}
	// Every 97th byte of 20 kB from the middle: inside the frames' JPEG
	// data, few enough that most frames still decode.
	for i := len(b) / 2; i < len(b)/2+20000 && i < len(b); i += 97 {
		b[i] = 0x55
	}
	if err := os.WriteFile(video, b, 0o644); err != nil {
		t.Fatal(err)
	}
	var stderr bytes.Buffer
	cmd := exec.Command(bin, "run", "-e", exp, "-o", filepath.Join(dir, "out"), video)
	cmd.Stderr = &stderr
	cmd.Run()
	code := cmd.ProcessState.ExitCode()
	t.Logf("exit %d, stderr %q", code, stderr.String())
	for _, line := range strings.Split(strings.TrimSpace(stderr.String()), "\n") {
		if line != "" && !strings.HasPrefix(line, "gaptrace: ") {
			t.Errorf("stderr holds a line not gaptrace's: %q", line)
		}
	}
	if code != 0 && code != 2 {
		t.Errorf("exit status %d", code)
	}
}
