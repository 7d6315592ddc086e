package flowprior

import (
	"errors"
	"fmt"
	"image"
	"math"
	"unsafe"

	"gocv.io/x/gocv"

	"gaptrace/calib"
	"gaptrace/calib/robust"
)

// StripOptions sets how a StripEstimator cuts the gap into strips.
type StripOptions struct {
	// StripPx is the height of a strip, rows. Zero means DefaultStripPx.
	StripPx int
	// StrideRows is the distance between strip tops, rows. Zero means half
	// a strip, so that strips overlap by half.
	StrideRows int
	// MinResponse is the smallest phase-correlation peak accepted as a
	// measurement. Zero means DefaultMinResponse.
	MinResponse float64
	// MaxStepPx rejects a strip shift longer than this, px. Zero means no
	// bound beyond the strip's own size.
	MaxStepPx float64
	// BackgroundPx is the sd of the Gaussian blur whose result is
	// subtracted from each frame before correlating, px, so that the
	// illumination and the static background (which do not move) do not pull
	// the shift towards zero. Zero means DefaultBackgroundPx; negative means
	// none.
	BackgroundPx float64
}

// Defaults of StripOptions.
const (
	// DefaultStripPx is a few tracer diameters: tall enough to hold tracers
	// in most frames, short enough that the shear across one strip is a
	// small part of the profile (common practice).
	DefaultStripPx = 16
	// DefaultMinResponse rejects the correlation of a strip whose peak does
	// not stand out: a strip with tracers gives a response of 0.6 to 1.1 on
	// the scenarios of package synth, a strip whose peak is a chance
	// alignment of noise or of a lone tracer 0.05 to 0.25 (measured there,
	// not a general rule).
	DefaultMinResponse = 0.3
	// DefaultBackgroundPx is a few tracer diameters of 5 px: the blur keeps
	// the illumination and removes the tracers (common practice for a
	// background estimate).
	DefaultBackgroundPx = 8.0
	// minKnownFraction is the fraction of frame pairs a strip must have
	// correlated in to be known; fewer, and its median is a few chance
	// peaks.
	minKnownFraction = 0.25
)

// wallMarginPx keeps strips this far from the walls, beyond their tilt, so
// that a wall's edge, which does not move with the fluid next to it, never
// enters a strip.
const wallMarginPx = 2

// StripEstimator measures the displacement profile from consecutive frames:
// it cuts the gap into horizontal strips (parallel to the walls up to the
// tilt) and phase-correlates each strip of one frame with the same strip of
// the next (gocv.PhaseCorrelate with a Hann window), which gives the mean
// displacement of the tracers in the strip. Over many frame pairs the
// measurements are combined by median polish: each measurement is a profile
// value of its strip plus a common-mode shift of its frame pair, and both are
// found as medians, so that jitter neither biases the profile nor needs a
// separate pass. A StripEstimator holds OpenCV buffers: Close it.
type StripEstimator struct {
	cal    *calib.Calibration
	opt    StripOptions
	w, h   int
	tops   []int
	yUM    []float64
	win    gocv.Mat
	fa, fb gocv.Mat
	bg     gocv.Mat
	dx, dy [][]float64 // per pair, per strip; NaN when rejected
	closed bool
}

// NewStripEstimator prepares the strips for frames of widthPx x heightPx.
func NewStripEstimator(cal *calib.Calibration, widthPx, heightPx int, opt StripOptions) (*StripEstimator, error) {
	if err := cal.Check(); err != nil {
		return nil, fmt.Errorf("flowprior: %w", err)
	}
	if widthPx < 8 || heightPx < 8 {
		return nil, fmt.Errorf("flowprior: frame of %dx%d px is too small for strips", widthPx, heightPx)
	}
	if opt.StripPx == 0 {
		opt.StripPx = DefaultStripPx
	}
	if opt.StrideRows == 0 {
		opt.StrideRows = max(opt.StripPx/2, 1)
	}
	if opt.MinResponse == 0 {
		opt.MinResponse = DefaultMinResponse
	}
	if opt.BackgroundPx == 0 {
		opt.BackgroundPx = DefaultBackgroundPx
	}
	if opt.MaxStepPx < 0 || math.IsNaN(opt.MaxStepPx) {
		return nil, fmt.Errorf("flowprior: MaxStepPx must not be negative, got %g px", opt.MaxStepPx)
	}
	if opt.StripPx < 4 || opt.StripPx > heightPx || opt.StrideRows < 1 {
		return nil, fmt.Errorf("flowprior: strip of %d rows every %d rows does not fit a frame %d rows high", opt.StripPx, opt.StrideRows, heightPx)
	}
	e := &StripEstimator{cal: cal, opt: opt, w: widthPx, h: heightPx}
	// The walls' rows at the left and right edge of the frame.
	xc, _ := cal.ToGap(float64(widthPx-1)/2, float64(heightPx-1)/2)
	_, rs := cal.ToImage(xc, 0)
	_, rm := cal.ToImage(xc, cal.GapUM)
	fx, fy := FlowDir(cal)
	tiltRows := math.Abs(fy/fx) * float64(widthPx) / 2
	top := math.Min(rs, rm) + tiltRows + wallMarginPx
	bottom := math.Max(rs, rm) - tiltRows - wallMarginPx
	for t := int(math.Ceil(top)); float64(t+opt.StripPx-1) <= bottom; t += opt.StrideRows {
		if t < 0 || t+opt.StripPx > heightPx {
			continue
		}
		_, y := cal.ToGap(float64(widthPx-1)/2, float64(t)+float64(opt.StripPx-1)/2)
		e.tops = append(e.tops, t)
		e.yUM = append(e.yUM, y)
	}
	if len(e.tops) == 0 {
		return nil, fmt.Errorf("flowprior: no strip of %d rows fits between the walls (rows %.1f to %.1f)", opt.StripPx, top, bottom)
	}
	// Keep strips in ascending gap height.
	if len(e.yUM) > 1 && e.yUM[0] > e.yUM[len(e.yUM)-1] {
		for i, j := 0, len(e.yUM)-1; i < j; i, j = i+1, j-1 {
			e.tops[i], e.tops[j] = e.tops[j], e.tops[i]
			e.yUM[i], e.yUM[j] = e.yUM[j], e.yUM[i]
		}
	}
	win, err := hann(opt.StripPx, widthPx)
	if err != nil {
		return nil, err
	}
	e.win = win
	e.fa, e.fb, e.bg = gocv.NewMat(), gocv.NewMat(), gocv.NewMat()
	return e, nil
}

// hann returns a rows x cols CV32F Hann window (the outer product of two
// periodic-free Hann tapers).
func hann(rows, cols int) (gocv.Mat, error) {
	w := make([]float32, rows*cols)
	taper := func(i, n int) float64 { return 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(n-1)) }
	for r := 0; r < rows; r++ {
		wr := taper(r, rows)
		for c := 0; c < cols; c++ {
			w[r*cols+c] = float32(wr * taper(c, cols))
		}
	}
	b := unsafe.Slice((*byte)(unsafe.Pointer(&w[0])), 4*len(w))
	return gocv.NewMatFromBytes(rows, cols, gocv.MatTypeCV32F, b)
}

// Strips returns the gap height of each strip's centre, um.
func (e *StripEstimator) Strips() []float64 { return e.yUM }

// Pairs returns the number of frame pairs added.
func (e *StripEstimator) Pairs() int { return len(e.dx) }

// Add measures every strip between prev and next, grey frames (8 or 16 bit
// or float) of the estimator's size. For Result's common-mode shifts to mean
// anything, add consecutive pairs (0,1), (1,2), ... in order.
func (e *StripEstimator) Add(prev, next gocv.Mat) error {
	if e.closed {
		return errors.New("flowprior: Add on a closed StripEstimator")
	}
	for _, m := range []gocv.Mat{prev, next} {
		if m.Cols() != e.w || m.Rows() != e.h || m.Channels() != 1 {
			return fmt.Errorf("flowprior: frame is %dx%d with %d channels, want %dx%d grey", m.Cols(), m.Rows(), m.Channels(), e.w, e.h)
		}
	}
	e.prepare(prev, &e.fa)
	e.prepare(next, &e.fb)
	dx := make([]float64, len(e.tops))
	dy := make([]float64, len(e.tops))
	for s, t := range e.tops {
		r := image.Rect(0, t, e.w, t+e.opt.StripPx)
		a, b := e.fa.Region(r), e.fb.Region(r)
		sh, resp := gocv.PhaseCorrelate(a, b, e.win)
		a.Close()
		b.Close()
		tooFar := e.opt.MaxStepPx > 0 && math.Hypot(float64(sh.X), float64(sh.Y)) > e.opt.MaxStepPx
		if resp < e.opt.MinResponse || math.IsNaN(resp) || tooFar {
			dx[s], dy[s] = math.NaN(), math.NaN()
			continue
		}
		dx[s], dy[s] = float64(sh.X), float64(sh.Y)
	}
	e.dx = append(e.dx, dx)
	e.dy = append(e.dy, dy)
	return nil
}

// prepare converts a frame to float and subtracts its blurred background.
func (e *StripEstimator) prepare(src gocv.Mat, dst *gocv.Mat) {
	src.ConvertTo(dst, gocv.MatTypeCV32F)
	if e.opt.BackgroundPx < 0 {
		return
	}
	gocv.GaussianBlur(*dst, &e.bg, image.Point{}, e.opt.BackgroundPx, e.opt.BackgroundPx, gocv.BorderReflect101)
	gocv.Subtract(*dst, e.bg, dst)
}

// polishRounds is the number of median-polish sweeps; the fit settles in two
// or three (Tukey, 1977).
const polishRounds = 4

// Result combines the measurements into a Profile, one bin per strip, and
// the common-mode offsets of frames 0..Pairs() relative to frame 0, px.
// The common mode is the part of the motion shared by all strips that changes
// from pair to pair; its linear trend is removed, so a steady drift stays in
// the profile.
func (e *StripEstimator) Result() (*Profile, []Shift, error) {
	np, ns := len(e.dx), len(e.tops)
	if np == 0 {
		return nil, nil, errors.New("flowprior: no frame pairs added")
	}
	ux, jx := polish(e.dx, ns)
	uy, jy := polish(e.dy, ns)
	p := &Profile{YUM: append([]float64(nil), e.yUM...), DXPx: ux, DYPx: uy,
		SpreadPx: make([]float64, ns), N: make([]int, ns)}
	fx, fy := FlowDir(e.cal)
	for s := 0; s < ns; s++ {
		var res []float64
		for q := 0; q < np; q++ {
			if v := e.dx[q][s]; !math.IsNaN(v) {
				r := (v - jx[q] - ux[s]) * fx
				if w := e.dy[q][s]; !math.IsNaN(w) {
					r += (w - jy[q] - uy[s]) * fy
				}
				res = append(res, r)
			}
		}
		p.N[s] = len(res)
		_, p.SpreadPx[s] = medianSpread(res)
		if float64(len(res)) < minKnownFraction*float64(np) {
			p.N[s] = 0
		}
		if p.N[s] == 0 {
			p.DXPx[s], p.DYPx[s] = 0, 0
		}
	}
	if p.Known() == 0 {
		return nil, nil, fmt.Errorf("flowprior: no strip correlated above response %g in %d frame pairs", e.opt.MinResponse, np)
	}
	// Offsets: the running sum of the pairs' shifts, without its linear
	// trend (a steady drift looks like flow and stays in the profile).
	ox, oy := make([]float64, np+1), make([]float64, np+1)
	for q := 0; q < np; q++ {
		ox[q+1], oy[q+1] = ox[q]+jx[q], oy[q]+jy[q]
	}
	detrend(ox)
	detrend(oy)
	cm := make([]Shift, np+1)
	for f := range cm {
		cm[f] = Shift{ox[f] - ox[0], oy[f] - oy[0]}
	}
	return p, cm, nil
}

// polish fits m[q][s] = u[s] + j[q] by median polish, ignoring NaN, with the
// median of j set to zero. A strip without values gets u = NaN; a pair
// without values gets j = 0.
func polish(m [][]float64, ns int) (u, j []float64) {
	np := len(m)
	u = make([]float64, ns)
	j = make([]float64, np)
	buf := make([]float64, 0, max(np, ns))
	for round := 0; round < polishRounds; round++ {
		for s := 0; s < ns; s++ {
			buf = buf[:0]
			for q := 0; q < np; q++ {
				if v := m[q][s]; !math.IsNaN(v) {
					buf = append(buf, v-j[q])
				}
			}
			u[s] = robust.Median(buf)
		}
		for q := 0; q < np; q++ {
			buf = buf[:0]
			for s := 0; s < ns; s++ {
				if v := m[q][s]; !math.IsNaN(v) && !math.IsNaN(u[s]) {
					buf = append(buf, v-u[s])
				}
			}
			if len(buf) == 0 {
				j[q] = 0
				continue
			}
			j[q] = robust.Median(buf)
		}
		buf = append(buf[:0], j...)
		if mj := robust.Median(buf); !math.IsNaN(mj) {
			for q := range j {
				j[q] -= mj
			}
		}
	}
	for s := range u {
		if math.IsNaN(u[s]) {
			u[s] = 0
		}
	}
	return u, j
}

// Close releases the OpenCV buffers.
func (e *StripEstimator) Close() error {
	if e.closed {
		return nil
	}
	e.closed = true
	e.win.Close()
	e.fa.Close()
	e.fb.Close()
	e.bg.Close()
	return nil
}
