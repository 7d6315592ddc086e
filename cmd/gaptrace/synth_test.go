package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/calib/experiment"
	"gaptrace/track/synth"
)

// runSynthArgs runs "gaptrace synth ARGS" and returns the exit status, what
// went to stdout and to stderr.
func runSynthArgs(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errw bytes.Buffer
	old := synthOut
	synthOut = &out
	defer func() { synthOut = old }()
	code := mainArgs(append([]string{"synth"}, args...), &errw)
	return code, out.String(), errw.String()
}

func TestSynthList(t *testing.T) {
	code, out, _ := runSynthArgs(t, "--list")
	if code != 0 {
		t.Fatalf("exit %d", code)
	}
	for _, n := range synth.List() {
		if !strings.Contains(out, n.Name+" ") {
			t.Errorf("--list lacks %q:\n%s", n.Name, out)
		}
	}
}

func TestSynthBadUsage(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--scenario", "nope", "-o", dir}, `"nope"`},
		{[]string{"--scenario", "slip"}, "-o DIR"},
		{[]string{"-o", dir, "--size", "640by480"}, `"640by480"`},
		{[]string{"-o", dir, "--format", "gif"}, `"gif"`},
		{[]string{"-o", dir, "--bit-depth", "12"}, "--bit-depth 12"},
		{[]string{"-o", dir, "--frames", "-3"}, "--frames -3"},
		{[]string{"-o", dir, "--format", "avi-ffv1", "--bit-depth", "16"}, "bit depth 16"},
		{[]string{"-o", dir, "--size", "20x12"}, "size 20x12"},
		{[]string{"-o", dir, "--nonsense"}, "nonsense"},
		{[]string{"-o", dir, "extra.avi"}, `"extra.avi"`},
	} {
		code, _, errs := runSynthArgs(t, c.args...)
		lines := strings.Split(strings.TrimSpace(errs), "\n")
		last := lines[len(lines)-1]
		if code != 2 || !strings.HasPrefix(last, "gaptrace: ") || !strings.Contains(last, c.want) {
			t.Errorf("synth %v: exit %d, stderr %q; want 2 and a line naming %q", c.args, code, errs, c.want)
		}
	}
}

func TestSynthWrites(t *testing.T) {
	dir := t.TempDir()
	code, out, errs := runSynthArgs(t, "--scenario", "step-plane", "--seed", "3", "-o", dir,
		"--format", "png", "--bit-depth", "16", "--frames", "4", "--size", "320x240")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if !strings.Contains(out, "4 frames of 320x240") {
		t.Errorf("report %q", out)
	}
	for _, f := range []string{synth.ExperimentFile, synth.TruthFile, synth.TruthTracksFile,
		filepath.Join(synth.FramesDir, synth.FrameName(3, "png"))} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Error(err)
		}
	}
	e, err := experiment.Load(filepath.Join(dir, synth.ExperimentFile))
	if err != nil {
		t.Fatal(err)
	}
	// 320x240 halves the height: the 800 um gap then spans 200 px at 4 um/px.
	if e.Camera.UMPerPx != 4 || e.Geometry.Gap() != 800 {
		t.Errorf("experiment scale %g um/px, gap %g um; want 4 and 800", e.Camera.UMPerPx, e.Geometry.Gap())
	}
}
