package main

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gaptrace/profile/report"
	"gaptrace/track/matleak"
	"gaptrace/track/synth"
)

func TestMain(m *testing.M) { matleak.Main(m) }

// Help goes to stdout with exit status 0: the list of commands, and for
// one command what it does and its flags; an unknown command or no
// command at all is bad usage, on stderr.
func TestHelp(t *testing.T) {
	cases := []struct {
		args       []string
		code       int
		out, errs  []string
		stderrOnly bool
	}{
		{[]string{"help"}, 0, []string{"Commands:", "run", "synth", "gaptrace help COMMAND"}, nil, false},
		{[]string{"--help"}, 0, []string{"Commands:"}, nil, false},
		{[]string{"help", "run"}, 0, []string{"gaptrace run: the whole chain", "Usage: gaptrace run [flags] INPUT", "-window", "-no-jitter"}, nil, false},
		{[]string{"run", "-h"}, 0, []string{"gaptrace run: the whole chain", "-window"}, nil, false},
		{[]string{"help", "profile"}, 0, []string{"gaptrace profile: ", "TRACKS.csv", "-calibration"}, nil, false},
		{[]string{"version"}, 0, []string{"gaptrace 0."}, nil, false},
		{[]string{"help", "nope"}, 2, nil, []string{`unknown command "nope"`}, true},
		{nil, 2, nil, []string{"Commands:"}, true},
	}
	for _, c := range cases {
		t.Run(strings.Join(c.args, " "), func(t *testing.T) {
			code, out, errs := runGaptraceOut(c.args...)
			if code != c.code {
				t.Errorf("exit %d, want %d", code, c.code)
			}
			for _, w := range c.out {
				if !strings.Contains(out, w) {
					t.Errorf("stdout lacks %q:\n%s", w, out)
				}
			}
			for _, w := range c.errs {
				if !strings.Contains(errs, w) {
					t.Errorf("stderr lacks %q:\n%s", w, errs)
				}
			}
			if c.stderrOnly && out != "" {
				t.Errorf("bad usage printed on stdout: %q", out)
			}
			if !c.stderrOnly && errs != "" {
				t.Errorf("help printed on stderr: %q", errs)
			}
		})
	}
}

// The report of run holds the lab record: the command as typed, and the
// input's size and SHA-256, which coreutils' sha256sum (an outside
// oracle) gives for the same file.
func TestRunLabRecord(t *testing.T) {
	exp, video, _ := renderScenario(t, "homogeneous", 5, func(s *synth.Scenario) { s.Frames = 160 })
	out := filepath.Join(t.TempDir(), "out dir")
	if code, _, errs := runGaptraceOut("run", "-e", exp, "-o", out, video); code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	html, err := os.ReadFile(filepath.Join(out, report.FileName))
	if err != nil {
		t.Fatal(err)
	}
	st, _ := os.Stat(video)
	want := []string{"gaptrace run -e " + exp + " -o &#39;" + out + "&#39; " + video, strconv.FormatInt(st.Size(), 10) + " bytes"}
	if _, err := exec.LookPath("sha256sum"); err == nil {
		sum, err := exec.Command("sha256sum", video).Output()
		if err != nil {
			t.Fatal(err)
		}
		want = append(want, strings.Fields(string(sum))[0])
	} else {
		t.Logf("sha256sum not found, the digest is not checked: %v", err)
	}
	for _, w := range want {
		if !bytes.Contains(html, []byte(w)) {
			t.Errorf("report.html lacks %q", w)
		}
	}
}
