package frames

import (
	"errors"
	"fmt"
	"io"
	"runtime"
	"sync"

	"gocv.io/x/gocv"
)

// Head is a Source that holds the first frames of another Source decoded in
// memory, so that a recording is decoded once although its first frames are
// used twice: for the background and the walls (Median), and again, with
// all the others, for detection.
//
// ReadHead decodes the head (a Packets source on all cores). Next and
// NextPacket then deliver the held frames, the frames decoded ahead by
// ReadAhead, and the rest of the underlying source, in order. A Head is a
// Packets whatever its source: a frame it holds decoded, or whose source
// has no packets, is handed out by NextPacket in dst with a nil packet.
//
// Memory is that of the held frames plus those read ahead, whatever the
// length of the recording. A Head owns its source: Close closes both.
type Head struct {
	src  Source
	pk   Packets // src as Packets, nil if it has none
	info Info

	held []heldFrame // frames not yet handed out, in order
	n    int         // frames read into the head by ReadHead

	// Reading ahead: one goroutine owns src from ReadAhead until stop is
	// closed, and sends what it decodes on ahead, which it closes at the
	// end; aheadErr (io.EOF at the end of the range) is set before that.
	ahead    chan heldFrame
	stop     chan struct{}
	aheadErr error
	started  bool // a frame has been handed out: reading ahead is over
	rest     bool // ahead is drained: read src directly
	// aheadDone, once the held frames are handed out, ends the stream
	// without reading src (io.EOF when the range ended inside the head).
	aheadDone error
	done      error
}

// heldFrame is one decoded frame and its index in the input.
type heldFrame struct {
	index int
	m     gocv.Mat
}

// ReadHead reads at most n frames of src into memory and returns a Head over
// src. A source with fewer frames gives a shorter head; an empty range is an
// error. On error src is left open for the caller to close.
func ReadHead(src Source, n int) (*Head, error) {
	if n < 1 {
		return nil, fmt.Errorf("frames: head of %d frames: need at least 1", n)
	}
	h := &Head{src: src, info: src.Info()}
	h.pk, _ = src.(Packets)
	var err error
	if h.held, err = readHeld(src, n); err != nil {
		return nil, err
	}
	if len(h.held) == 0 {
		return nil, fmt.Errorf("frames: %s: %w in the range", h.info.Path, errEmpty)
	}
	h.n = len(h.held)
	if h.n < n {
		// The range ended inside the head: nothing is left to read.
		h.rest = true
		h.aheadDone = io.EOF
	}
	return h, nil
}

// readHeld reads at most n frames of src into new Mats, decoding a Packets
// source on all cores.
func readHeld(src Source, n int) ([]heldFrame, error) {
	if pk, ok := src.(Packets); ok {
		return decodePackets(pk, n)
	}
	return readFrames(src, n)
}

// readFrames reads at most n frames of src in order, each into a new Mat.
func readFrames(src Source, n int) ([]heldFrame, error) {
	var out []heldFrame
	for len(out) < n {
		m := gocv.NewMat()
		i, err := src.Next(&m)
		if err != nil {
			m.Close()
			if errors.Is(err, io.EOF) {
				break
			}
			closeHeld(out)
			return nil, err
		}
		out = append(out, heldFrame{i, m})
	}
	return out, nil
}

// decodePackets reads at most n packets of src and decodes them on
// GOMAXPROCS goroutines, each frame into a new Mat. The first error in
// reading order is returned.
func decodePackets(src Packets, n int) ([]heldFrame, error) {
	type job struct {
		k, index int
		packet   []byte
	}
	var (
		out  []heldFrame
		errs []error
		mu   sync.Mutex
	)
	jobs := make(chan job)
	put := func(k int, f heldFrame, err error) {
		mu.Lock()
		defer mu.Unlock()
		for len(out) <= k {
			out, errs = append(out, heldFrame{m: gocv.NewMat()}), append(errs, nil)
		}
		out[k].m.Close()
		out[k], errs[k] = f, err
	}
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range jobs {
				m := gocv.NewMat()
				err := src.Decode(j.index, j.packet, &m)
				put(j.k, heldFrame{j.index, m}, err)
			}
		}()
	}
	var readErr error
	k := 0
	for k < n {
		m := gocv.NewMat()
		i, pkt, err := src.NextPacket(nil, &m)
		if err == nil && pkt == nil {
			put(k, heldFrame{i, m}, nil) // handed out decoded
			k++
			continue
		}
		m.Close()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			readErr = err
			break
		}
		jobs <- job{k, i, pkt}
		k++
	}
	close(jobs)
	wg.Wait()
	out = out[:k]
	for _, err := range errs[:k] {
		if err != nil {
			closeHeld(out)
			return nil, err
		}
	}
	if readErr != nil {
		closeHeld(out)
		return nil, readErr
	}
	return out, nil
}

func closeHeld(fs []heldFrame) {
	for i := range fs {
		fs[i].m.Close()
	}
}

// Len is the number of frames ReadHead read into the head.
func (h *Head) Len() int { return h.n }

// Median returns the per-pixel temporal median of the frames of the head,
// as Median does, computed on all cores; the caller closes the Mat, also on
// error. It must be called before the first Next or NextPacket.
func (h *Head) Median() (gocv.Mat, error) {
	if h.started || len(h.held) != h.n {
		return gocv.NewMat(), fmt.Errorf("frames: %s: median of the head after its frames were handed out", h.info.Path)
	}
	if h.info.BitDepth == 16 {
		return medianOfHeld(h.held, h.info, (*gocv.Mat).DataPtrUint16)
	}
	return medianOfHeld(h.held, h.info, (*gocv.Mat).DataPtrUint8)
}

func medianOfHeld[T uint8 | uint16](held []heldFrame, info Info, data func(*gocv.Mat) ([]T, error)) (gocv.Mat, error) {
	nPx := info.WidthPx * info.HeightPx
	stack := make([][]T, len(held))
	for k := range held {
		px, err := data(&held[k].m)
		if err != nil || len(px) != nPx {
			return gocv.NewMat(), fmt.Errorf("frames: %s: frame %d: not a %dx%d %d-bit grey image", info.Path, held[k].index, info.WidthPx, info.HeightPx, info.BitDepth)
		}
		stack[k] = px
	}
	return medianOfStack(stack, info), nil
}

// ReadAhead starts decoding at most maxFrames frames past the head on one
// background goroutine, which stops at the first Next or NextPacket (the
// frames decoded by then are handed out first). Call it once, after
// ReadHead, when the caller is about to spend a while on one core (finding
// the walls on the median) before reading the frames.
func (h *Head) ReadAhead(maxFrames int) {
	if h.ahead != nil || h.started || h.aheadDone != nil || maxFrames < 1 {
		return
	}
	h.ahead = make(chan heldFrame, maxFrames)
	h.stop = make(chan struct{})
	go func() {
		defer close(h.ahead)
		for range maxFrames {
			select {
			case <-h.stop:
				return
			default:
			}
			m := gocv.NewMat()
			var err error
			var i int
			if h.pk != nil {
				var pkt []byte
				if i, pkt, err = h.pk.NextPacket(nil, &m); err == nil && pkt != nil {
					err = h.pk.Decode(i, pkt, &m)
				}
			} else {
				i, err = h.src.Next(&m)
			}
			if err != nil {
				m.Close()
				h.aheadErr = err
				return
			}
			h.ahead <- heldFrame{i, m}
		}
	}()
}

// take hands out the next held or read-ahead frame into dst (swapping Mats,
// no copy). ok is false when none is left and src is to be read; err is the
// error that ended reading ahead, if any.
func (h *Head) take(dst *gocv.Mat) (index int, ok bool, err error) {
	if h.done != nil {
		return 0, false, h.done
	}
	if !h.started {
		h.started = true
		if h.stop != nil {
			close(h.stop)
		}
	}
	var f heldFrame
	switch {
	case len(h.held) > 0:
		f, h.held = h.held[0], h.held[1:]
	case h.ahead != nil && !h.rest:
		var more bool
		if f, more = <-h.ahead; !more {
			h.rest = true
			if h.aheadErr != nil {
				h.done = h.aheadErr
				return 0, false, h.done
			}
			return 0, false, nil
		}
	case h.aheadDone != nil:
		h.done = h.aheadDone
		return 0, false, h.done
	default:
		return 0, false, nil
	}
	*dst, f.m = f.m, *dst
	f.m.Close()
	return f.index, true, nil
}

// Info describes the input.
func (h *Head) Info() Info { return h.info }

// Short implements Counted with the source's count (0 when the source
// announces none).
func (h *Head) Short() int {
	if c, ok := h.src.(Counted); ok {
		return c.Short()
	}
	return 0
}

// FrameTimesS implements Timed with the source's times (nil when the
// source has none). It must not be called while reading ahead.
func (h *Head) FrameTimesS() []float64 {
	if t, ok := h.src.(Timed); ok {
		return t.FrameTimesS()
	}
	return nil
}

// Next hands out the next frame: held, read ahead, or read from the source.
func (h *Head) Next(dst *gocv.Mat) (int, error) {
	i, ok, err := h.take(dst)
	if ok || err != nil {
		return i, err
	}
	return h.src.Next(dst)
}

// NextPacket hands out the next frame decoded in dst with a nil packet when
// the head holds it or the source has no packets, else the source's packet.
func (h *Head) NextPacket(buf []byte, dst *gocv.Mat) (int, []byte, error) {
	i, ok, err := h.take(dst)
	if ok || err != nil {
		return i, nil, err
	}
	if h.pk == nil {
		i, err := h.src.Next(dst)
		return i, nil, err
	}
	return h.pk.NextPacket(buf, dst)
}

// Decode decodes a packet from NextPacket, as the source does.
func (h *Head) Decode(index int, packet []byte, dst *gocv.Mat) error {
	if h.pk == nil {
		return fmt.Errorf("frames: %s: frame %d: no packets to decode in this input", h.info.Path, index)
	}
	return h.pk.Decode(index, packet, dst)
}

// Close releases the frames held and read ahead, and the source.
func (h *Head) Close() error {
	if h.stop != nil && !h.started {
		h.started = true
		close(h.stop)
	}
	if h.ahead != nil && !h.rest {
		for f := range h.ahead {
			f.m.Close()
		}
		h.rest = true
	}
	closeHeld(h.held)
	h.held = nil
	h.done = fmt.Errorf("frames: %s: read after Close", h.info.Path)
	return h.src.Close()
}
