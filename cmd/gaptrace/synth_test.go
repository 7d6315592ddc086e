package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

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

func TestSynthEncoders(t *testing.T) {
	if _, err := exec.LookPath("ffmpeg"); err != nil {
		t.Skip("ffmpeg is not installed (scripts/deps.sh --test installs it)")
	}
	for _, c := range []struct {
		args  []string
		files []string
	}{
		{[]string{"--scenario", "slip", "--format", "mp4-h264", "--crf", "28", "--preset", "veryfast"}, []string{"video.mp4"}},
		{[]string{"--scenario", "bench-1024", "--size", "256x256", "--tracers", "60"}, []string{"video.avi"}},
		{[]string{"--scenario", "startup-3step"}, []string{"video.avi", synth.LogFile}},
		{[]string{"--scenario", "upside-down", "--preset", "veryfast"}, []string{"video.mp4"}},
	} {
		dir := t.TempDir()
		code, out, errs := runSynthArgs(t, append(c.args, "-o", dir, "--frames", "5")...)
		if code != 0 {
			t.Errorf("synth %v: exit %d: %s", c.args, code, errs)
			continue
		}
		for _, f := range c.files {
			if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
				t.Errorf("synth %v: %v (stdout %q)", c.args, err, out)
			}
		}
	}
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--format", "mp4-h264", "--crf", "60"}, "--crf 60"},
		{[]string{"--format", "png", "--crf", "20"}, "--crf 20"},
		{[]string{"--format", "avi-mjpeg", "--quality", "40"}, "--quality 40"},
		{[]string{"--format", "mp4-h264", "--quality", "3"}, "--quality 3"},
		{[]string{"--rotate", "90"}, "--rotate 90"},
		{[]string{"--rotate", "180", "--format", "png"}, "mp4-h264"},
		{[]string{"--log-sep", "pipe"}, `"pipe"`},
		{[]string{"--log-hz", "50", "--log-decimal-comma"}, "decimal commas"},
		{[]string{"--exposure", "2"}, "exposure fraction 2"},
		{[]string{"--size", "100000x100000"}, "exceeds"},
		{[]string{"--tracers", "100000000"}, "tracers 100000000"},
	} {
		code, _, errs := runSynthArgs(t, append(c.args, "-o", dir, "--frames", "2")...)
		lines := strings.Split(strings.TrimSpace(errs), "\n")
		if code != 2 || len(lines) != 1 || !strings.HasPrefix(lines[0], "gaptrace: ") || !strings.Contains(lines[0], c.want) {
			t.Errorf("synth %v: exit %d, stderr %q; want 2 and one line naming %q", c.args, code, errs, c.want)
		}
	}
}

// synthHelperEnv names the folder the killed-synth helper writes into.
const synthHelperEnv = "GAPTRACE_TEST_SYNTH_INTO"

// TestSynthKilled starts synth in a child process (this test binary,
// re-run as a helper), kills it while it writes the video, and checks that
// no video is left under its final name.
func TestSynthKilled(t *testing.T) {
	if dir := os.Getenv(synthHelperEnv); dir != "" {
		format := os.Getenv(synthHelperEnv + "_FORMAT")
		runSynthArgs(t, "--scenario", "homogeneous", "--frames", "5000", "--format", format, "--preset", "ultrafast", "-o", dir)
		return
	}
	if testing.Short() {
		t.Skip("starts child processes")
	}
	formats := []string{"avi-mjpeg", "png"}
	if _, err := exec.LookPath("ffmpeg"); err == nil {
		formats = append(formats, "mp4-h264")
	}
	for _, format := range formats {
		dir := t.TempDir()
		cmd := exec.Command(os.Args[0], "-test.run=^TestSynthKilled$")
		cmd.Env = append(os.Environ(), synthHelperEnv+"="+dir, synthHelperEnv+"_FORMAT="+format)
		// Its own process group, so that ffmpeg, its child, is killed with it.
		cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		// Wait until the video is being written, then a little more.
		partial := ""
		for deadline := time.Now().Add(60 * time.Second); partial == "" && time.Now().Before(deadline); {
			ents, _ := os.ReadDir(dir)
			for _, e := range ents {
				if strings.Contains(e.Name(), ".partial-") {
					partial = e.Name()
				}
			}
			time.Sleep(20 * time.Millisecond)
		}
		time.Sleep(300 * time.Millisecond)
		syscall.Kill(-cmd.Process.Pid, syscall.SIGKILL)
		cmd.Wait()
		if partial == "" {
			t.Fatalf("%s: no temporary file appeared", format)
		}
		for _, f := range []string{"video.avi", "video.mp4", synth.FramesDir, synth.TruthFile} {
			if _, err := os.Stat(filepath.Join(dir, f)); err == nil {
				t.Errorf("%s: %s exists after synth was killed while writing", format, f)
			}
		}
	}
}
