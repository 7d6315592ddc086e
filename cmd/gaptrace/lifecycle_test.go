package main

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"gaptrace/track/synth"
)

var (
	buildOnce sync.Once
	binPath   string
	buildErr  error
)

// gaptraceBinary builds the command once per test run, for tests that need
// it as a process of its own (signals, two runs at once).
func gaptraceBinary(t *testing.T) string {
	t.Helper()
	buildOnce.Do(func() {
		dir, err := os.MkdirTemp("", "gaptrace-bin")
		if err != nil {
			buildErr = err
			return
		}
		binPath = filepath.Join(dir, "gaptrace")
		out, err := exec.Command("go", "build", "-o", binPath, ".").CombinedOutput()
		if err != nil {
			buildErr = fmt.Errorf("go build: %v: %s", err, out)
		}
	})
	if buildErr != nil {
		t.Fatal(buildErr)
	}
	return binPath
}

// folderListing returns the names in dir, sorted.
func folderListing(t *testing.T, dir string) []string {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		t.Fatal(err)
	}
	var names []string
	for _, e := range ents {
		names = append(names, e.Name())
	}
	slices.Sort(names)
	return names
}

func fileHash(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return fmt.Sprintf("%x", sha256.Sum256(b))
}

// TestConcurrentRuns starts two runs into one folder at the same moment:
// one is refused, and the other's outputs are all its own, the same files
// as a run alone and the same summary.json byte for byte.
func TestConcurrentRuns(t *testing.T) {
	bin := gaptraceBinary(t)
	exp, video, _ := renderScenario(t, "homogeneous", 5)
	solo := filepath.Join(t.TempDir(), "solo")
	if out, err := exec.Command(bin, "run", "-e", exp, "-o", solo, video).CombinedOutput(); err != nil {
		t.Fatalf("solo run: %v: %s", err, out)
	}
	shared := filepath.Join(t.TempDir(), "shared")
	cmds := [2]*exec.Cmd{}
	var stderrs [2]bytes.Buffer
	for i := range cmds {
		cmds[i] = exec.Command(bin, "run", "-e", exp, "-o", shared, video)
		cmds[i].Stderr = &stderrs[i]
	}
	for _, c := range cmds {
		if err := c.Start(); err != nil {
			t.Fatal(err)
		}
	}
	codes := [2]int{}
	for i, c := range cmds {
		c.Wait()
		codes[i] = c.ProcessState.ExitCode()
	}
	slices.Sort(codes[:])
	if codes != [2]int{0, 2} {
		t.Fatalf("exit statuses %v, want one 0 and one 2; stderr: %q, %q", codes, stderrs[0].String(), stderrs[1].String())
	}
	refused := stderrs[0].String() + stderrs[1].String()
	if !strings.Contains(refused, "in use by gaptrace process") && !strings.Contains(refused, "is not empty") {
		t.Errorf("the refused run says %q", refused)
	}
	if got, want := folderListing(t, shared), folderListing(t, solo); !slices.Equal(got, want) {
		t.Errorf("shared folder holds %v, a run alone %v", got, want)
	}
	if fileHash(t, filepath.Join(shared, summaryName)) != fileHash(t, filepath.Join(solo, summaryName)) {
		t.Error("summary.json differs from that of a run alone")
	}
}

// interruptWithinS is how soon after SIGINT or SIGTERM a run must have
// stopped (the limit).
const interruptWithinS = 1.0

var detectProgress = regexp.MustCompile(`detect: (\d+)/(\d+) frames`)

// TestInterrupt stops a run with a signal at a quarter, half and nine
// tenths of the frames and checks that it stops within a second with
// "gaptrace: interrupted" and status 128 + the signal, leaving nothing in
// the output folder: no lock, no temporary file, no result.
func TestInterrupt(t *testing.T) {
	bin := gaptraceBinary(t)
	exp, video, _ := renderScenario(t, "homogeneous", 6, func(s *synth.Scenario) {
		s.Resize(320, 240)
		s.Tracers = 100
		s.Frames = 3000
	})
	cases := []struct {
		fraction float64
		sig      syscall.Signal
	}{{0.25, syscall.SIGINT}, {0.5, syscall.SIGINT}, {0.9, syscall.SIGINT}, {0.5, syscall.SIGTERM}}
	for _, c := range cases {
		t.Run(fmt.Sprintf("%s at %.0f%%", c.sig, 100*c.fraction), func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			cmd := exec.Command(bin, "run", "--progress", "-e", exp, "-o", out, video)
			pipe, err := cmd.StderrPipe()
			if err != nil {
				t.Fatal(err)
			}
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			var sent time.Time
			var at string
			var lines []string
			sc := bufio.NewScanner(pipe)
			sc.Split(scanProgress)
			for sc.Scan() {
				lines = append(lines, sc.Text())
				m := detectProgress.FindStringSubmatch(sc.Text())
				if m == nil || !sent.IsZero() {
					continue
				}
				done, _ := strconv.Atoi(m[1])
				total, _ := strconv.Atoi(m[2])
				if float64(done) >= c.fraction*float64(total) {
					sent, at = time.Now(), m[1]+"/"+m[2]
					cmd.Process.Signal(c.sig)
				}
			}
			cmd.Wait()
			took := time.Since(sent).Seconds()
			if sent.IsZero() {
				t.Fatalf("never reached %.0f%% of the frames; stderr: %q", 100*c.fraction, lines)
			}
			if code := cmd.ProcessState.ExitCode(); code != 128+int(c.sig) {
				t.Errorf("exit status %d, want %d", code, 128+int(c.sig))
			}
			if last := lines[len(lines)-1]; last != "gaptrace: interrupted" {
				t.Errorf("last line of stderr %q, want \"gaptrace: interrupted\"", last)
			}
			if took > interruptWithinS {
				t.Errorf("stopped %.2f s after the signal, want within %.1f s", took, interruptWithinS)
			}
			if left := folderListing(t, out); len(left) != 0 {
				t.Errorf("the output folder holds %v after the interruption", left)
			}
			t.Logf("signalled at frame %s, stopped %.3f s later; folder: %v", at, took, folderListing(t, out))
		})
	}
}

// scanProgress splits stderr at newlines and at the carriage returns that
// redraw the progress line.
func scanProgress(data []byte, atEOF bool) (int, []byte, error) {
	if i := bytes.IndexAny(data, "\r\n"); i >= 0 {
		return i + 1, bytes.TrimSpace(data[:i]), nil
	}
	if atEOF && len(data) > 0 {
		return len(data), bytes.TrimSpace(data), nil
	}
	return 0, nil, nil
}

// TestStderrIsOneLine runs inputs that OpenCV itself would complain about
// (a missing target image, a frame that is not an image) in a process of
// their own, so that anything OpenCV writes to the process's stderr is
// seen, and checks that stderr holds gaptrace's one line alone.
func TestStderrIsOneLine(t *testing.T) {
	bin := gaptraceBinary(t)
	dir := t.TempDir()
	frames := filepath.Join("..", "..", "testdata", "frames", "8bit")
	bad := filepath.Join(dir, "bad")
	os.Mkdir(bad, 0o755)
	b, _ := os.ReadFile(filepath.Join(frames, "frame_00000.png"))
	os.WriteFile(filepath.Join(bad, "frame_00000.png"), b, 0o644)
	os.WriteFile(filepath.Join(bad, "frame_00001.png"), []byte("not a picture"), 0o644)
	write := func(name, yaml string) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(yaml), 0o644)
		return p
	}
	plain := write("plain.yaml", "geometry: {kind: plates, gap_um: 200}\ncamera: {fps: 100}\n")
	target := write("target.yaml", "geometry: {kind: plates, gap_um: 200}\ncamera: {fps: 100, target: {image: missing.png, kind: ruler, pitch_um: 100}}\n")
	for _, c := range []struct{ name, exp, input string }{
		{"missing target image", target, frames},
		{"a frame that is not an image", plain, bad},
		{"a missing frame folder", plain, filepath.Join(dir, "none", "*.png")},
	} {
		t.Run(c.name, func(t *testing.T) {
			var stderr bytes.Buffer
			cmd := exec.Command(bin, "calib", "-e", c.exp, "-o", filepath.Join(dir, "out"), c.input)
			cmd.Stderr = &stderr
			cmd.Run()
			out := stderr.String()
			if code := cmd.ProcessState.ExitCode(); code != 2 || strings.Count(out, "\n") != 1 || !strings.HasPrefix(out, "gaptrace: ") {
				t.Errorf("exit %d, stderr %q; want 2 and one gaptrace line", code, out)
			}
		})
	}
}
