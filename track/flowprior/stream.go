package flowprior

import (
	"fmt"
	"math"

	"gaptrace/calib"
	"gaptrace/calib/robust"
	"gaptrace/track/tracks"
)

// SeriesBuilder makes the Series that SeriesFromTracks makes, from the
// one-frame steps of the tracks given as they are linked, frame by frame,
// instead of from the finished tracks: it holds the steps of one window
// at a time.
type SeriesBuilder struct {
	cal      *calib.Calibration
	opt      TrackOptions
	window   int
	windows  int
	cur      int // window whose steps are being gathered
	steps    []step
	s        Series
	known    int
	firstErr error
	points   int
}

// NewSeriesBuilder starts the Series of SeriesFromTracks over frames
// frames in windows of windowFrames.
func NewSeriesBuilder(cal *calib.Calibration, opt TrackOptions, frames, windowFrames int) (*SeriesBuilder, error) {
	if windowFrames < 1 {
		return nil, fmt.Errorf("flowprior: a window needs at least 1 frame, got %d", windowFrames)
	}
	if frames < 1 {
		return nil, fmt.Errorf("flowprior: need at least one frame, got %d", frames)
	}
	if err := cal.Check(); err != nil {
		return nil, fmt.Errorf("flowprior: %w", err)
	}
	if n := opt.NominalIntervalS; n < 0 || math.IsNaN(n) || math.IsInf(n, 0) {
		return nil, fmt.Errorf("flowprior: nominal frame interval %g s must be positive or zero", n)
	}
	return &SeriesBuilder{cal: cal, opt: opt, window: windowFrames, windows: (frames + windowFrames - 1) / windowFrames}, nil
}

// Step adds the step of one track from point a to point b. Steps must
// come in non-decreasing order of a.Frame's window (as a Linker makes
// them, frame by frame); a pair that is not one frame apart is ignored.
func (b *SeriesBuilder) Step(p, q *tracks.Point) {
	b.points++
	if q.Frame != p.Frame+1 || p.Frame < 0 {
		return
	}
	w := p.Frame / b.window
	if w >= b.windows {
		return
	}
	scale := 1.0
	if b.opt.NominalIntervalS > 0 {
		dt := q.TS - p.TS
		if !(dt > 0) || math.IsInf(dt, 0) {
			return
		}
		scale = b.opt.NominalIntervalS / dt
	}
	b.closeTo(w)
	um := b.cal.UMPerPx
	b.steps = append(b.steps, step{(p.YUM + q.YUM) / 2, scale * (q.XUM - p.XUM) / um, scale * (q.YUM - p.YUM) / um})
}

// closeTo finishes the windows before w.
func (b *SeriesBuilder) closeTo(w int) {
	for b.cur < w {
		p, err := profileFromSteps(b.steps, b.cal, b.opt, b.points)
		if err != nil && b.firstErr == nil {
			b.firstErr = err
		}
		if p != nil {
			b.known++
		}
		b.s.Start = append(b.s.Start, b.cur*b.window)
		b.s.Profiles = append(b.s.Profiles, p)
		b.steps = b.steps[:0]
		b.cur++
	}
}

// Series finishes the last windows and returns the Series, or the first
// window's error when no window could be measured.
func (b *SeriesBuilder) Series() (*Series, error) {
	b.closeTo(b.windows)
	s := b.s
	return finishSeries(&s, b.known, b.firstErr)
}

// QuickCommon makes the offsets of QuickCommonMode from the steps of the
// tracks given as they are linked, frame by frame: it keeps one frame's
// steps and two numbers per frame.
type QuickCommon struct {
	field  Field
	frames int
	cur    int
	rx, ry []float64 // residuals of the steps into frame cur
	mx, my []float64
}

// NewQuickCommon starts QuickCommonMode(pts, field, frames); it returns
// nil when QuickCommonMode would (frames < 2 or field nil). A nil
// QuickCommon ignores steps and gives nil.
func NewQuickCommon(field Field, frames int) *QuickCommon {
	if frames < 2 || field == nil {
		return nil
	}
	return &QuickCommon{field: field, frames: frames, mx: make([]float64, frames), my: make([]float64, frames)}
}

// Step adds the step of one track from point a to point b (image
// positions, without correction). Steps must come in non-decreasing order
// of b.Frame.
func (c *QuickCommon) Step(a, b *tracks.Point) {
	if c == nil || b.Frame != a.Frame+1 || b.Frame < 1 || b.Frame >= c.frames {
		return
	}
	px, py, ok := c.field.Step(a.Frame, a.YUM)
	if !ok {
		return
	}
	c.closeTo(b.Frame)
	c.rx = append(c.rx, b.XPx-a.XPx-px)
	c.ry = append(c.ry, b.YPx-a.YPx-py)
}

// closeTo takes the medians of frame cur when the steps reach frame f.
func (c *QuickCommon) closeTo(f int) {
	if f == c.cur {
		return
	}
	if len(c.rx) >= minCommonPoints {
		c.mx[c.cur], c.my[c.cur] = robust.Median(c.rx), robust.Median(c.ry)
	}
	c.rx, c.ry = c.rx[:0], c.ry[:0]
	c.cur = f
}

// Shifts returns the offsets QuickCommonMode returns.
func (c *QuickCommon) Shifts() []Shift {
	if c == nil {
		return nil
	}
	c.closeTo(c.frames)
	return quickShifts(c.mx, c.my)
}
