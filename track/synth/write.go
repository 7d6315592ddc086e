package synth

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"

	"gocv.io/x/gocv"

	"gaptrace/calib/atomicfile"
	"gaptrace/track/tracks"
)

// Output formats of Write.
const (
	FormatMJPEG   = "avi-mjpeg" // Motion-JPEG in AVI: small, lossy
	FormatFFV1    = "avi-ffv1"  // FFV1 in AVI: lossless, 8 bit
	FormatFFV1MKV = "mkv-ffv1"  // FFV1 in Matroska: lossless, 8 bit
	FormatPNG     = "png"       // a folder of PNG frames, 8 or 16 bit, lossless
	FormatTIFF    = "tiff"      // a folder of TIFF frames, 8 or 16 bit, lossless
)

// Formats lists the output formats, the default first.
var Formats = []string{FormatMJPEG, FormatFFV1, FormatFFV1MKV, FormatPNG, FormatTIFF}

// Names of the files Write makes.
const (
	ExperimentFile  = "experiment.yaml"
	TruthFile       = "truth.json"
	TruthTracksFile = "truth_tracks.csv"
	FramesDir       = "frames" // the folder of still frames
)

// Output says how Write stores the frames.
type Output struct {
	// Format is one of Formats; "" is avi-mjpeg.
	Format string
	// BitDepth is 8 or 16 (still frames only); 0 keeps the scenario's.
	BitDepth int
	// Progress, when not nil, is called after each frame written.
	Progress func(done, total int)
}

// media returns the path, relative to the output folder, of the video or
// frame folder, and the FourCC of a video.
func (o Output) media() (name, fourcc string, err error) {
	switch o.Format {
	case "", FormatMJPEG:
		return "video.avi", "MJPG", nil
	case FormatFFV1:
		return "video.avi", "FFV1", nil
	case FormatFFV1MKV:
		return "video.mkv", "FFV1", nil
	case FormatPNG, FormatTIFF:
		return FramesDir, "", nil
	}
	return "", "", fmt.Errorf("synth: output format %q is not one of %v", o.Format, Formats)
}

// Write renders every frame of the scenario into dir (made if missing) and
// writes beside it the experiment file, the truth and the true tracks:
//
//	video.avi | video.mkv | frames/frame_00000.png ...   the camera images
//	experiment.yaml                                       the experiment file
//	truth.json                                            the Truth
//	truth_tracks.csv                                      true positions, tracks.csv format
//
// Videos are 8 bit grey; 16 bit needs png or tiff. The returned truth's
// input path is the video's or frame folder's path.
func (s *Scenario) Write(dir string, out Output) (*Truth, error) {
	name, fourcc, err := out.media()
	if err != nil {
		return nil, err
	}
	sc := *s
	sc.r = nil
	if out.BitDepth != 0 {
		sc.BitDepth = out.BitDepth
	}
	if fourcc != "" && sc.bitDepth() != 8 {
		return nil, fmt.Errorf("synth: %s video holds only 8-bit frames; use png or tiff for bit depth %d", out.Format, sc.bitDepth())
	}
	r, err := NewRenderer(&sc)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	media := filepath.Join(dir, name)
	if fourcc != "" {
		err = r.writeVideo(media, fourcc, out.Progress)
	} else {
		err = r.writeFrames(media, out.Format, out.Progress)
	}
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if err := sc.Experiment().Write(&buf); err != nil {
		return nil, err
	}
	if err := atomicfile.WriteBytes(filepath.Join(dir, ExperimentFile), buf.Bytes()); err != nil {
		return nil, err
	}
	t := sc.Truth()
	t.Summary.Input.Path = media
	b, err := json.MarshalIndent(t, "", "  ")
	if err != nil {
		return nil, err
	}
	if err := atomicfile.WriteBytes(filepath.Join(dir, TruthFile), append(b, '\n')); err != nil {
		return nil, err
	}
	buf.Reset()
	if err := tracks.WriteCSV(&buf, sc.TrackPoints()); err != nil {
		return nil, err
	}
	if err := atomicfile.WriteBytes(filepath.Join(dir, TruthTracksFile), buf.Bytes()); err != nil {
		return nil, err
	}
	return t, nil
}

func (r *Renderer) writeVideo(path, fourcc string, progress func(done, total int)) error {
	s := &r.s
	w, err := gocv.VideoWriterFile(path, fourcc, s.FPS, s.WidthPx, s.HeightPx, false)
	if err != nil {
		return fmt.Errorf("synth: opening %s for %s video: %w", path, fourcc, err)
	}
	defer w.Close()
	if !w.IsOpened() {
		return fmt.Errorf("synth: OpenCV cannot write %s video to %s", fourcc, path)
	}
	m := gocv.NewMat()
	defer m.Close()
	for f := range s.Frames {
		if err := r.Render(f, &m); err != nil {
			return err
		}
		if err := w.Write(m); err != nil {
			return fmt.Errorf("synth: writing frame %d to %s: %w", f, path, err)
		}
		if progress != nil {
			progress(f+1, s.Frames)
		}
	}
	return w.Close()
}

// FrameName returns the file name of a still frame: frame_00000.png ...
func FrameName(frame int, format string) string {
	return fmt.Sprintf("frame_%05d.%s", frame, format)
}

func (r *Renderer) writeFrames(dir, format string, progress func(done, total int)) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	m := gocv.NewMat()
	defer m.Close()
	for f := range r.s.Frames {
		if err := r.Render(f, &m); err != nil {
			return err
		}
		p := filepath.Join(dir, FrameName(f, format))
		if !gocv.IMWrite(p, m) {
			return fmt.Errorf("synth: OpenCV could not write %s", p)
		}
		if progress != nil {
			progress(f+1, r.s.Frames)
		}
	}
	return nil
}
