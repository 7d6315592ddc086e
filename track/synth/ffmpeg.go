package synth

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"gocv.io/x/gocv"
)

// ffmpegStderrMax is how much of ffmpeg's error output an error keeps.
const ffmpegStderrMax = 4096

// ffmpegArgs returns the encoder's arguments for an output format.
func ffmpegArgs(o Output, variable bool) []string {
	if o.Format == FormatH264 {
		crf := o.CRF
		if crf == 0 {
			crf = defaultCRF
		}
		preset := o.Preset
		if preset == "" {
			preset = defaultPreset
		}
		a := []string{"-c:v", "libx264", "-preset", preset, "-crf", strconv.Itoa(crf), "-pix_fmt", "yuv420p"}
		if o.NoBFrames {
			a = append(a, "-bf", "0")
		}
		if variable {
			a = append(a, "-video_track_timescale", strconv.Itoa(FrameTickRate))
		}
		return append(a, "-f", "mp4")
	}
	// MJPEG at a fixed quality scale, full-range 4:2:0 as cameras write it.
	return []string{"-c:v", "mjpeg", "-q:v", strconv.Itoa(o.Quality), "-pix_fmt", "yuvj420p", "-f", "avi"}
}

// writeFFmpeg encodes the frames with the ffmpeg program into path,
// through a temporary file: raw frames piped to it, or with variable frame
// times a list of still frames with their durations (ffmpeg's concat
// demuxer), then for a stored rotation a second pass that adds the
// display-rotation tag without re-encoding.
func (r *Renderer) writeFFmpeg(path string, o Output) (err error) {
	bin, err := exec.LookPath("ffmpeg")
	if err != nil {
		return fmt.Errorf("synth: the %s format needs the ffmpeg program, which is not on PATH (scripts/deps.sh --test installs it)", o.Format)
	}
	tmp, err := tempName(path)
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			os.Remove(tmp)
		}
	}()
	variable := r.times != nil && o.Format == FormatH264
	if variable {
		err = r.encodeList(bin, tmp, path, o)
	} else {
		err = r.encodePipe(bin, tmp, path, o)
	}
	if err != nil {
		return err
	}
	if r.s.StoredRotationDeg != 0 {
		tagged, err := tempName(path)
		if err != nil {
			return err
		}
		// The tag a reader applies for display; ffmpeg 5 writes it only on
		// a stream copy.
		args := []string{"-i", tmp, "-map", "0", "-c", "copy",
			"-metadata:s:v:0", "rotate=" + strconv.Itoa(r.s.StoredRotationDeg), "-f", "mp4", tagged}
		if err := runFFmpeg(bin, path, args, nil); err != nil {
			os.Remove(tagged)
			return err
		}
		os.Remove(tmp)
		tmp = tagged
	}
	if err := os.Rename(tmp, path); err != nil {
		return fmt.Errorf("synth: %w", err)
	}
	return nil
}

// runFFmpeg runs ffmpeg quietly with args; feed, when not nil, writes its
// standard input. Errors name path and end with ffmpeg's last words.
func runFFmpeg(bin, path string, args []string, feed func(io.Writer) error) error {
	// -nostdin keeps ffmpeg from reading commands from the terminal; an
	// input named pipe:0 is still read from the standard input.
	cmd := exec.Command(bin, append([]string{"-hide_banner", "-loglevel", "error", "-nostdin", "-y"}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &limitedWriter{b: &stderr, n: ffmpegStderrMax}
	var in io.WriteCloser
	if feed != nil {
		var err error
		if in, err = cmd.StdinPipe(); err != nil {
			return fmt.Errorf("synth: ffmpeg for %s: %w", path, err)
		}
	}
	if err := cmd.Start(); err != nil {
		return fmt.Errorf("synth: starting ffmpeg for %s: %w", path, err)
	}
	var ferr error
	if feed != nil {
		ferr = feed(in)
		in.Close()
	}
	werr := cmd.Wait()
	if werr != nil {
		msg := strings.TrimSpace(stderr.String())
		if i := strings.LastIndexByte(msg, '\n'); i >= 0 {
			msg = msg[i+1:]
		}
		return fmt.Errorf("synth: ffmpeg writing %s: %v: %s", path, werr, msg)
	}
	if ferr != nil {
		return fmt.Errorf("synth: ffmpeg writing %s: %w", path, ferr)
	}
	return nil
}

// limitedWriter keeps the first n bytes written to it.
type limitedWriter struct {
	b *bytes.Buffer
	n int
}

func (w *limitedWriter) Write(p []byte) (int, error) {
	if room := w.n - w.b.Len(); room > 0 {
		w.b.Write(p[:min(len(p), room)])
	}
	return len(p), nil
}

// rawFormat is ffmpeg's name of the frames' pixel layout.
func (r *Renderer) rawFormat() string {
	if r.s.Colour.on() {
		return "bgr24"
	}
	return "gray"
}

// frameBytes renders a frame and returns its bytes as stored: rotated by
// StoredRotationDeg. The slice is valid until the next call.
func (r *Renderer) frameBytes(f int, m *gocv.Mat, buf []byte) ([]byte, []byte, error) {
	if err := r.Render(f, m); err != nil {
		return nil, buf, err
	}
	data, err := m.DataPtrUint8()
	if err != nil {
		return nil, buf, fmt.Errorf("synth: %w", err)
	}
	if r.s.StoredRotationDeg != 180 {
		return data, buf, nil
	}
	ch := m.Channels()
	buf = slices.Grow(buf[:0], len(data))[:len(data)]
	n := len(data) / ch
	for i := range n {
		copy(buf[(n-1-i)*ch:(n-i)*ch], data[i*ch:(i+1)*ch])
	}
	return buf, buf, nil
}

// encodePipe pipes the raw frames at the nominal rate to ffmpeg.
func (r *Renderer) encodePipe(bin, tmp, path string, o Output) error {
	s := &r.s
	args := []string{"-f", "rawvideo", "-pix_fmt", r.rawFormat(),
		"-video_size", fmt.Sprintf("%dx%d", s.WidthPx, s.HeightPx),
		"-framerate", strconv.FormatFloat(s.FPS, 'g', -1, 64), "-i", "pipe:0"}
	args = append(append(args, ffmpegArgs(o, false)...), tmp)
	return runFFmpeg(bin, path, args, func(w io.Writer) error {
		m := gocv.NewMat()
		defer m.Close()
		var buf []byte
		for f := range s.Frames {
			b, nb, err := r.frameBytes(f, &m, buf)
			buf = nb
			if err != nil {
				return err
			}
			if _, err := w.Write(b); err != nil {
				return fmt.Errorf("frame %d: %w", f, err)
			}
			if o.Progress != nil {
				o.Progress(f+1, s.Frames)
			}
		}
		return nil
	})
}

// encodeList writes the frames as binary PGM or PPM files into a temporary
// folder with a concat list that gives each its duration in ticks of
// FrameTickS, and has ffmpeg encode them with those timestamps.
func (r *Renderer) encodeList(bin, tmp, path string, o Output) error {
	s := &r.s
	dir, err := os.MkdirTemp(filepath.Dir(tmp), "."+filepath.Base(path)+".frames"+partialPattern)
	if err != nil {
		return err
	}
	defer os.RemoveAll(dir)
	var list bytes.Buffer
	list.WriteString("ffconcat version 1.0\n")
	m := gocv.NewMat()
	defer m.Close()
	var buf, rgb []byte
	ticks := func(tS float64) int64 { return int64(tS/FrameTickS + 0.5) }
	for f := range s.Frames {
		b, nb, err := r.frameBytes(f, &m, buf)
		buf = nb
		if err != nil {
			return err
		}
		name := fmt.Sprintf("f%06d.p%cm", f, "gp"[min(m.Channels()-1, 1)])
		var head string
		if m.Channels() == 3 {
			head = fmt.Sprintf("P6\n%d %d\n255\n", s.WidthPx, s.HeightPx)
			rgb = slices.Grow(rgb[:0], len(b))[:len(b)]
			for i := 0; i < len(b); i += 3 {
				rgb[i], rgb[i+1], rgb[i+2] = b[i+2], b[i+1], b[i]
			}
			b = rgb
		} else {
			head = fmt.Sprintf("P5\n%d %d\n255\n", s.WidthPx, s.HeightPx)
		}
		if err := os.WriteFile(filepath.Join(dir, name), append([]byte(head), b...), 0o644); err != nil {
			return err
		}
		d := ticks(1 / s.FPS)
		if f+1 < s.Frames {
			d = ticks(r.times[f+1]) - ticks(r.times[f])
		}
		// A tick rate for the still frame's own clock, so that the list's
		// durations are not rounded to the image demuxer's default 25 Hz.
		fmt.Fprintf(&list, "file '%s'\noption framerate %d\nduration %s\n", name, FrameTickRate,
			strconv.FormatFloat(float64(d)*FrameTickS, 'f', 4, 64))
		if o.Progress != nil {
			o.Progress(f+1, s.Frames)
		}
	}
	listPath := filepath.Join(dir, "list.ffconcat")
	if err := os.WriteFile(listPath, list.Bytes(), 0o644); err != nil {
		return err
	}
	args := []string{"-f", "concat", "-safe", "0", "-i", listPath, "-vsync", "passthrough"}
	args = append(append(args, ffmpegArgs(o, true)...), tmp)
	return runFFmpeg(bin, path, args, nil)
}
