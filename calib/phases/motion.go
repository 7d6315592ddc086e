package phases

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"math"

	"gocv.io/x/gocv"

	"gaptrace/calib"
)

// WallMotion measures, frame by frame, how far the tracers next to the
// moving wall travel along it: a strip of the gap beside the moving wall is
// resampled parallel to the walls, the static background (the temporal
// median) is subtracted, and the shift between consecutive frames' strips
// is found by phase correlation (OpenCV's phaseCorrelate). Feed it the
// frames in order with Add; Signal is then the input of Detect.
type WallMotion struct {
	size       image.Point // strip size: along the wall x across it
	warp       gocv.Mat    // strip -> image affine map
	background gocv.Mat    // the median resampled into the strip, float32
	cur, prev  gocv.Mat    // background-free strips, float32
	tmp        gocv.Mat
	exx, exy   float64 // unit vector along the wall (towards +x of the image)
	signal     []float64
	frames     int
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
)

// NewWallMotion prepares the measurement for images calibrated by cal, with
// median the static background (a grey Mat of the frames' size and depth).
// The caller closes the WallMotion.
func NewWallMotion(cal *calib.Calibration, median gocv.Mat) (*WallMotion, error) {
	if err := cal.Check(); err != nil {
		return nil, err
	}
	if median.Empty() || median.Channels() != 1 {
		return nil, errors.New("phases: the background must be a grey image")
	}
	if median.Cols() != cal.WidthPx || median.Rows() != cal.HeightPx {
		return nil, fmt.Errorf("phases: background %dx%d px, calibration made on %dx%d px", median.Cols(), median.Rows(), cal.WidthPx, cal.HeightPx)
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
	wm.background = gocv.NewMat()
	wm.cur, wm.prev, wm.tmp = gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	wm.resample(median, &wm.background)
	return wm, nil
}

// resample warps the strip of img into dst as float32.
func (w *WallMotion) resample(img gocv.Mat, dst *gocv.Mat) {
	img.ConvertTo(&w.tmp, gocv.MatTypeCV32F)
	gocv.WarpAffineWithParams(w.tmp, dst, w.warp, w.size, gocv.InterpolationLinear|gocv.WarpInverseMap, gocv.BorderReplicate, color.RGBA{})
}

// Add measures the next frame (a grey Mat like the background) against the
// previous one and appends the displacement along the wall, px, to the
// signal (0 for the first frame).
func (w *WallMotion) Add(frame gocv.Mat) error {
	if frame.Empty() || frame.Channels() != 1 {
		return errors.New("phases: frames must be grey images")
	}
	w.resample(frame, &w.cur)
	gocv.Subtract(w.cur, w.background, &w.cur)
	if w.frames == 0 {
		w.signal = append(w.signal, 0)
	} else {
		win := gocv.NewMat()
		shift, _ := gocv.PhaseCorrelate(w.prev, w.cur, win)
		win.Close()
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
	for _, m := range []*gocv.Mat{&w.warp, &w.background, &w.cur, &w.prev, &w.tmp} {
		m.Close()
	}
}
