package phases

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/color"
	"io"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/track/frames"
)

// WallMotion measures, frame by frame, how far the tracers next to the
// moving wall travel along it: a strip of the gap beside the moving wall is
// resampled parallel to the walls, its smooth background is removed by a
// high-pass filter (the strip minus a Gaussian blur of it), and the shift
// between consecutive frames' strips is found by phase correlation
// (OpenCV's phaseCorrelate, with a Hann window). A temporal median is not
// subtracted: taken over a rest phase it holds the tracers, whose still
// ghosts would then pin the correlation at zero. Feed it the frames in
// order with Add; Signal is then the input of Detect.
type WallMotion struct {
	size      image.Point // strip size: along the wall x across it
	warp      gocv.Mat    // strip -> image affine map
	window    gocv.Mat    // Hann window of the strip, float32
	cur, prev gocv.Mat    // high-passed strips, float32
	tmp, blur gocv.Mat
	exx, exy  float64 // unit vector along the wall (towards +x of the image)
	signal    []float64
	frames    int
}

// Strip placement.
const (
	// stripGapFrac and the limits: the strip is a fifth of the gap high,
	// between 8 and 48 px, so it holds tracers but stays in the layer that
	// moves with the wall.
	stripGapFrac  = 0.2
	minStripPx    = 8
	maxStripPx    = 48
	stripOffFrac  = 0.03 // the strip starts this fraction of the gap from the moving wall
	minStripOffPx = 3    // and at least this far, clear of the wall's edge and reflection
	// highPassSigmaPx: the blur subtracted from the strip is far wider than
	// a tracer (a few px) and far narrower than the illumination's changes.
	highPassSigmaPx = 6
)

// NewWallMotion prepares the measurement for frames calibrated by cal. The
// caller closes the WallMotion.
func NewWallMotion(cal *calib.Calibration) (*WallMotion, error) {
	if err := cal.Check(); err != nil {
		return nil, err
	}
	m := cal.MovingWallPx
	dx, dy := m[1][0]-m[0][0], m[1][1]-m[0][1]
	l := math.Hypot(dx, dy)
	exx, exy := dx/l, dy/l
	if exx < 0 {
		exx, exy = -exx, -exy
	}
	// Normal from the moving wall into the gap.
	s := cal.StationaryWallPx
	nx, ny := -exy, exx
	if (s[0][0]-m[0][0])*nx+(s[0][1]-m[0][1])*ny < 0 {
		nx, ny = -nx, -ny
	}
	hPx := math.Max(minStripPx, math.Min(maxStripPx, stripGapFrac*cal.GapPx))
	off := math.Max(minStripOffPx, stripOffFrac*cal.GapPx)
	if off+hPx > cal.GapPx/2 {
		return nil, fmt.Errorf("phases: the gap of %.1f px is too narrow for a %.0f px strip beside the moving wall", cal.GapPx, hPx)
	}
	// The strip spans the image width along the wall, starting where the
	// wall's line meets the image's left edge.
	wPx := int(float64(cal.WidthPx) * exx)
	o := image.Pt(wPx, int(hPx))
	ox := m[0][0] + off*nx
	oy := m[0][1] + off*ny
	if m[0][0] > m[1][0] {
		ox, oy = m[1][0]+off*nx, m[1][1]+off*ny
	}
	wm := &WallMotion{size: o, exx: exx, exy: exy}
	wm.warp = gocv.NewMatWithSize(2, 3, gocv.MatTypeCV64F)
	for i, v := range []float64{exx, nx, ox, exy, ny, oy} {
		wm.warp.SetDoubleAt(i/3, i%3, v)
	}
	wm.cur, wm.prev, wm.tmp, wm.blur = gocv.NewMat(), gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	win, err := hannWindow(o)
	if err != nil {
		wm.Close()
		return nil, err
	}
	wm.window = win
	return wm, nil
}

// hannWindow returns the 2-D Hann window of the given size as float32.
func hannWindow(sz image.Point) (gocv.Mat, error) {
	hann := func(i, n int) float64 { return 0.5 - 0.5*math.Cos(2*math.Pi*(float64(i)+0.5)/float64(n)) }
	b := make([]byte, 4*sz.X*sz.Y)
	for y := 0; y < sz.Y; y++ {
		hy := hann(y, sz.Y)
		for x := 0; x < sz.X; x++ {
			binary.LittleEndian.PutUint32(b[4*(y*sz.X+x):], math.Float32bits(float32(hy*hann(x, sz.X))))
		}
	}
	return gocv.NewMatFromBytes(sz.Y, sz.X, gocv.MatTypeCV32F, b)
}

// strip warps the strip of img into dst as float32 and high-passes it.
func (w *WallMotion) strip(img gocv.Mat, dst *gocv.Mat) {
	img.ConvertTo(&w.tmp, gocv.MatTypeCV32F)
	gocv.WarpAffineWithParams(w.tmp, dst, w.warp, w.size, gocv.InterpolationLinear|gocv.WarpInverseMap, gocv.BorderReplicate, color.RGBA{})
	gocv.GaussianBlur(*dst, &w.blur, image.Pt(0, 0), highPassSigmaPx, highPassSigmaPx, gocv.BorderReplicate)
	gocv.Subtract(*dst, w.blur, dst)
}

// Add measures the next frame (a grey Mat of the calibrated size) against
// the previous one and appends the displacement along the wall, px, to the
// signal (0 for the first frame).
func (w *WallMotion) Add(frame gocv.Mat) error {
	if frame.Empty() || frame.Channels() != 1 {
		return errors.New("phases: frames must be grey images")
	}
	w.strip(frame, &w.cur)
	if w.frames == 0 {
		w.signal = append(w.signal, 0)
	} else {
		shift, _ := gocv.PhaseCorrelate(w.prev, w.cur, w.window)
		// The strip's x axis runs along the wall towards +x of the image.
		w.signal = append(w.signal, float64(shift.X))
	}
	w.prev, w.cur = w.cur, w.prev
	w.frames++
	return nil
}

// Signal returns the displacement per frame measured so far, px along the
// wall, positive towards +x of the image.
func (w *WallMotion) Signal() []float64 { return w.signal }

// Close releases the OpenCV buffers.
func (w *WallMotion) Close() {
	for _, m := range []*gocv.Mat{&w.warp, &w.window, &w.cur, &w.prev, &w.tmp, &w.blur} {
		if m.Ptr() != nil {
			m.Close()
		}
	}
}

// Measure reads every remaining frame of src through a WallMotion for cal
// and returns the signal for Detect. progress, when not nil, is called with
// the number of frames read so far. A cancelled ctx stops it at the next
// frame with the context's error.
func Measure(ctx context.Context, src frames.Source, cal *calib.Calibration, progress func(done int)) ([]float64, error) {
	wm, err := NewWallMotion(cal)
	if err != nil {
		return nil, err
	}
	defer wm.Close()
	fr := gocv.NewMat()
	defer fr.Close()
	for n := 1; ; n++ {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		if _, err := src.Next(&fr); errors.Is(err, io.EOF) {
			break
		} else if err != nil {
			return nil, err
		}
		if err := wm.Add(fr); err != nil {
			return nil, err
		}
		if progress != nil {
			progress(n)
		}
	}
	return wm.Signal(), nil
}
