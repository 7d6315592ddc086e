package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/atomicfile"
	"gaptrace/calib/experiment"
	"gaptrace/profile/phases"
	"gaptrace/track/detect"
	"gaptrace/track/frames"
	"gaptrace/track/link"
	"gaptrace/track/tracks"
)

// medianFrames is how many frames from the start of the recording make the
// median image the walls are found on: the walls are static, so a short
// stretch suffices, and tracers crossing a pixel in fewer than half of these
// frames vanish from it.
const medianFrames = 31

// defaultDiameterPx is the tracer diameter assumed when the experiment file
// gives none: a typical seeded tracer a few pixels across (common practice).
const defaultDiameterPx = 5

// maskMarginFactor keeps detections this many tracer radii away from each
// wall line, outside the wall's edge and reflection line.
const maskMarginFactor = 1.0

// chain holds what the stages share for one input.
type chain struct {
	expPath  string
	exp      *experiment.Experiment
	input    string
	progress bool
	stderr   io.Writer
	// noJitter skips measuring and removing the camera's jitter.
	noJitter bool

	info frames.Info
	cal  *calib.Calibration
	// head is the input, opened by calibrate, until a stage takes it.
	head *frames.Head

	// Detection diagnostics, for the report.
	snr          []float64
	fracX, fracY []float64
	detections   int
	minSNR       float64
}

// loadExperiment reads the experiment file; every problem is bad input.
func loadExperiment(path string) (*experiment.Experiment, error) {
	if path == "" {
		return nil, badInputf("no experiment file: give -e EXPERIMENT.yaml")
	}
	e, err := experiment.Load(path)
	if err != nil {
		return nil, badInput(err)
	}
	return e, nil
}

// openInput opens the frames of the input with the experiment's frame rate.
func (c *chain) openInput(r frames.Range) (frames.Source, error) {
	if _, err := os.Stat(c.input); err != nil && !hasGlob(c.input) {
		return nil, badInputf("input %s: %v", c.input, errors.Unwrap(err))
	}
	src, err := frames.Open(c.input, c.exp.Camera.FPS, r)
	if err != nil {
		return nil, badInput(err)
	}
	info := src.Info()
	if !(info.FPS > 0) {
		src.Close()
		return nil, badInputf("input %s: no frame rate in the file; give camera.fps in the experiment file", c.input)
	}
	return src, nil
}

func hasGlob(p string) bool {
	for _, r := range p {
		if r == '*' || r == '?' || r == '[' {
			return true
		}
	}
	return false
}

// readAheadBytes bounds the memory of the frames decoded ahead, on a core
// otherwise idle, while the walls are found on the median: 64 MiB is 64
// frames of 1 MP at 8 bit, more than one core decodes in that time.
const readAheadBytes = 64 << 20

// calibrate opens the input, finds the walls and the scale on the median of
// its first frames, and keeps the input open in c.head, its first frames
// decoded, for the stage that reads every frame. The caller closes the
// returned median image and calls c.close.
func (c *chain) calibrate() (gocv.Mat, error) {
	src, err := c.openInput(frames.All)
	if err != nil {
		return gocv.Mat{}, err
	}
	c.info = src.Info()
	head, err := frames.ReadHead(src, medianFrames)
	if err != nil {
		src.Close()
		return gocv.Mat{}, badInput(err)
	}
	c.head = head
	med, err := head.Median()
	if err != nil {
		med.Close()
		return gocv.Mat{}, badInput(err)
	}
	bytesPerFrame := c.info.WidthPx * c.info.HeightPx * c.info.BitDepth / 8
	head.ReadAhead(readAheadBytes / max(1, bytesPerFrame))
	cal, err := calib.Calibrate(med, c.exp, calib.Options{BaseDir: filepath.Dir(c.expPath)})
	if err != nil {
		med.Close()
		return gocv.Mat{}, badInput(err)
	}
	c.cal = cal
	return med, nil
}

// takeInput hands over the input left open by calibrate (its first frames
// decoded) to a stage that reads every frame and closes it; a second call
// opens the input again.
func (c *chain) takeInput() (frames.Source, error) {
	if h := c.head; h != nil {
		c.head = nil
		return h, nil
	}
	return c.openInput(frames.All)
}

// close releases the input if no stage took it.
func (c *chain) close() {
	if c.head != nil {
		c.head.Close()
		c.head = nil
	}
}

// detectAll runs the detector over every frame, inside the gap, and returns
// the detections per frame index.
func (c *chain) detectAll() ([][]link.Detection, error) {
	src, err := c.takeInput()
	if err != nil {
		return nil, err
	}
	defer src.Close()
	c.info = src.Info()
	d := c.exp.Tracers.DiameterPx
	if d == 0 {
		d = defaultDiameterPx
	}
	opt := detect.Options{
		DiameterPx: d,
		Polarity:   c.exp.PolarityHint(),
		Mask: &detect.Mask{Stationary: c.cal.StationaryWallPx, Moving: c.cal.MovingWallPx,
			MarginPx: maskMarginFactor * d / 2},
	}
	c.minSNR = detect.DefaultMinSNR
	pr := newProgress(c.stderr, c.progress, "detect", c.info.Frames)
	var out [][]link.Detection
	n := 0
	// The detector's own band-pass removes the smooth background; a temporal
	// median is not subtracted because tracers at rest, before the shear and
	// after cessation, would be part of it and vanish.
	noBackground := gocv.NewMat()
	defer noBackground.Close()
	err = detect.Run(src, noBackground, opt, func(frame int, dets []detect.Detection) error {
		for len(out) <= frame {
			out = append(out, nil)
		}
		ld := make([]link.Detection, len(dets))
		for i, x := range dets {
			ld[i] = link.Detection{XPx: x.XPx, YPx: x.YPx, Brightness: x.Brightness, SizePx: x.SizePx}
			c.snr = append(c.snr, x.SNR)
			c.fracX = append(c.fracX, x.XPx-math.Floor(x.XPx))
			c.fracY = append(c.fracY, x.YPx-math.Floor(x.YPx))
		}
		out[frame] = ld
		c.detections += len(dets)
		n++
		pr.update(n)
		return nil
	})
	pr.done()
	if err != nil {
		return nil, badInput(err)
	}
	if n == 0 {
		return nil, badInputf("input %s: no frames", c.input)
	}
	if c.detections == 0 {
		return nil, badInputf("no tracers found in %d frames of %s (tracer diameter %g px, polarity %s)", n, c.input, d, opt.Polarity)
	}
	return out, nil
}

// maxWallSpeed returns the largest moving-wall speed of the program, um/s.
func maxWallSpeed(p experiment.Program) float64 {
	v := 0.0
	for _, s := range p {
		v = math.Max(v, math.Abs(s.WallSpeedUMPerS))
	}
	return v
}

// linkAll links the detections into tracks in gap coordinates.
func (c *chain) linkAll(dets [][]link.Detection) ([]tracks.Point, link.Stats, error) {
	v := maxWallSpeed(c.exp.Program())
	if v == 0 {
		// No program: allow a wall speed that moves a tracer across a fifth
		// of the image per frame.
		v = 0.2 * float64(c.info.WidthPx) * c.cal.UMPerPx * c.info.FPS
	}
	// The camera's jitter is measured on the tracks of the linker's first
	// pass and removed in its final pass (link.Options.MeasureCommonMode,
	// which keeps only the fast part along the flow).
	opt := link.Options{FPS: c.info.FPS, MaxStepPx: link.MaxStepFor(v, c.info.FPS, c.cal.UMPerPx),
		GapFrames: link.DefaultGapFrames, MeasureCommonMode: !c.noJitter}
	pts, st, err := link.Link(dets, c.cal, opt)
	if err != nil {
		return nil, st, err
	}
	if st.Tracks == 0 {
		return nil, st, badInputf("no tracks: %d detections in %d frames could not be linked", st.Detections, len(dets))
	}
	return pts, st, nil
}

// writeTracks writes tracks.csv atomically.
func writeTracks(path string, pts []tracks.Point) error {
	return atomicfile.Write(path, func(w io.Writer) error { return tracks.WriteCSV(w, pts) })
}

// writeCalibJSON writes calibration.json atomically.
func writeCalibJSON(path string, cal *calib.Calibration) error {
	b, err := json.MarshalIndent(cal, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteBytes(path, append(b, '\n'))
}

// wallStripFraction is the part of the gap next to the moving wall whose
// tracks give the wall-motion signal that the phases and the direction of
// the flow are detected from.
const wallStripFraction = 0.2

// wallSignal returns, for each frame, the median displacement along the
// walls (px, towards +x of the image) since the previous frame of the tracks
// next to the moving wall; 0 where no track crosses the strip.
func (c *chain) wallSignal(pts []tracks.Point, nFrames int) []float64 {
	ex, ey := c.cal.StationaryWallPx[1][0]-c.cal.StationaryWallPx[0][0], c.cal.StationaryWallPx[1][1]-c.cal.StationaryWallPx[0][1]
	n := math.Hypot(ex, ey)
	ex, ey = ex/n, ey/n
	if ex < 0 {
		ex, ey = -ex, -ey
	}
	steps := make([][]float64, nFrames)
	for i := 1; i < len(pts); i++ {
		p, q := pts[i-1], pts[i]
		if q.Track == tracks.Unlinked || q.Track != p.Track || q.Frame != p.Frame+1 ||
			q.YUM < (1-wallStripFraction)*c.cal.GapUM || q.Frame >= nFrames {
			continue
		}
		steps[q.Frame] = append(steps[q.Frame], (q.XPx-p.XPx)*ex+(q.YPx-p.YPx)*ey)
	}
	sig := make([]float64, nFrames)
	for f, st := range steps {
		if len(st) > 0 {
			sort.Float64s(st)
			sig[f] = st[len(st)/2]
		}
	}
	return sig
}

// detectPhases finds the phases of wall motion in the tracks, sets the
// direction of the flow from them (flipping x_um when the moving wall
// travels towards -x of the image), and reconciles them with the motion
// program. It returns the phases to pass to the analysis (nil: the
// program's) and warnings.
func (c *chain) detectPhases(pts []tracks.Point, nFrames int) ([]phases.Phase, []string) {
	prog := c.exp.Program()
	det, err := phases.Detect(c.wallSignal(pts, nFrames), c.info.FPS)
	if err != nil {
		if len(prog) == 0 {
			return nil, []string{fmt.Sprintf("no motion program and no wall motion detected in the video: %v", err)}
		}
		return nil, []string{fmt.Sprintf("phases not detected in the video: %v", err)}
	}
	// +x of the gap is the direction the moving wall travels in the first
	// shear phase (the contract's convention).
	if det.FlowSign != 0 && det.FlowSign != c.cal.FlowSign {
		c.cal.FlowSign = det.FlowSign
		for i := range pts {
			pts[i].XUM = -pts[i].XUM
		}
	}
	durS := float64(nFrames) / c.info.FPS
	use, warn := phases.Reconcile(phases.FromProgram(prog, durS), det.Phases, c.info.FPS)
	if len(prog) > 0 {
		return nil, warn
	}
	return use, warn
}
