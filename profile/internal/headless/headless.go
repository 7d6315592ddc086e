// Package headless runs Debian's Chromium without a screen on a page of
// ours, for the tests of the pages gaptrace writes (report.html,
// campaign.html): the DOM after the page's scripts ran, or a screenshot.
package headless

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"regexp"
	"strconv"
	"testing"
	"time"
)

// Path is Debian's chromium package.
const Path = "/usr/bin/chromium"

// timeout bounds one headless run; a cold start on a busy 2-core machine
// takes a few seconds.
const timeout = 90 * time.Second

// SkipWithout skips t, saying why, when Chromium is not installed.
func SkipWithout(t testing.TB) {
	t.Helper()
	if _, err := os.Stat(Path); err != nil {
		t.Skipf("Chromium not installed at %s (Debian package chromium; cmd/scripts/deps.sh --test installs it): %v", Path, err)
	}
}

// Chromium runs headless Chromium on the page (an absolute path) with
// extra arguments, offline, and returns what it wrote on stdout.
func Chromium(t testing.TB, page string, args ...string) []byte {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), timeout)
	defer cancel()
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-dev-shm-usage", "--user-data-dir=" + t.TempDir()}
	cmd := exec.CommandContext(ctx, Path, append(append(base, args...), "file://"+page)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium %v: %v\n%s", args, err, errb.String())
	}
	return out.Bytes()
}

var loaded = regexp.MustCompile(`data-figures-loaded="(\d+)/(\d+)"`)

// FiguresLoaded opens the page, lets its scripts run, and returns the
// count its load script put in data-figures-loaded: the images that
// decoded, of all. ok is false when the script did not run.
func FiguresLoaded(t testing.TB, page string) (decoded, all int, ok bool) {
	t.Helper()
	dom := Chromium(t, page, "--virtual-time-budget=10000", "--dump-dom")
	m := loaded.FindSubmatch(dom)
	if m == nil {
		return 0, 0, false
	}
	decoded, _ = strconv.Atoi(string(m[1]))
	all, _ = strconv.Atoi(string(m[2]))
	return decoded, all, true
}
