// Package frames streams the frames of a recording as single-channel images:
// video files read through OpenCV's FFmpeg backend, and folders or globs of
// still frames (PNG, TIFF; 8 and 16 bit kept at full depth).
//
// A Source delivers the frames of a Range one at a time into a Mat the caller
// reuses, so memory does not grow with the number of frames. Median computes
// a per-pixel temporal median of a Source, the background that removes static
// walls, reflections and stuck particles. A Head holds the first frames of a
// Source decoded, so that they serve the median and are then read again
// without being decoded twice.
//
// Videos whose frames are independent JPEG images (Motion JPEG) are decoded
// straight to grey from the container's packets, which skips the colour
// conversion of the general path; every other codec is read as BGR and
// converted to grey once per frame into a reused Mat.
package frames

import (
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"gocv.io/x/gocv"
)

// Info describes an input.
type Info struct {
	Path string
	// Frames is the number of frames in the input (not in the range), -1
	// if the container does not say.
	Frames int
	// FPS is the frame rate in frames per second: the override given to
	// Open, else the container's, else 0 when unknown.
	FPS float64
	// WidthPx and HeightPx are the frame size in pixels.
	WidthPx, HeightPx int
	// BitDepth is 8 or 16: the depth of the Mats Next returns (CV_8U or
	// CV_16U).
	BitDepth int
	// RotationDeg is the clockwise display rotation the container asks
	// for (0, 90, 180 or 270; -1 for a matrix that is no such rotation).
	// Frames are delivered turned upright, WidthPx and HeightPx are those
	// of the turned frames.
	RotationDeg int
	// Grey is how a video's colour channels are reduced to grey (nil for
	// still frames, read as grey by OpenCV's luma).
	Grey *Grey
}

// Counted is a video whose container announces its number of frames (the
// MP4/QuickTime frame table, else the container's header, which some
// containers estimate from the duration). A video that ends earlier is
// truncated or damaged: Next returns an error when it ends well before the
// count and io.EOF when it ends within a frame or two of it (or 1 %), and
// Short then tells how many frames were lost.
type Counted interface {
	// Short returns the number of frames the container announces beyond
	// the last one read, once Next has returned io.EOF; 0 before then, or
	// when nothing is missing.
	Short() int
}

// Timed is a Source that knows when each frame was taken. Videos are
// Timed: from the container's table of frame times where it has one (MP4,
// QuickTime), else from the time the reader gives each frame as it decodes
// it (the presentation time stamp).
type Timed interface {
	// FrameTimesS returns the time of frames 0, 1, ... of the input, s
	// from frame 0: of every frame when the container lists them, else of
	// the frames read so far, up to the first frame without a usable time
	// (not later than the one before). They are the container's, whatever
	// frame rate override Open was given. Nil when none is known. The
	// caller must not change the slice.
	FrameTimesS() []float64
}

// Range selects frames by their index in the input: First, First+Step, ...
// up to Last inclusive. Last = -1 runs to the end; Step 0 means 1.
type Range struct {
	First, Last, Step int
}

// All is the range of every frame.
var All = Range{First: 0, Last: -1, Step: 1}

func (r Range) step() int {
	if r.Step <= 0 {
		return 1
	}
	return r.Step
}

// Check reports a range that selects nothing for certain.
func (r Range) Check() error {
	switch {
	case r.First < 0:
		return fmt.Errorf("frames: range first frame %d is negative", r.First)
	case r.Step < 0:
		return fmt.Errorf("frames: range step %d is negative", r.Step)
	case r.Last != -1 && r.Last < r.First:
		return fmt.Errorf("frames: range last frame %d is before first frame %d", r.Last, r.First)
	}
	return nil
}

// Count is the number of frames the range selects in an input of total
// frames; -1 when total is unknown and the range runs to the end.
func (r Range) Count(total int) int {
	last := r.Last
	if total >= 0 && (last < 0 || last > total-1) {
		last = total - 1
	}
	if last < 0 {
		if total < 0 {
			return -1
		}
		return 0
	}
	if last < r.First {
		return 0
	}
	return (last-r.First)/r.step() + 1
}

// Source is a stream of single-channel frames.
type Source interface {
	// Info describes the input.
	Info() Info
	// Next reads the next frame of the range into dst as a single-channel
	// CV_8U or CV_16U Mat, reusing dst's memory when it has the right size
	// and type, and returns the frame's index in the input. At the end of
	// the range it returns io.EOF.
	Next(dst *gocv.Mat) (index int, err error)
	// Close releases the input.
	Close() error
}

// Open opens a video file, a folder of still frames or a glob pattern of
// still frames. fpsOverride, when positive, replaces the container's frame
// rate (the experiment file's camera.fps).
func Open(path string, fpsOverride float64, r Range) (Source, error) {
	if err := r.Check(); err != nil {
		return nil, err
	}
	if fpsOverride < 0 || math.IsNaN(fpsOverride) || math.IsInf(fpsOverride, 0) {
		return nil, fmt.Errorf("frames: frame rate override %g is not a positive number", fpsOverride)
	}
	if strings.ContainsAny(path, "*?[") {
		if _, err := os.Stat(path); err != nil {
			names, gerr := filepath.Glob(path)
			if gerr != nil {
				return nil, fmt.Errorf("frames: bad glob pattern %q: %v", path, gerr)
			}
			return openStills(path, names, fpsOverride, r)
		}
	}
	st, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("frames: %w", err)
	}
	if st.IsDir() {
		ents, err := os.ReadDir(path)
		if err != nil {
			return nil, fmt.Errorf("frames: %w", err)
		}
		var names []string
		for _, e := range ents {
			if !e.IsDir() && isStill(e.Name()) {
				names = append(names, filepath.Join(path, e.Name()))
			}
		}
		return openStills(path, names, fpsOverride, r)
	}
	if isStill(path) {
		return openStills(path, []string{path}, fpsOverride, r)
	}
	return openVideo(path, fpsOverride, r)
}

// isStill reports whether name has the extension of a still-image format.
func isStill(name string) bool {
	switch strings.ToLower(filepath.Ext(name)) {
	case ".png", ".tif", ".tiff":
		return true
	}
	return false
}

// naturalLess orders file names so that frame2 comes before frame10.
func naturalLess(a, b string) bool {
	for a != "" && b != "" {
		ca, cb := a[0], b[0]
		if isDigit(ca) && isDigit(cb) {
			ia, ib := digitsEnd(a), digitsEnd(b)
			na, nb := strings.TrimLeft(a[:ia], "0"), strings.TrimLeft(b[:ib], "0")
			if len(na) != len(nb) {
				return len(na) < len(nb)
			}
			if na != nb {
				return na < nb
			}
			a, b = a[ia:], b[ib:]
			continue
		}
		if ca != cb {
			return ca < cb
		}
		a, b = a[1:], b[1:]
	}
	return len(a) < len(b)
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

func digitsEnd(s string) int {
	i := 0
	for i < len(s) && isDigit(s[i]) {
		i++
	}
	return i
}

// errEmpty is returned for an input without any frame.
var errEmpty = errors.New("no frames")

// stills is a Source over a list of still-image files.
type stills struct {
	info  Info
	names []string
	r     Range
	next  int // index of the next frame to deliver
}

func openStills(path string, names []string, fps float64, r Range) (Source, error) {
	kept := names[:0:0]
	for _, n := range names {
		if isStill(n) {
			kept = append(kept, n)
		}
	}
	if len(kept) == 0 {
		return nil, fmt.Errorf("frames: %s: %w (no .png, .tif or .tiff files)", path, errEmpty)
	}
	sort.Slice(kept, func(i, j int) bool { return naturalLess(filepath.Base(kept[i]), filepath.Base(kept[j])) })
	if err := checkStill(kept[0]); err != nil {
		return nil, fmt.Errorf("frames: %s: cannot read frame 0 (%s): %v", path, kept[0], err)
	}
	first := gocv.IMRead(kept[0], gocv.IMReadAnyDepth|gocv.IMReadGrayScale)
	defer first.Close()
	if first.Empty() {
		return nil, fmt.Errorf("frames: %s: cannot read frame 0 (%s)", path, kept[0])
	}
	depth, err := bitDepth(first.Type())
	if err != nil {
		return nil, fmt.Errorf("frames: %s: frame 0: %v", kept[0], err)
	}
	s := &stills{
		info:  Info{Path: path, Frames: len(kept), FPS: fps, WidthPx: first.Cols(), HeightPx: first.Rows(), BitDepth: depth},
		names: kept, r: r, next: r.First,
	}
	return s, nil
}

func bitDepth(t gocv.MatType) (int, error) {
	switch t {
	case gocv.MatTypeCV8U:
		return 8, nil
	case gocv.MatTypeCV16U:
		return 16, nil
	}
	return 0, fmt.Errorf("unsupported pixel type %v (want 8 or 16 bit unsigned grey)", t)
}

func (s *stills) Info() Info { return s.info }

func (s *stills) Next(dst *gocv.Mat) (int, error) {
	i := s.next
	if i >= len(s.names) || (s.r.Last >= 0 && i > s.r.Last) {
		return 0, io.EOF
	}
	s.next += s.r.step()
	if err := checkStill(s.names[i]); err != nil {
		return 0, fmt.Errorf("frames: %s: cannot read frame %d (%s): %v", s.info.Path, i, s.names[i], err)
	}
	img := gocv.IMRead(s.names[i], gocv.IMReadAnyDepth|gocv.IMReadGrayScale)
	defer img.Close()
	if img.Empty() {
		return 0, fmt.Errorf("frames: %s: cannot read frame %d (%s)", s.info.Path, i, s.names[i])
	}
	if img.Cols() != s.info.WidthPx || img.Rows() != s.info.HeightPx {
		return 0, fmt.Errorf("frames: %s: frame %d (%s) is %dx%d px, the sequence is %dx%d px",
			s.info.Path, i, s.names[i], img.Cols(), img.Rows(), s.info.WidthPx, s.info.HeightPx)
	}
	if d, err := bitDepth(img.Type()); err != nil || d != s.info.BitDepth {
		return 0, fmt.Errorf("frames: %s: frame %d (%s) has pixel type %v, the sequence is %d bit",
			s.info.Path, i, s.names[i], img.Type(), s.info.BitDepth)
	}
	img.CopyTo(dst)
	return i, nil
}

func (s *stills) Close() error { return nil }

// video is a Source over a video file.
type video struct {
	info   Info
	cap    *gocv.VideoCapture
	r      Range
	next   int // index of the next frame the capture will return
	jpeg   bool
	raw    gocv.Mat // encoded packet (jpeg) or BGR frame
	closed bool
	// weights is info.Grey's weights for gocv.Transform when they are not
	// luma's (empty for luma).
	weights gocv.Mat

	// Frame times: the container's table (listed), else those the
	// capture reported for the frames read (posS, from pos0S, cut at the
	// first that does not increase: posBad).
	listed []float64
	posS   []float64
	pos0S  float64
	posBad bool
	// short is how many frames the container announced beyond the end.
	short int
}

// probe reads the first frame of a fresh capture to learn the size and
// whether its packets are independent JPEG images.
func openVideo(path string, fps float64, r Range) (Source, error) {
	if _, err := os.Stat(path); err != nil {
		return nil, fmt.Errorf("frames: %w", err)
	}
	v, err := openCapture(path, true)
	if err != nil {
		return nil, err
	}
	if v == nil {
		if v, err = openCapture(path, false); err != nil {
			return nil, err
		}
		g, err := videoGrey(path)
		if err != nil {
			v.Close()
			return nil, err
		}
		v.setGrey(g)
	}
	v.r = r
	if fps > 0 {
		v.info.FPS = fps
	}
	if t, err := readMP4File(path); err == nil {
		v.listed = t.TimesS
		// OpenCV turns decoded frames by the rotation (its default,
		// CAP_PROP_ORIENTATION_AUTO); JPEG packets are turned here.
		v.info.RotationDeg = t.RotationDeg
	}
	if v.jpeg {
		return &jpegVideo{v}, nil
	}
	return v, nil
}

// Packets is a Source whose frames are independent compressed images
// (Motion JPEG): reading one is cheap, and decoding can run on other
// goroutines. detect.Run uses it to decode in its workers.
type Packets interface {
	Source
	// NextPacket reads the next frame of the range undecoded, into buf's
	// memory when it is large enough, and returns the frame's index and
	// its bytes; io.EOF at the end. A source that holds the frame decoded
	// already (a Head) puts it in dst instead, as Next would, and returns
	// a nil packet.
	NextPacket(buf []byte, dst *gocv.Mat) (index int, packet []byte, err error)
	// Decode decodes the packet of frame index into dst as Next would. It
	// may be called from several goroutines at once.
	Decode(index int, packet []byte, dst *gocv.Mat) error
}

// jpegVideo is a video of independent JPEG frames.
type jpegVideo struct{ *video }

func (v *jpegVideo) NextPacket(buf []byte, _ *gocv.Mat) (int, []byte, error) {
	i, err := v.advance()
	if err != nil {
		return 0, nil, err
	}
	b, err := v.raw.DataPtrUint8()
	if err != nil {
		return 0, nil, fmt.Errorf("frames: %s: frame %d: %v", v.info.Path, i, err)
	}
	return i, append(buf[:0], b...), nil
}

func (v *jpegVideo) Decode(i int, packet []byte, dst *gocv.Mat) error {
	if why := jpegDamage(packet); why != "" {
		return &DamagedError{Path: v.info.Path, Frame: i, Of: v.info.Frames, Why: why}
	}
	weighted := v.weights.Ptr() != nil
	flag := gocv.IMReadGrayScale // the JPEG's own luma plane
	if weighted {
		flag = gocv.IMReadColor
	}
	g, err := gocv.IMDecode(packet, flag)
	if err != nil || g.Empty() {
		g.Close()
		return &DamagedError{Path: v.info.Path, Frame: i, Of: v.info.Frames, Why: "damaged JPEG data"}
	}
	defer g.Close()
	if weighted {
		r := gocv.NewMat()
		gocv.Transform(g, &r, v.weights)
		g, r = r, g
		r.Close()
	}
	if code, ok := rotateCode(v.info.RotationDeg); ok {
		r := gocv.NewMat()
		gocv.Rotate(g, &r, code)
		g, r = r, g
		r.Close()
	}
	if err := v.checkSize(g, i); err != nil {
		return err
	}
	// Swap rather than copy: g's memory becomes dst's.
	*dst, g = g, *dst
	return nil
}

func (v *jpegVideo) Next(dst *gocv.Mat) (int, error) {
	i, err := v.advance()
	if err != nil {
		return 0, err
	}
	b, err := v.raw.DataPtrUint8()
	if err != nil {
		return 0, fmt.Errorf("frames: %s: frame %d: %v", v.info.Path, i, err)
	}
	return i, v.Decode(i, b, dst)
}

// rotateCode is OpenCV's code for turning a frame clockwise by deg.
func rotateCode(deg int) (gocv.RotateFlag, bool) {
	switch deg {
	case 90:
		return gocv.Rotate90Clockwise, true
	case 180:
		return gocv.Rotate180Clockwise, true
	case 270:
		return gocv.Rotate90CounterClockwise, true
	}
	return 0, false
}

// openCapture opens path; with jpeg it asks for the undecoded packets and
// returns nil, nil when they are not JPEG images.
func openCapture(path string, jpeg bool) (*video, error) {
	c, err := gocv.VideoCaptureFileWithAPI(path, gocv.VideoCaptureFFmpeg)
	if err != nil || !c.IsOpened() {
		if c != nil {
			c.Close()
		}
		return nil, fmt.Errorf("frames: %s: cannot open as a video", path)
	}
	v := &video{cap: c, raw: gocv.NewMat(), jpeg: jpeg}
	var grey Grey // chosen on the probe's packet
	v.info = Info{Path: path, Frames: -1, BitDepth: 8,
		WidthPx: int(c.Get(gocv.VideoCaptureFrameWidth)), HeightPx: int(c.Get(gocv.VideoCaptureFrameHeight))}
	if n := c.Get(gocv.VideoCaptureFrameCount); n > 0 && n < math.MaxInt32 {
		v.info.Frames = int(math.Round(n))
	}
	if f := c.Get(gocv.VideoCaptureFPS); f > 0 && !math.IsInf(f, 0) && !math.IsNaN(f) {
		v.info.FPS = f
	}
	if err := checkFrameSize(v.info.WidthPx, v.info.HeightPx); err != nil {
		v.Close()
		return nil, fmt.Errorf("frames: %s: %v", path, err)
	}
	if jpeg {
		c.Set(gocv.VideoCaptureFormat, -1)
		ok := c.Get(gocv.VideoCaptureFormat) == -1 && c.Read(&v.raw)
		if ok {
			b, _ := v.raw.DataPtrUint8()
			ok = len(b) > 4 && b[0] == 0xff && b[1] == 0xd8
			if ok {
				g, err := gocv.IMDecode(b, gocv.IMReadColor)
				ok = err == nil && !g.Empty() && g.Cols() == v.info.WidthPx && g.Rows() == v.info.HeightPx
				if ok {
					grey, err = packetsGrey(c, &v.raw, g)
					ok = err == nil
				}
				g.Close()
			}
		}
		v.Close()
		if !ok {
			return nil, nil
		}
		// Reopen to start again at frame 0.
		c, err = gocv.VideoCaptureFileWithAPI(path, gocv.VideoCaptureFFmpeg)
		if err != nil || !c.IsOpened() {
			if c != nil {
				c.Close()
			}
			return nil, fmt.Errorf("frames: %s: cannot reopen as a video", path)
		}
		c.Set(gocv.VideoCaptureFormat, -1)
		v.cap, v.raw, v.closed = c, gocv.NewMat(), false
		v.setGrey(grey)
	}
	if v.info.WidthPx <= 0 || v.info.HeightPx <= 0 {
		v.Close()
		return nil, fmt.Errorf("frames: %s: the video has no frame size", path)
	}
	return v, nil
}

func (v *video) Info() Info { return v.info }

// Short implements Counted.
func (v *video) Short() int { return v.short }

// FrameTimesS implements Timed.
func (v *video) FrameTimesS() []float64 {
	if v.listed != nil {
		return v.listed
	}
	return v.posS
}

// notePosition records the time the capture gives the frame just read.
func (v *video) notePosition() {
	if v.posBad || v.listed != nil {
		return
	}
	if len(v.posS) != v.next {
		v.posBad = true // a frame was read without its time: stop here
		return
	}
	t := v.cap.Get(gocv.VideoCapturePosMsec) / 1000
	if math.IsNaN(t) || math.IsInf(t, 0) || (len(v.posS) > 0 && !(t-v.pos0S > v.posS[len(v.posS)-1])) {
		v.posBad = true
		return
	}
	if len(v.posS) == 0 {
		v.pos0S = t
	}
	v.posS = append(v.posS, t-v.pos0S)
}

// countSlack is how many frames short of the container's count a video may
// end without being called truncated: some containers give the count as
// duration times frame rate, off by a frame or two, or by rounding on long
// recordings (common practice); 1%, at least 2.
func countSlack(frames int) int { return max(2, frames/100) }

// advance reads up to the next frame of the range into v.raw and returns
// its index.
func (v *video) advance() (int, error) {
	if v.closed {
		return 0, fmt.Errorf("frames: %s: read after Close", v.info.Path)
	}
	target := v.r.First
	if v.next > v.r.First {
		target = v.next - 1 + v.r.step()
	}
	if v.r.Last >= 0 && target > v.r.Last {
		return 0, io.EOF
	}
	for v.next <= target {
		if !v.cap.Read(&v.raw) || v.raw.Empty() {
			if v.info.Frames >= 0 && v.next < v.info.Frames-countSlack(v.info.Frames) {
				return 0, &DamagedError{Path: v.info.Path, Frame: v.next, Of: v.info.Frames, Why: "file truncated or damaged"}
			}
			v.short = max(v.info.Frames-v.next, len(v.listed)-v.next, 0)
			return 0, io.EOF
		}
		v.notePosition()
		v.next++
	}
	return v.next - 1, nil
}

func (v *video) Next(dst *gocv.Mat) (int, error) {
	i, err := v.advance()
	if err != nil {
		return 0, err
	}
	if err := v.checkSize(v.raw, i); err != nil {
		return 0, err
	}
	switch v.raw.Channels() {
	case 1:
		v.raw.CopyTo(dst)
	case 3:
		if v.weights.Ptr() != nil {
			gocv.Transform(v.raw, dst, v.weights)
		} else {
			gocv.CvtColor(v.raw, dst, gocv.ColorBGRToGray)
		}
	case 4:
		gocv.CvtColor(v.raw, dst, gocv.ColorBGRAToGray)
	default:
		return 0, fmt.Errorf("frames: %s: frame %d has %d channels", v.info.Path, i, v.raw.Channels())
	}
	if dst.Type() != gocv.MatTypeCV8U {
		dst.ConvertTo(dst, gocv.MatTypeCV8U)
	}
	return i, nil
}

func (v *video) checkSize(m gocv.Mat, i int) error {
	if m.Cols() != v.info.WidthPx || m.Rows() != v.info.HeightPx {
		return fmt.Errorf("frames: %s: frame %d is %dx%d px, the video is %dx%d px",
			v.info.Path, i, m.Cols(), m.Rows(), v.info.WidthPx, v.info.HeightPx)
	}
	return nil
}

func (v *video) Close() error {
	if v.closed {
		return nil
	}
	v.closed = true
	v.raw.Close()
	if v.weights.Ptr() != nil {
		v.weights.Close()
		v.weights = gocv.Mat{}
	}
	return v.cap.Close()
}

// setGrey sets the reduction of the colour channels to grey.
func (v *video) setGrey(g Grey) {
	v.info.Grey = &g
	if g.Method == GreyWeighted {
		v.weights = weightsMat(g)
	}
}

// videoGrey chooses the reduction to grey of the video at path (not
// Motion JPEG) on its first frame, read through a capture of its own.
func videoGrey(path string) (Grey, error) {
	c, err := gocv.VideoCaptureFileWithAPI(path, gocv.VideoCaptureFFmpeg)
	if err != nil || !c.IsOpened() {
		if c != nil {
			c.Close()
		}
		return Grey{}, fmt.Errorf("frames: %s: cannot open as a video", path)
	}
	defer c.Close()
	if fcc := fourCC(c.Get(gocv.VideoCaptureFOURCC)); !slices.Contains(fullColourCodecs, fcc) {
		return unmeasuredLuma, nil
	}
	m, m2 := gocv.NewMat(), gocv.NewMat()
	defer m.Close()
	defer m2.Close()
	if !c.Read(&m) || m.Empty() {
		return Grey{}, fmt.Errorf("frames: %s: the first frame cannot be read", path)
	}
	if m.Type() != gocv.MatTypeCV8UC3 {
		return Grey{Method: GreyLuma, WeightsBGR: lumaBGR, LumaFraction: 1, Measured: true}, nil
	}
	if !c.Read(&m2) || m2.Type() != m.Type() {
		m2.Close()
		m2 = gocv.NewMat() // a video of one frame
	}
	return chooseGrey(m, m2)
}

// packetsGrey chooses the reduction to grey of a Motion JPEG video on its
// first frame, first (decoded in colour), and the second, read from c
// into raw.
func packetsGrey(c *gocv.VideoCapture, raw *gocv.Mat, first gocv.Mat) (Grey, error) {
	if b, err := raw.DataPtrUint8(); err != nil || jpegSubsampled(b) {
		return unmeasuredLuma, nil
	}
	second := gocv.NewMat()
	defer second.Close()
	if c.Read(raw) {
		if b, err := raw.DataPtrUint8(); err == nil && jpegDamage(b) == "" {
			if g, err := gocv.IMDecode(b, gocv.IMReadColor); err == nil {
				second.Close()
				second = g
			}
		}
	}
	if second.Cols() != first.Cols() || second.Rows() != first.Rows() || second.Type() != first.Type() {
		second.Close()
		second = gocv.NewMat()
	}
	return chooseGrey(first, second)
}
