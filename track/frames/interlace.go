package frames

import (
	"fmt"
	"math"
	"sync"

	"gocv.io/x/gocv"
)

// Field orders of an interlaced camera: which field was exposed first.
const (
	// TopFirst: the even rows (0, 2, ...) first, the odd rows half a frame
	// interval later.
	TopFirst = "top-first"
	// BottomFirst: the odd rows first.
	BottomFirst = "bottom-first"
)

// FieldOrders lists the field orders Fields accepts besides "" (none).
var FieldOrders = []string{TopFirst, BottomFirst}

// Parameters of the comb measurement.
const (
	// combBands is how many horizontal bands a frame is cut into, each
	// with its own shift between the fields: in a shear flow the speed,
	// and with it the comb, changes across the gap.
	combBands = 8
	// combMaxLagPx is the largest shift between the fields searched, px
	// along the rows; a larger one is not found (the warning then names
	// the largest).
	combMaxLagPx = 8
	// combMinShiftPx is the shift between the fields counted as a comb:
	// below half a pixel the two fields of a tracer image still overlap
	// over most of its width (common practice for a visible comb).
	combMinShiftPx = 0.5
	// combMinGain is how much better, as a fraction of the squared
	// difference at no shift, the best shift must match the fields for a
	// band to count: noise alone moves the minimum by a few per mille.
	combMinGain = 0.1
	// combEvery is the stride of the frames measured: the comb of an
	// interlaced camera lasts as long as the motion, so one frame in
	// sixteen finds it at a sixteenth of the cost.
	combEvery = 16
	// combRowStride: every second even row is compared with its odd
	// neighbours; a tracer image spans several rows, so the comb is seen
	// as well at half the cost.
	combRowStride = 2
	// combMinFrames is how many measured frames must be combed for the
	// warning: one could be a glitch of the decoder.
	combMinFrames = 2
)

// Combs is what the comb measurement found over the frames read.
type Combs struct {
	// Measured is the number of frames measured (one in combEvery).
	Measured int
	// Combed is how many of them had a band whose fields are shifted
	// against each other along the rows by at least combMinShiftPx.
	Combed int
	// MaxShiftPx is the largest such shift, px.
	MaxShiftPx float64
	// Order is the field order the frames were split by ("" when they
	// were not).
	Order string
}

// Interlaced reports whether the frames look interlaced: comb artefacts in
// at least combMinFrames measured frames.
func (c Combs) Interlaced() bool { return c.Combed >= combMinFrames }

// Warning returns the summary's warning for combs seen in frames that were
// not split into fields, or "" when there is none to give.
func (c Combs) Warning() string {
	if !c.Interlaced() || c.Order != "" {
		return ""
	}
	return fmt.Sprintf("the video looks interlaced: in %d of %d frames measured, the odd rows are shifted along the rows against the even rows "+
		"(by up to %.1f px), as when the two fields are exposed half a frame interval apart while the tracers move; "+
		"tracer images are then combed and their positions less certain: give camera.fields: %s (or %s) in the experiment file to analyse each field as a frame of its own",
		c.Combed, c.Measured, c.MaxShiftPx, TopFirst, BottomFirst)
}

// FieldSource measures the comb artefacts of the frames it passes on and,
// with a field order, splits every frame into its two fields, each
// delivered as a frame of its own at twice the frame rate: field k of
// frame i is frame 2i+k, its missing rows interpolated from the rows
// above and below (line doubling, so that rows keep their place in the
// image and the calibration holds). The first field takes the frame's
// time, the second half a frame interval later.
type FieldSource struct {
	src   Source
	order string
	info  Info

	mu    sync.Mutex
	combs Combs

	raw     gocv.Mat // the frame being split
	rawI    int      // its index in the input
	pending bool     // raw's second field is yet to be delivered
	pool    sync.Pool
}

// Fields wraps src: order "" passes the frames on as they are (measuring
// their combs), TopFirst or BottomFirst splits each into its fields.
func Fields(src Source, order string) (*FieldSource, error) {
	switch order {
	case "", TopFirst, BottomFirst:
	default:
		return nil, fmt.Errorf("frames: field order %q is not %s or %s", order, TopFirst, BottomFirst)
	}
	f := &FieldSource{src: src, order: order, info: src.Info(), raw: gocv.NewMat()}
	f.combs.Order = order
	if order != "" {
		f.info.FPS *= 2
		if f.info.Frames > 0 {
			f.info.Frames *= 2
		}
	}
	return f, nil
}

// Info describes the input; split into fields, at twice the frame rate
// and with twice the frames.
func (f *FieldSource) Info() Info { return f.info }

// Combs returns what the comb measurement found in the frames read so far.
func (f *FieldSource) Combs() Combs {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.combs
}

// Next reads the next frame, or the next field.
func (f *FieldSource) Next(dst *gocv.Mat) (int, error) {
	if f.order == "" {
		i, err := f.src.Next(dst)
		if err == nil {
			f.measure(i, *dst)
		}
		return i, err
	}
	if f.pending {
		f.pending = false
		return 2*f.rawI + 1, f.field(dst, f.first() == 0)
	}
	i, err := f.src.Next(&f.raw)
	if err != nil {
		return 0, err
	}
	f.measure(i, f.raw)
	f.rawI, f.pending = i, true
	return 2 * i, f.field(dst, f.first() == 1)
}

// first is the parity of the rows of the field exposed first.
func (f *FieldSource) first() int {
	if f.order == BottomFirst {
		return 1
	}
	return 0
}

// field writes into dst the field of raw whose rows have the parity of
// odd, the other rows interpolated.
func (f *FieldSource) field(dst *gocv.Mat, odd bool) error {
	f.raw.CopyTo(dst)
	w, h := f.raw.Cols(), f.raw.Rows()
	keep := 0
	if odd {
		keep = 1
	}
	switch f.raw.Type() {
	case gocv.MatTypeCV8U:
		in, err := f.raw.DataPtrUint8()
		if err != nil {
			return err
		}
		out, err := dst.DataPtrUint8()
		if err != nil {
			return err
		}
		lineDouble(in, out, w, h, keep)
	case gocv.MatTypeCV16U:
		in, err := f.raw.DataPtrUint16()
		if err != nil {
			return err
		}
		out, err := dst.DataPtrUint16()
		if err != nil {
			return err
		}
		lineDouble(in, out, w, h, keep)
	default:
		return fmt.Errorf("frames: %s: fields of pixel type %v", f.info.Path, f.raw.Type())
	}
	return nil
}

// lineDouble fills the rows of out whose parity is not keep's with the
// mean of in's rows above and below (the one row at an edge), rounded.
func lineDouble[T uint8 | uint16](in, out []T, w, h, keep int) {
	for y := 1 - keep; y < h; y += 2 {
		up, down := y-1, y+1
		if up < 0 {
			up = down
		}
		if down >= h {
			down = up
		}
		if up < 0 || down >= h {
			continue // a one-row frame
		}
		a, b, o := in[up*w:(up+1)*w], in[down*w:(down+1)*w], out[y*w:(y+1)*w]
		for x := range o {
			o[x] = T((uint32(a[x]) + uint32(b[x]) + 1) / 2)
		}
	}
}

// Close releases the input.
func (f *FieldSource) Close() error {
	f.raw.Close()
	return f.src.Close()
}

// Short is the input's (Counted), in fields when split.
func (f *FieldSource) Short() int {
	c, ok := f.src.(Counted)
	if !ok {
		return 0
	}
	if f.order != "" {
		return 2 * c.Short()
	}
	return c.Short()
}

// FrameTimesS is the input's (Timed); split, each frame's fields at its
// time and midway to the next frame's (half the interval before it for
// the last).
func (f *FieldSource) FrameTimesS() []float64 {
	t, ok := f.src.(Timed)
	if !ok {
		return nil
	}
	ts := t.FrameTimesS()
	if f.order == "" || ts == nil {
		return ts
	}
	out := make([]float64, 2*len(ts))
	for i, x := range ts {
		var half float64
		switch {
		case i+1 < len(ts):
			half = (ts[i+1] - x) / 2
		case i > 0:
			half = (x - ts[i-1]) / 2
		case f.info.FPS > 0:
			half = 1 / f.info.FPS
		}
		out[2*i], out[2*i+1] = x, x+half
	}
	return out
}

// packetFields is a FieldSource over a Packets source that is not split:
// it passes the packets on and measures the frames its workers decode.
type packetFields struct {
	*FieldSource
	p Packets
}

// NextPacket is the input's.
func (f packetFields) NextPacket(buf []byte, dst *gocv.Mat) (int, []byte, error) {
	i, b, err := f.p.NextPacket(buf, dst)
	if err == nil && b == nil {
		f.measure(i, *dst)
	}
	return i, b, err
}

// Decode is the input's; the frame is measured.
func (f packetFields) Decode(i int, packet []byte, dst *gocv.Mat) error {
	err := f.p.Decode(i, packet, dst)
	if err == nil {
		f.measure(i, *dst)
	}
	return err
}

// Watch returns Fields(src, order) as a Source: one that keeps src's
// packets (Packets) when the frames are not split, so that they are still
// decoded in the detector's workers. The FieldSource gives the combs.
func Watch(src Source, order string) (Source, *FieldSource, error) {
	f, err := Fields(src, order)
	if err != nil {
		return nil, nil, err
	}
	if p, ok := src.(Packets); ok && order == "" {
		return packetFields{f, p}, f, nil
	}
	return f, f, nil
}

// combScratch is one measurement's buffers.
type combScratch struct {
	even, odd []float32
}

// measure measures frame i's comb when i is one of those measured. It may
// be called from several goroutines at once.
func (f *FieldSource) measure(i int, m gocv.Mat) {
	if i%combEvery != 0 || m.Empty() {
		return
	}
	w, h := m.Cols(), m.Rows()
	sc, _ := f.pool.Get().(*combScratch)
	if sc == nil {
		sc = &combScratch{}
	}
	defer f.pool.Put(sc)
	n := h / 2
	if n < 3 || w <= 2*combMaxLagPx {
		return
	}
	sc.even, sc.odd = grow(sc.even, n*w), grow(sc.odd, n*w)
	switch m.Type() {
	case gocv.MatTypeCV8U:
		b, err := m.DataPtrUint8()
		if err != nil {
			return
		}
		splitRows(b, sc.even, sc.odd, w, n)
	case gocv.MatTypeCV16U:
		b, err := m.DataPtrUint16()
		if err != nil {
			return
		}
		splitRows(b, sc.even, sc.odd, w, n)
	default:
		return
	}
	shift := combShiftPx(sc.even, sc.odd, w, n)
	f.mu.Lock()
	defer f.mu.Unlock()
	f.combs.Measured++
	if shift >= combMinShiftPx {
		f.combs.Combed++
		f.combs.MaxShiftPx = max(f.combs.MaxShiftPx, shift)
	}
}

func grow(b []float32, n int) []float32 {
	if cap(b) < n {
		return make([]float32, n)
	}
	return b[:n]
}

// splitRows copies the first 2n rows of a frame w px wide into its even
// and odd rows.
func splitRows[T uint8 | uint16](b []T, even, odd []float32, w, n int) {
	for k := range n {
		e, o := b[2*k*w:(2*k+1)*w], b[(2*k+1)*w:(2*k+2)*w]
		ek, ok := even[k*w:(k+1)*w], odd[k*w:(k+1)*w]
		for x := range ek {
			ek[x], ok[x] = float32(e[x]), float32(o[x])
		}
	}
}

// CombShiftPx returns the largest shift along the rows, px, between the
// two fields of a single-channel 8- or 16-bit frame, over the horizontal
// bands whose fields match clearly better shifted than not (0 when none
// does): a progressive frame gives 0, an interlaced frame of moving
// tracers their travel in half a frame interval.
func CombShiftPx(m gocv.Mat) (float64, error) {
	f := &FieldSource{}
	f.measure(0, m)
	if f.combs.Measured == 0 {
		return 0, fmt.Errorf("frames: no comb measured on a %dx%d frame of type %v", m.Cols(), m.Rows(), m.Type())
	}
	return f.combs.MaxShiftPx, nil
}

// combShiftPx compares, in each band, the even rows with the odd rows
// interpolated to their place (the mean of the odd rows above and below),
// shifted along the rows by -combMaxLagPx to combMaxLagPx px: the sum of
// squared differences is least at the shift by which the fields differ,
// 0 for a progressive frame. The shift is refined to a fraction of a
// pixel by a parabola through the least sum and its neighbours.
func combShiftPx(even, odd []float32, w, n int) float64 {
	const lags = 2*combMaxLagPx + 1
	var ssd [lags]float64
	best := 0.0
	per := max(1, (n-1)/combBands)
	mid := make([]float32, w)
	for b0 := 1; b0 < n; b0 += per {
		b1 := min(n, b0+per)
		ssd = [lags]float64{}
		for k := b0; k < b1; k += combRowStride {
			e := even[k*w : (k+1)*w]
			above, below := odd[(k-1)*w:k*w], odd[k*w:(k+1)*w]
			for x := range mid {
				mid[x] = (above[x] + below[x]) / 2
			}
			e = e[combMaxLagPx : w-combMaxLagPx]
			for li := range lags {
				m := mid[li : li+len(e)]
				var s float32
				for x, v := range e {
					d := v - m[x]
					s += d * d
				}
				ssd[li] += float64(s)
			}
		}
		li := 0
		for j := range lags {
			if ssd[j] < ssd[li] {
				li = j
			}
		}
		zero := ssd[combMaxLagPx]
		if li == combMaxLagPx || !(zero > 0) || (zero-ssd[li])/zero < combMinGain {
			continue
		}
		shift := float64(li - combMaxLagPx)
		if li > 0 && li < lags-1 {
			a, c, m := ssd[li-1], ssd[li+1], ssd[li]
			if den := a - 2*m + c; den > 0 {
				shift += (a - c) / (2 * den)
			}
		}
		best = max(best, math.Abs(shift))
	}
	return best
}
