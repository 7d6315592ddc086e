package synth

import (
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// needFFmpeg skips a test when the ffmpeg and ffprobe programs are missing
// (make test installs them).
func needFFmpeg(t *testing.T) {
	t.Helper()
	for _, p := range []string{"ffmpeg", "ffprobe"} {
		if _, err := exec.LookPath(p); err != nil {
			t.Skipf("%s is not installed (scripts/deps.sh --test installs it)", p)
		}
	}
}

// probe runs ffprobe, an independent reader of the container, and returns
// its output lines.
func probe(t *testing.T, path string, args ...string) []string {
	t.Helper()
	out, err := exec.Command("ffprobe", append([]string{"-v", "error"}, append(args, path)...)...).Output()
	if err != nil {
		t.Fatalf("ffprobe %s: %v", path, err)
	}
	return strings.Fields(strings.TrimSpace(string(out)))
}

// meanAbsDiff is the mean absolute difference of two frames.
func meanAbsDiff(a, b []byte) float64 {
	var s float64
	for i := range a {
		s += math.Abs(float64(a[i]) - float64(b[i]))
	}
	return s / float64(len(a))
}

// noPartials fails when dir holds a temporary file of Write.
func noPartials(t *testing.T, dir string) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		if strings.Contains(e.Name(), ".partial-") {
			t.Errorf("temporary file %s left in %s", e.Name(), dir)
		}
	}
}

// TestWriteFFmpeg writes H.264 at two CRFs and MJPEG at a fixed quality,
// grey and colour, and checks with ffprobe the codec, pixel format and
// frame count, and with OpenCV that the frames decode close to the
// rendered ones, harder compression losing more.
func TestWriteFFmpeg(t *testing.T) {
	needFFmpeg(t)
	s := small(t)
	s.Frames = 8
	want := rendered(t, s)
	loss := map[string]float64{}
	for _, c := range []struct {
		name          string
		out           Output
		codec, pixfmt string
		colour        bool
	}{
		{"h264-crf20", Output{Format: FormatH264, CRF: 20, Preset: "veryfast"}, "h264", "yuv420p", false},
		{"h264-crf28", Output{Format: FormatH264, CRF: 28, Preset: "veryfast"}, "h264", "yuv420p", false},
		{"mjpeg-q3", Output{Format: FormatMJPEG, Quality: 3}, "mjpeg", "yuvj420p", false},
		{"h264-colour", Output{Format: FormatH264, CRF: 20, Preset: "veryfast"}, "h264", "yuv420p", true},
		{"ffv1-colour", Output{Format: FormatFFV1}, "ffv1", "", true},
	} {
		t.Run(c.name, func(t *testing.T) {
			sc := *s
			if c.colour {
				sc.Colour = Colour{Tint: [3]float64{0.2, 1, 0.35}}
			}
			dir := t.TempDir()
			tr, err := sc.Write(dir, c.out)
			if err != nil {
				t.Fatal(err)
			}
			noPartials(t, dir)
			p := tr.Summary.Input.Path
			info := probe(t, p, "-select_streams", "v:0", "-count_frames", "-show_entries",
				"stream=codec_name,pix_fmt,nb_read_frames", "-of", "default=noprint_wrappers=1")
			got := strings.Join(info, " ")
			if !strings.Contains(got, "codec_name="+c.codec) || (c.pixfmt != "" && !strings.Contains(got, "pix_fmt="+c.pixfmt)) ||
				!strings.Contains(got, "nb_read_frames="+strconv.Itoa(sc.Frames)) {
				t.Fatalf("ffprobe: %s; want codec %s, pixel format %s, %d frames", got, c.codec, c.pixfmt, sc.Frames)
			}
			if c.colour {
				// A green-tinted colour video: its green channel carries the
				// light, the blue one little.
				v, err := gocv.VideoCaptureFile(p)
				if err != nil {
					t.Fatal(err)
				}
				defer v.Close()
				m := gocv.NewMat()
				defer m.Close()
				if !v.Read(&m) || m.Channels() != 3 {
					t.Fatalf("no colour frame read back")
				}
				mean := m.Mean()
				if !(mean.Val2 > 2*mean.Val1) {
					t.Errorf("channel means B %.1f G %.1f R %.1f: green should dominate", mean.Val1, mean.Val2, mean.Val3)
				}
				return
			}
			back := readFrames(t, p)
			if len(back) != sc.Frames {
				t.Fatalf("%d frames read back, want %d", len(back), sc.Frames)
			}
			var d float64
			for f := range back {
				d += meanAbsDiff(back[f], want[f]) / float64(len(back))
			}
			loss[c.name] = d
			t.Logf("%s: mean absolute error %.2f grey levels", c.name, d)
			if d > 6 {
				t.Errorf("mean absolute error %.2f grey levels", d)
			}
		})
	}
	if !(loss["h264-crf28"] > loss["h264-crf20"]) {
		t.Errorf("CRF 28 lost %.2f grey levels, CRF 20 %.2f: the harder compression should lose more",
			loss["h264-crf28"], loss["h264-crf20"])
	}
}

// TestWriteFailureLeavesNothing makes ffmpeg fail (an unknown preset) and
// checks that neither the video nor a temporary file is left.
func TestWriteFailureLeavesNothing(t *testing.T) {
	needFFmpeg(t)
	s := small(t)
	dir := t.TempDir()
	_, err := s.Write(dir, Output{Format: FormatH264, Preset: "no-such-preset"})
	if err == nil || !strings.Contains(err.Error(), "ffmpeg") {
		t.Fatalf("error %v, want one from ffmpeg", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "video.mp4")); !os.IsNotExist(err) {
		t.Errorf("video.mp4 left after a failed write (%v)", err)
	}
	noPartials(t, dir)
	// The frames folder is replaced whole, and a failed first write leaves none.
	s.Frames = 3
	if _, err := s.Write(dir, Output{Format: FormatPNG}); err != nil {
		t.Fatal(err)
	}
	s.Frames = 2
	if _, err := s.Write(dir, Output{Format: FormatPNG}); err != nil {
		t.Fatal(err)
	}
	ents, err := os.ReadDir(filepath.Join(dir, FramesDir))
	if err != nil || len(ents) != 2 {
		t.Errorf("frames folder holds %d files after writing 2 frames over 3 (%v)", len(ents), err)
	}
	noPartials(t, dir)
}

// h264BFrames is libx264's default number of consecutive B-frames
// (libx264's documentation of --bframes, from memory).
const h264BFrames = 3

// TestVariableRateMP4 writes a variable-frame-rate MP4 and checks that the
// container's timestamps, read by ffprobe and by OpenCV's FFmpeg backend
// (CAP_PROP_POS_MSEC after each read), are the truth's frame times. With
// B-frames OpenCV reports 0 for the last frames (those the decoder holds
// back until the end of the file); without, it reports every one.
func TestVariableRateMP4(t *testing.T) {
	needFFmpeg(t)
	for _, noB := range []bool{false, true} {
		s := small(t)
		s.Frames = 24
		s.VariableRate = VariableRate{Spread: 0.3, SkipFraction: 0.1}
		dir := t.TempDir()
		tr, err := s.Write(dir, Output{Format: FormatH264, Preset: "veryfast", NoBFrames: noB})
		if err != nil {
			t.Fatal(err)
		}
		noPartials(t, dir)
		times := tr.FrameTimesS
		if len(times) != s.Frames {
			t.Fatalf("truth holds %d frame times, want %d", len(times), s.Frames)
		}
		regular := true
		for f := 2; f < len(times); f++ {
			regular = regular && math.Abs((times[f]-times[f-1])-(times[1]-times[0])) < FrameTickS/2
		}
		if regular {
			t.Fatal("the frame times are regular")
		}
		pts := probe(t, tr.Summary.Input.Path, "-select_streams", "v:0", "-show_entries", "frame=pts_time", "-of", "csv=p=0")
		if len(pts) != s.Frames {
			t.Fatalf("ffprobe lists %d frames, want %d", len(pts), s.Frames)
		}
		// The times are multiples of the mp4 track's tick: stored exactly.
		for f, p := range pts {
			v, err := strconv.ParseFloat(strings.Trim(p, ","), 64)
			if err != nil || math.Abs(v-times[f]) > 1e-6 {
				t.Fatalf("frame %d: ffprobe pts %s s, truth %.4f s", f, p, times[f])
			}
		}
		v, err := gocv.VideoCaptureFile(tr.Summary.Input.Path)
		if err != nil {
			t.Fatal(err)
		}
		m := gocv.NewMat()
		zeros := 0
		for f := 0; v.Read(&m); f++ {
			ms := v.Get(gocv.VideoCapturePosMsec)
			switch {
			case math.Abs(ms-1000*times[f]) < 1e-6:
			case ms == 0 && !noB && f >= s.Frames-h264BFrames:
				zeros++
			default:
				t.Errorf("B-frames %v, frame %d: OpenCV's position %.4f ms, truth %.4f ms", !noB, f, ms, 1000*times[f])
			}
		}
		m.Close()
		v.Close()
		t.Logf("B-frames %v: OpenCV gives the true time of %d of %d frames, 0 for the last %d", !noB, s.Frames-zeros, s.Frames, zeros)
		// The truth's tracks follow the true times.
		rows := s.TruthRows()
		for _, r := range rows[len(rows)-3:] {
			if r.TS != times[r.Frame] {
				t.Errorf("truth_tracks row of frame %d at %g s, frame time %g s", r.Frame, r.TS, times[r.Frame])
			}
		}
	}
}

// OpenCV's orientation properties, not named in gocv 0.31
// (cv::CAP_PROP_ORIENTATION_META and CAP_PROP_ORIENTATION_AUTO of OpenCV 4.5+).
const (
	capOrientationMeta = gocv.VideoCaptureProperties(48)
	capOrientationAuto = gocv.VideoCaptureProperties(49)
)

// TestStoredRotation writes an MP4 stored upside down with a rotation tag,
// and checks with ffprobe the display matrix, and with OpenCV that the tag
// is reported, that the frames come out as displayed by default and upside
// down when its automatic rotation is switched off.
func TestStoredRotation(t *testing.T) {
	needFFmpeg(t)
	s := small(t)
	s.Frames = 4
	s.StoredRotationDeg = 180
	if _, err := s.Write(t.TempDir(), Output{Format: FormatPNG}); err == nil || !strings.Contains(err.Error(), FormatH264) {
		t.Errorf("rotation into png: error %v, want one naming %s", err, FormatH264)
	}
	dir := t.TempDir()
	tr, err := s.Write(dir, Output{Format: FormatH264, CRF: 12, Preset: "veryfast"})
	if err != nil {
		t.Fatal(err)
	}
	noPartials(t, dir)
	p := tr.Summary.Input.Path
	rot := probe(t, p, "-select_streams", "v:0", "-show_entries", "stream_side_data=rotation", "-of", "csv=p=0")
	if len(rot) == 0 || (rot[0] != "-180" && rot[0] != "180") {
		t.Fatalf("ffprobe rotation %v, want 180", rot)
	}
	want := rendered(t, s)
	upside := make([]byte, len(want[0]))
	for i, b := range want[0] {
		upside[len(upside)-1-i] = b
	}
	for _, auto := range []bool{true, false} {
		v, err := gocv.VideoCaptureFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if meta := v.Get(capOrientationMeta); meta != 180 {
			t.Errorf("OpenCV's orientation tag %g, want 180", meta)
		}
		if !auto {
			v.Set(capOrientationAuto, 0)
		}
		m, g := gocv.NewMat(), gocv.NewMat()
		if !v.Read(&m) {
			t.Fatal("no frame")
		}
		gocv.CvtColor(m, &g, gocv.ColorBGRToGray)
		b := g.ToBytes()
		m.Close()
		g.Close()
		v.Close()
		dShown, dStored := meanAbsDiff(b, want[0]), meanAbsDiff(b, upside)
		t.Logf("auto rotation %v: %.2f grey levels from the displayed frame, %.2f from the stored one", auto, dShown, dStored)
		if auto && !(dShown < dStored) || !auto && !(dStored < dShown) {
			t.Errorf("auto rotation %v: the frame read is %.2f from the displayed frame and %.2f from the stored one",
				auto, dShown, dStored)
		}
	}
}
