package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gaptrace/track/synth"
)

// fuzzFrames and fuzzSidePx make the fuzzed recordings small enough that
// one whole run takes under two seconds: 60 frames of 192 x 128 px (at
// 96 x 64 px the wall fit has too few strips to find the walls).
const (
	fuzzFrames = 60
	fuzzSidePx = 192
)

// FuzzRunVideo runs the whole `run` on damaged videos: the fuzzer mutates
// the bytes of a short MJPEG and a short FFV1 recording (in AVI) of the
// slip scenario. No input may panic (exit status 1, "internal error"),
// crash in OpenCV or FFmpeg, or hang; a refused input gives exit status 2
// and one gaptrace line; an accepted one exit 0 and a complete
// summary.json. The seeds are rendered here; the inputs checked in under
// testdata/fuzz/FuzzRunVideo (Go's layout) are replayed by every `go test`;
// `go test -fuzz FuzzRunVideo ./cmd/gaptrace` searches further.
func FuzzRunVideo(f *testing.F) {
	dir := f.TempDir()
	var exp string
	for _, format := range []string{synth.FormatMJPEG, synth.FormatFFV1} {
		sc, err := synth.Builtin("slip", 1)
		if err != nil {
			f.Fatal(err)
		}
		sc.Resize(fuzzSidePx, fuzzSidePx*2/3)
		sc.Tracers = 30
		sc.Frames = fuzzFrames
		sub := filepath.Join(dir, format)
		if _, err := sc.Write(sub, synth.Output{Format: format}); err != nil {
			f.Fatal(err)
		}
		exp = filepath.Join(sub, synth.ExperimentFile)
		b, err := os.ReadFile(filepath.Join(sub, "video.avi"))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		work := t.TempDir()
		video := filepath.Join(work, "video.avi")
		if err := os.WriteFile(video, b, 0o644); err != nil {
			t.Fatal(err)
		}
		out := filepath.Join(work, "out")
		var stderr bytes.Buffer
		code := mainArgs([]string{"run", "-e", exp, "-o", out, video}, &stderr)
		msg := stderr.String()
		switch code {
		case 0:
			if _, err := os.Stat(filepath.Join(out, summaryName)); err != nil {
				t.Fatalf("exit 0 without %s: %v", summaryName, err)
			}
		case 2:
			if !strings.HasPrefix(msg, "gaptrace: ") || strings.Count(msg, "\n") != 1 {
				t.Fatalf("exit 2 with stderr %q, want one gaptrace line", msg)
			}
		default:
			t.Fatalf("exit %d: %s", code, msg)
		}
	})
}
