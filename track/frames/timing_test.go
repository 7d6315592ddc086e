package frames_test

import (
	"errors"
	"io"
	"math"
	"os/exec"
	"path/filepath"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/track/frames"
	"gaptrace/track/synth"
)

// needFFmpeg skips a test that renders H.264 when ffmpeg is missing.
func needFFmpeg(t *testing.T) {
	t.Helper()
	if _, err := exec.LookPath("ffmpeg"); err != nil {
		t.Skip("ffmpeg is not installed (cmd/scripts/deps.sh --test installs it)")
	}
}

// readAll reads every frame of path and returns the source's frame times
// and the number of frames read.
func readAll(t *testing.T, path string, fps float64) ([]float64, int, frames.Info) {
	t.Helper()
	src, err := frames.Open(path, fps, frames.All)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	m := gocv.NewMat()
	defer m.Close()
	n := 0
	for {
		if _, err := src.Next(&m); errors.Is(err, io.EOF) {
			break
		} else if err != nil {
			t.Fatal(err)
		}
		n++
	}
	tm, ok := src.(frames.Timed)
	if !ok {
		t.Fatalf("%s: a video source is not Timed", path)
	}
	return tm.FrameTimesS(), n, src.Info()
}

// TestFrameTimesVariableRate renders synth's variable-rate camera (intervals
// ±25 %, 5 % of the frames skipped) as an MP4 with B-frames, whose last
// frames OpenCV's reader gives no time, and checks that every frame's time
// is the true one: the truth is synth's own frame clock, which ffmpeg
// stores in the file (ISO/IEC 14496-12 stts and ctts tables). Remuxed into
// Matroska (no table: times from the reader's time stamps, at Matroska's
// default 1 ms resolution) the times hold to 1 ms up to the first frame the
// reader gives none, and stop there rather than invent one.
func TestFrameTimesVariableRate(t *testing.T) {
	needFFmpeg(t)
	s, err := synth.Builtin("vfr", 7)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = 40
	dir := t.TempDir()
	tr, err := s.Write(dir, synth.Output{Format: synth.FormatH264, CRF: 30, Preset: "ultrafast"})
	if err != nil {
		t.Fatal(err)
	}
	truth := s.FrameTimes()
	// tickTol: the file's time base is synth.FrameTickS, which holds the
	// times exactly; the float conversion is good to far below it.
	const tickTol = 1e-9
	got, n, _ := readAll(t, tr.Summary.Input.Path, 0)
	if n != s.Frames || len(got) != s.Frames {
		t.Fatalf("mp4: %d frames read, %d times, want %d", n, len(got), s.Frames)
	}
	for f := range truth {
		if math.Abs(got[f]-truth[f]) > tickTol {
			t.Errorf("mp4: frame %d at %.4f s, truth %.4f s", f, got[f], truth[f])
		}
	}
	// An override of the rate leaves the container's times as they are.
	kept, _, info := readAll(t, tr.Summary.Input.Path, 1000)
	if info.FPS != 1000 {
		t.Errorf("override: FPS %g, want 1000", info.FPS)
	}
	for f := range truth {
		if math.Abs(kept[f]-truth[f]) > tickTol {
			t.Errorf("override: frame %d at %g s, want %g s", f, kept[f], truth[f])
			break
		}
	}

	mkv := filepath.Join(dir, "remux.mkv")
	if out, err := exec.Command("ffmpeg", "-v", "error", "-i", tr.Summary.Input.Path, "-c", "copy", mkv).CombinedOutput(); err != nil {
		t.Fatalf("ffmpeg remux: %v: %s", err, out)
	}
	// msTol: Matroska's default time stamps are whole milliseconds.
	const msTol = 0.5e-3 + 1e-9
	got, n, _ = readAll(t, mkv, 0)
	if n != s.Frames {
		t.Fatalf("mkv: %d frames read, want %d", n, s.Frames)
	}
	if len(got) < s.Frames/2 || len(got) > s.Frames {
		t.Fatalf("mkv: %d frame times of %d frames", len(got), n)
	}
	for f := range got {
		if math.Abs(got[f]-truth[f]) > msTol {
			t.Errorf("mkv: frame %d at %.4f s, truth %.4f s", f, got[f], truth[f])
		}
	}
	t.Logf("mkv: times for %d of %d frames", len(got), n)
}

// TestRotationTag renders synth's upside-down camera (frames stored turned
// by 180 degrees, with the display-rotation matrix of ISO/IEC 14496-12's
// track header) and the same scene upright, and checks that the rotation is
// reported and the frames come out upright: the mean absolute difference
// of the first frames is a few grey levels of compression noise upright,
// several times more when one is turned.
func TestRotationTag(t *testing.T) {
	needFFmpeg(t)
	first := func(name string, rot int) (gocv.Mat, frames.Info) {
		s, err := synth.Builtin(name, 5)
		if err != nil {
			t.Fatal(err)
		}
		s.Frames = 3
		s.StoredRotationDeg = rot
		tr, err := s.Write(t.TempDir(), synth.Output{Format: synth.FormatH264, CRF: 20, Preset: "ultrafast"})
		if err != nil {
			t.Fatal(err)
		}
		src, err := frames.Open(tr.Summary.Input.Path, 0, frames.All)
		if err != nil {
			t.Fatal(err)
		}
		defer src.Close()
		m := gocv.NewMat()
		if _, err := src.Next(&m); err != nil {
			t.Fatal(err)
		}
		return m, src.Info()
	}
	up, upInfo := first("upside-down", 0)
	defer up.Close()
	turned, info := first("upside-down", 180)
	defer turned.Close()
	if upInfo.RotationDeg != 0 || info.RotationDeg != 180 {
		t.Errorf("rotation %d and %d deg, want 0 and 180", upInfo.RotationDeg, info.RotationDeg)
	}
	diff := gocv.NewMat()
	defer diff.Close()
	gocv.AbsDiff(up, turned, &diff)
	straight := diff.Mean().Val1
	flipped := gocv.NewMat()
	defer flipped.Close()
	gocv.Flip(turned, &flipped, -1)
	gocv.AbsDiff(up, flipped, &diff)
	wrong := diff.Mean().Val1
	t.Logf("mean |difference|: %.2f grey levels as delivered, %.2f turned again", straight, wrong)
	if !(straight < wrong/2) {
		t.Errorf("the tagged file's frames are not upright: %.2f grey levels from the upright one, %.2f when turned", straight, wrong)
	}
}
