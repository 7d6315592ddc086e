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

// FuzzRunVideo runs the whole `run` on damaged videos: a short MJPEG and
// a short FFV1 recording (in AVI) of the slip scenario, rendered here,
// with bytes overwritten (patch at byte at, both taken modulo the file's
// length) and cut short (at cut bytes, when cut is not 0). The fuzzer
// mutates the damage, not the whole file, so that its corpus stays a few
// bytes an input and its mutations reach the headers as often as the
// frames. No input may panic (exit status 1, "internal error"), crash in
// OpenCV or FFmpeg, or hang; a refused input gives exit status 2 and one
// gaptrace line; an accepted one exit 0 and a complete summary.json. The
// inputs checked in under testdata/fuzz/FuzzRunVideo (Go's layout) are
// replayed by every `go test`; `go test -fuzz FuzzRunVideo ./cmd/gaptrace`
// searches further.
func FuzzRunVideo(f *testing.F) {
	dir := f.TempDir()
	var exp string
	var videos [2][]byte // MJPEG, FFV1
	for i, format := range []string{synth.FormatMJPEG, synth.FormatFFV1} {
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
		if videos[i], err = os.ReadFile(filepath.Join(sub, "video.avi")); err != nil {
			f.Fatal(err)
		}
	}
	for _, ffv1 := range []bool{false, true} {
		n := uint32(len(videos[b2i(ffv1)]))
		f.Add(ffv1, uint32(0), []byte(nil), uint32(0))
		f.Add(ffv1, uint32(8), []byte("\xff\xff\xff\x7f"), uint32(0)) // the RIFF size
		f.Add(ffv1, uint32(64), []byte("\x00\x00\x00\x00\x00\x00\x00\x00"), uint32(0))
		f.Add(ffv1, n/2, []byte("\xff\xd8\xff\xd9garbage"), uint32(0))
		f.Add(ffv1, uint32(0), []byte(nil), n*99/100)
		f.Add(ffv1, uint32(0), []byte(nil), n/3)
	}
	f.Fuzz(func(t *testing.T, ffv1 bool, at uint32, patch []byte, cut uint32) {
		b := append([]byte(nil), videos[b2i(ffv1)]...)
		for i, c := range patch {
			b[(int(at)+i)%len(b)] = c
		}
		if cut > 0 {
			b = b[:int(cut)%len(b)]
		}
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

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}
