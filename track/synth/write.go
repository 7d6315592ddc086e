package synth

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"gocv.io/x/gocv"

	"gaptrace/calib/atomicfile"
)

// Output formats of Write.
const (
	FormatMJPEG   = "avi-mjpeg" // Motion-JPEG in AVI: small, lossy (with Output.Quality, encoded by ffmpeg)
	FormatFFV1    = "avi-ffv1"  // FFV1 in AVI: lossless, 8 bit
	FormatFFV1MKV = "mkv-ffv1"  // FFV1 in Matroska: lossless, 8 bit
	FormatPNG     = "png"       // a folder of PNG frames, 8 or 16 bit, lossless
	FormatTIFF    = "tiff"      // a folder of TIFF frames, 8 or 16 bit, lossless
	FormatH264    = "mp4-h264"  // H.264 (libx264, yuv420p) in MP4, encoded by ffmpeg: lossy at Output.CRF; holds variable frame times and a rotation tag
)

// Formats lists the output formats, the default first.
var Formats = []string{FormatMJPEG, FormatFFV1, FormatFFV1MKV, FormatPNG, FormatTIFF, FormatH264}

// Names of the files Write makes.
const (
	ExperimentFile  = "experiment.yaml"
	TruthFile       = "truth.json"
	TruthTracksFile = "truth_tracks.csv"
	FramesDir       = "frames" // the folder of still frames
)

// Bounds of the encoders' settings (those of libx264 and of ffmpeg's
// MJPEG encoder).
const (
	MaxCRF         = 51
	MinQuality     = 2
	MaxQuality     = 31
	defaultCRF     = 23       // libx264's own default
	defaultPreset  = "medium" // libx264's own default
	partialPattern = atomicfile.PartialMark + "*"
)

// Output says how Write stores the frames.
type Output struct {
	// Format is one of Formats; "" is avi-mjpeg.
	Format string
	// BitDepth is 8 or 16 (still frames only); 0 keeps the scenario's.
	BitDepth int
	// CRF is the constant rate factor of mp4-h264 (0..51, lower is
	// better; 18-28 is the usual range); 0: 23, libx264's default.
	CRF int
	// Preset is libx264's speed preset for mp4-h264 ("ultrafast" ...
	// "veryslow"); "": medium, libx264's default.
	Preset string
	// NoBFrames makes mp4-h264 without B-frames (-bf 0). With B-frames
	// (libx264's default) OpenCV 4.6's FFmpeg backend reports a position
	// (CAP_PROP_POS_MSEC) of 0 for the last frames, which the decoder
	// gives out only when the file has ended.
	NoBFrames bool
	// Quality, when not 0, makes avi-mjpeg through ffmpeg at this JPEG
	// quality scale (-q:v, 2..31, lower is better: 3 gives large files that
	// decode fast); 0 keeps OpenCV's own MJPEG writer.
	Quality int
	// Progress, when not nil, is called after each frame written.
	Progress func(done, total int)
}

// media returns the path, relative to the output folder, of the video or
// frame folder, the FourCC of a video written by OpenCV, and whether
// ffmpeg writes it.
func (o Output) media() (name, fourcc string, ffmpeg bool, err error) {
	switch o.Format {
	case "", FormatMJPEG:
		if o.Quality != 0 {
			if o.Quality < MinQuality || o.Quality > MaxQuality {
				return "", "", false, fmt.Errorf("synth: MJPEG quality %d is not in [%d, %d]", o.Quality, MinQuality, MaxQuality)
			}
			return "video.avi", "", true, nil
		}
		return "video.avi", "MJPG", false, nil
	case FormatFFV1:
		return "video.avi", "FFV1", false, nil
	case FormatFFV1MKV:
		return "video.mkv", "FFV1", false, nil
	case FormatPNG, FormatTIFF:
		return FramesDir, "", false, nil
	case FormatH264:
		if o.CRF < 0 || o.CRF > MaxCRF {
			return "", "", false, fmt.Errorf("synth: CRF %d is not in [0, %d]", o.CRF, MaxCRF)
		}
		return "video.mp4", "", true, nil
	}
	return "", "", false, fmt.Errorf("synth: output format %q is not one of %v", o.Format, Formats)
}

// Write renders every frame of the scenario into dir (made if missing) and
// writes beside it the experiment file, the truth and the true tracks:
//
//	video.avi | video.mkv | video.mp4 | frames/frame_00000.png ...   the camera images
//	experiment.yaml                                                   the experiment file
//	truth.json                                                        the Truth
//	truth_tracks.csv                                                  true positions, tracks.csv format and more columns
//	rheometer_log.csv                                                 the rheometer's log, when Log.RateHz > 0
//
// Videos are 8 bit, grey or BGR colour; 16 bit needs png or tiff. A
// scenario with StoredRotationDeg needs mp4-h264; one with a VariableRate
// keeps its true frame times only in mp4-h264 (the other formats store the
// frames at the nominal rate, as a camera that hides its irregular timing
// does). Every file is written under a temporary name in dir (".NAME.partial-*")
// and renamed when complete, so that a failed or killed write never leaves
// a file under its final name. The returned truth's input path is the
// video's or frame folder's path.
func (s *Scenario) Write(dir string, out Output) (*Truth, error) {
	name, fourcc, ffmpeg, err := out.media()
	if err != nil {
		return nil, err
	}
	sc := *s
	sc.r = nil
	if out.BitDepth != 0 {
		sc.BitDepth = out.BitDepth
	}
	video := name != FramesDir
	if video && sc.bitDepth() != 8 {
		return nil, fmt.Errorf("synth: %s video holds only 8-bit frames; use png or tiff for bit depth %d", out.Format, sc.bitDepth())
	}
	if sc.StoredRotationDeg != 0 && out.Format != FormatH264 {
		return nil, fmt.Errorf("synth: a stored rotation of %d deg needs the %s format, which carries the display-rotation tag", sc.StoredRotationDeg, FormatH264)
	}
	r, err := NewRenderer(&sc)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	media := filepath.Join(dir, name)
	switch {
	case ffmpeg:
		err = r.writeFFmpeg(media, out)
	case fourcc != "":
		err = r.writeVideo(media, fourcc, out.Progress)
	default:
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
	if err := atomicfile.Write(filepath.Join(dir, TruthTracksFile), func(w io.Writer) error {
		return WriteTruthTracks(w, sc.TruthRows())
	}); err != nil {
		return nil, err
	}
	if sc.Log.on() {
		if err := atomicfile.Write(filepath.Join(dir, LogFile), sc.WriteLog); err != nil {
			return nil, err
		}
	}
	return t, nil
}

// tempName returns a free temporary name in the folder of path for it,
// ".BASE.partial-RANDOM" with path's extension kept at the end (OpenCV
// chooses the container by it).
func tempName(path string) (string, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+partialPattern+filepath.Ext(base))
	if err != nil {
		return "", err
	}
	name := f.Name()
	// The writers reopen the file and keep its mode: make it the mode of
	// every other result (os.CreateTemp gives 0600).
	err = f.Chmod(0o644)
	f.Close()
	if err != nil {
		os.Remove(name)
		return "", err
	}
	return name, nil
}

func (r *Renderer) writeVideo(path, fourcc string, progress func(done, total int)) error {
	tmp, err := tempName(path)
	if err != nil {
		return err
	}
	if err := r.writeOpenCV(tmp, path, fourcc, progress); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("synth: %w", err)
	}
	return nil
}

// writeOpenCV writes the frames through OpenCV's VideoWriter into tmp,
// naming path in errors.
func (r *Renderer) writeOpenCV(tmp, path, fourcc string, progress func(done, total int)) error {
	s := &r.s
	w, err := gocv.VideoWriterFile(tmp, fourcc, s.FPS, s.WidthPx, s.HeightPx, s.Colour.on())
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

// writeFrames writes the still frames into a temporary folder beside dir,
// which then replaces dir.
func (r *Renderer) writeFrames(dir, format string, progress func(done, total int)) error {
	parent, base := filepath.Split(dir)
	if parent == "" {
		parent = "."
	}
	tmp, err := os.MkdirTemp(parent, "."+base+partialPattern)
	if err != nil {
		return err
	}
	if err := r.writeFrameFiles(tmp, format, progress); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	if err := os.Chmod(tmp, 0o755); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	// An earlier folder is moved aside first: a folder cannot be renamed
	// over a full one.
	var old string
	if _, err := os.Stat(dir); err == nil {
		if old, err = os.MkdirTemp(parent, "."+base+".old-*"); err != nil {
			os.RemoveAll(tmp)
			return err
		}
		if err := os.Rename(dir, filepath.Join(old, base)); err != nil {
			os.RemoveAll(tmp)
			os.Remove(old)
			return err
		}
	}
	if err := os.Rename(tmp, dir); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	if old != "" {
		return os.RemoveAll(old)
	}
	return nil
}

func (r *Renderer) writeFrameFiles(dir, format string, progress func(done, total int)) error {
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
