package link

import (
	"bufio"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"gaptrace/calib"
	"gaptrace/track/flowprior"
	"gaptrace/track/tracks"
)

// Frames is a recording's detections, frame by frame, that can be read
// more than once: what LinkStream links instead of a slice of every
// frame's detections.
type Frames interface {
	// Len is the number of frames and Detections the number of
	// detections in them all.
	Len() int
	Detections() int
	// Each calls fn for frames 0 to Len()-1 in order; dets is valid only
	// during the call. It stops at the first error fn returns.
	Each(fn func(frame int, dets []Detection) error) error
}

// Pass receives the output of one linking pass of LinkStream as it is
// made, and keeps the finished tracks so that they can be read again.
type Pass interface {
	// Step is called, frame by frame, for every link made between
	// consecutive frames: a is the track's point in frame b.Frame-1. The
	// points' Track is not known yet (Unlinked), and they are valid only
	// during the call.
	Step(a, b *tracks.Point)
	// EndFrame is called once frame's links are made.
	EndFrame(frame int)
	// Track receives a finished track, its points in frame order, or a
	// single unlinked detection; valid only during the call.
	Track(pts []tracks.Point) error
	// Each reads the tracks received so far (tracks.Source).
	tracks.Source
	// Close discards the pass.
	Close() error
}

// LinkStream is LinkContext for a recording whose detections are not held
// in memory: frames are read once for the flow prior and once or twice
// for the linking passes, and each pass's tracks go to a Pass made by
// newPass as they finish. The prior's windows, the second prior and the
// cheap estimate of the camera's shake (steadyCamera) are measured on the
// way, so memory does not grow with the number of frames; only a camera
// that shakes (the full common-mode fit, flowprior.CommonModeFromTracks)
// reads the first pass's tracks into memory. The result and its Stats are
// those of LinkContext on the same detections. The Pass returned is the
// final one; the caller closes it. opt.MinPoints must be at most 2 (a
// step is reported when it is linked, before the track's length is
// known).
func LinkStream(ctx context.Context, frames Frames, cal *calib.Calibration, opt Options, newPass func() (Pass, error)) (Pass, Stats, error) {
	if _, err := NewLinker(cal, opt); err != nil {
		return nil, Stats{}, err
	}
	if opt.MinPoints > 2 {
		return nil, Stats{}, fmt.Errorf("link: LinkStream needs MinPoints of at most 2, got %d", opt.MinPoints)
	}
	n := frames.Len()
	slowDrift := 0.0 // Stats.SlowDriftPx
	if opt.Prior == nil || opt.MeasureCommonMode {
		built := opt.Prior == nil
		window := priorWindowOf(frames.Detections(), n)
		if built {
			s, err := seriesFromFrames(ctx, frames, cal, opt, window)
			if err := ctx.Err(); err != nil {
				return nil, Stats{}, err
			}
			if err == nil {
				opt.Prior = s
			}
		}
		// What the batch measures on the first pass's tracks is measured
		// on its steps as they are linked.
		var sb *flowprior.SeriesBuilder
		var sbErr error
		if built {
			to := flowprior.TrackOptions{}
			if opt.FrameTimesS != nil {
				to.NominalIntervalS = 1 / opt.FPS
			}
			sb, sbErr = flowprior.NewSeriesBuilder(cal, to, n, window)
		}
		quickOK := opt.MeasureCommonMode && n > 0 && opt.Prior != nil && len(opt.CommonMode) == 0
		var quick *flowprior.QuickCommon
		if quickOK {
			var field flowprior.Field = opt.Prior
			if opt.FrameTimesS != nil {
				field = intervalField{opt.Prior, intervals(opt, n)}
			}
			quick = flowprior.NewQuickCommon(field, n)
		}
		first, firstSt, err := linkPass(ctx, frames, cal, opt, newPass, func(a, b *tracks.Point) {
			if sb != nil {
				sb.Step(a, b)
			}
			quick.Step(a, b)
		})
		if err != nil {
			return nil, Stats{}, err
		}
		same := true
		var prior2 *flowprior.Series
		prior2Err := sbErr
		if sb != nil {
			prior2, prior2Err = sb.Series()
		}
		var cm []flowprior.Shift
		var cmErr error
		steady := false
		if quickOK {
			rx, ry := rmsShift(jitterOnly(quick.Shifts(), JitterWindowFrames))
			steady = math.Max(rx, ry) < QuickJitterFraction*JitterMinRMSPx
		}
		if opt.MeasureCommonMode && n > 0 && !steady {
			cm, cmErr = commonModeOf(first, cal, opt, n)
		}
		if built && prior2Err == nil {
			same = priorsAgree(opt.Prior, prior2, PriorReusePx)
			opt.Prior = prior2
		}
		if cmErr != nil {
			first.Close()
			return nil, Stats{}, cmErr
		}
		if cm != nil {
			var changed bool
			slowDrift, changed = addJitter(&opt, cm)
			same = same && !changed
		}
		if same {
			firstSt.CommonMode, firstSt.SlowDriftPx = opt.CommonMode, slowDrift
			return first, firstSt, nil
		}
		first.Close()
	}
	if err := ctx.Err(); err != nil {
		return nil, Stats{}, err
	}
	p, st, err := linkPass(ctx, frames, cal, opt, newPass, nil)
	if err != nil {
		return nil, Stats{}, err
	}
	st.CommonMode = opt.CommonMode
	st.SlowDriftPx = slowDrift
	return p, st, nil
}

// Chunks of the common-mode fit of LinkStream: the fit
// (flowprior.CommonModeFromTracks) holds every point it fits, so a long
// recording is fitted in chunks of commonChunkFrames frames that overlap
// by commonOverlapFrames, each shifted to agree with the one before over
// the overlap, and joined in the overlap's middle. A recording of up to
// one chunk and its overlap is fitted whole, as LinkContext does.
const (
	// commonChunkFrames is twenty pieces of track (segmentFrames, 50),
	// enough for the pieces' lines and the offsets to settle as in a
	// whole fit; a multiple of 50, so that the pieces fall on the same
	// frames as in a whole fit.
	commonChunkFrames = 1000
	// commonOverlapFrames is two pieces: the mean difference over 100
	// frames of offsets each about 0.01 px uncertain aligns the chunks
	// to 0.001 px.
	commonOverlapFrames = 100
)

// commonModeOf measures the common-mode motion on the tracks of pass
// first as LinkContext does, chunk by chunk (commonChunkFrames), reading
// the pass once per chunk.
func commonModeOf(first Pass, cal *calib.Calibration, opt Options, n int) ([]flowprior.Shift, error) {
	var clock []float64
	if opt.FrameTimesS != nil {
		clock = clocks(opt, n)
	}
	if n <= commonChunkFrames+commonOverlapFrames {
		pts, err := tracks.Collect(first)
		if err != nil {
			return nil, err
		}
		return commonModeRange(pts, cal, opt, clock, 0, n)
	}
	out := make([]flowprior.Shift, 0, n)
	for f0 := 0; f0 < n; f0 += commonChunkFrames {
		lo := max(0, f0-commonOverlapFrames)
		hi := min(n, f0+commonChunkFrames)
		if n-hi < commonOverlapFrames {
			hi = n // a short remainder joins this chunk
		}
		var pts []tracks.Point
		err := first.Each(func(tr []tracks.Point) error {
			for _, p := range tr {
				if p.Frame >= lo && p.Frame < hi {
					p.Frame -= lo
					pts = append(pts, p)
				}
			}
			return nil
		})
		if err != nil {
			return nil, err
		}
		cm, err := commonModeRange(pts, cal, opt, clock, lo, hi)
		if err != nil {
			return nil, err
		}
		if f0 == 0 {
			out = append(out, cm...)
		} else {
			// Shift the chunk onto the one before over the overlap, and
			// take the later chunk from the overlap's middle on.
			ov := f0 - lo
			var dx, dy float64
			for k := range ov {
				dx += out[lo+k].DXPx - cm[k].DXPx
				dy += out[lo+k].DYPx - cm[k].DYPx
			}
			dx, dy = dx/float64(ov), dy/float64(ov)
			mid := ov / 2
			out = out[:lo+mid]
			for _, sh := range cm[mid:] {
				out = append(out, flowprior.Shift{DXPx: sh.DXPx + dx, DYPx: sh.DYPx + dy})
			}
		}
		if hi == n {
			break
		}
	}
	return out, nil
}

// commonModeRange fits the common-mode motion of frames lo to hi-1, the
// points pts with their frames counted from lo.
func commonModeRange(pts []tracks.Point, cal *calib.Calibration, opt Options, clock []float64, lo, hi int) ([]flowprior.Shift, error) {
	n := hi - lo
	if clock != nil {
		clock = clock[lo:hi]
	}
	switch {
	case len(opt.FlowChangesS) > 0:
		// The cuts in the clock's units: frames at the nominal rate,
		// counted from lo without a clock.
		cuts := make([]float64, len(opt.FlowChangesS))
		for i, t := range opt.FlowChangesS {
			cuts[i] = t * opt.FPS
			if clock == nil {
				cuts[i] -= float64(lo)
			}
		}
		return flowprior.CommonModeFromTracksCut(pts, cal, n, clock, cuts)
	case clock != nil:
		return flowprior.CommonModeFromTracksAt(pts, cal, clock)
	}
	return flowprior.CommonModeFromTracks(pts, cal, n)
}

// linkPass runs one Linker over frames into a new Pass, calling step (when
// not nil) for every link as Pass.Step is. The Pass (and step) receive the
// pass's output on a goroutine of their own (passWriter), in the order it
// is made, while the next frames are linked.
func linkPass(ctx context.Context, frames Frames, cal *calib.Calibration, opt Options, newPass func() (Pass, error), step func(a, b *tracks.Point)) (Pass, Stats, error) {
	l, err := NewLinker(cal, opt)
	if err != nil {
		return nil, Stats{}, err
	}
	if l.spill, err = newSpillFile(); err != nil {
		return nil, Stats{}, err
	}
	defer l.spill.close()
	p, err := newPass()
	if err != nil {
		return nil, Stats{}, err
	}
	w := newPassWriter(p, step)
	err = frames.Each(func(f int, ds []Detection) error {
		if f%cancelCheckFrames == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		if err := l.Add(f, ds); err != nil {
			return err
		}
		b := w.batch()
		l.steps(func(a, c *tracks.Point) { b.steps = append(b.steps, *a, *c) })
		b.frame = f
		l.spillLong()
		return w.send(l, b)
	})
	if err == nil {
		// As Close, one track at a time: the tracks still open at the end
		// may be as long as the recording.
		for i, t := range l.active {
			l.finish(t)
			l.active[i] = nil // its points go to the writer: free them here
			if err = w.send(l, w.batch()); err != nil {
				break
			}
		}
		l.active = nil
	}
	if werr := w.close(); err == nil || errors.Is(err, errPassFailed) {
		err = werr
	}
	if err == nil {
		return p, l.stats, nil
	}
	p.Close()
	return nil, Stats{}, err
}

// passWriter hands a linking pass's output to its Pass on a goroutine of
// its own: per frame, the links made (Pass.Step, and the pass's step
// callback), the end of the frame (Pass.EndFrame) and the tracks that
// finished (Pass.Track), in the order the Linker made them. The batches
// are recycled (passBatches of them), so memory stays bounded and the
// Linker waits when the Pass falls behind.
type passWriter struct {
	p      Pass
	step   func(a, b *tracks.Point)
	work   chan *passBatch
	free   chan *passBatch
	done   chan struct{}
	failed atomic.Bool
	err    error // the first error of Pass.Track, set before done closes
}

// passBatch is one frame's output of a linking pass: its links, as pairs
// of points (the point before, the point in the frame), and the points of
// the tracks that finished, grouped by track. frame is -1 for tracks that
// finish after the last frame.
type passBatch struct {
	frame int
	steps []tracks.Point
	pts   []tracks.Point
}

// passBatches is how many batches a passWriter has: the Linker may run
// that many frames ahead of the Pass.
const passBatches = 4

func newPassWriter(p Pass, step func(a, b *tracks.Point)) *passWriter {
	w := &passWriter{p: p, step: step, work: make(chan *passBatch, passBatches),
		free: make(chan *passBatch, passBatches), done: make(chan struct{})}
	for range passBatches {
		w.free <- &passBatch{}
	}
	go w.run()
	return w
}

// batch returns an empty batch for the end of the pass (frame -1).
func (w *passWriter) batch() *passBatch {
	b := <-w.free
	b.frame, b.steps = -1, b.steps[:0]
	return b
}

// send gives b the tracks the Linker finished so far (its done points,
// whose room b's old points take over) and queues b; it returns the error
// of the Linker's spill file or of an earlier Pass.Track.
func (w *passWriter) send(l *Linker, b *passBatch) error {
	if l.spill.err != nil {
		w.free <- b
		return l.spill.err
	}
	b.pts, l.done = l.done, b.pts[:0]
	if w.failed.Load() {
		w.free <- b
		return errPassFailed
	}
	w.work <- b
	return nil
}

// errPassFailed stops the Linker when Pass.Track failed; close returns
// that error.
var errPassFailed = errors.New("link: the pass failed")

func (w *passWriter) run() {
	defer close(w.done)
	for b := range w.work {
		if w.err == nil {
			for i := 0; i+1 < len(b.steps); i += 2 {
				a, c := &b.steps[i], &b.steps[i+1]
				if w.step != nil {
					w.step(a, c)
				}
				w.p.Step(a, c)
			}
			if b.frame >= 0 {
				w.p.EndFrame(b.frame)
			}
			if w.err = emitTracks(w.p, b.pts); w.err != nil {
				w.failed.Store(true)
			}
		}
		w.free <- b
	}
}

// close waits for the Pass to have received everything sent and returns
// the first error of Pass.Track.
func (w *passWriter) close() error {
	close(w.work)
	<-w.done
	return w.err
}

// emitTracks hands the finished points pts, grouped by track, to p one
// track (or one unlinked point) at a time.
func emitTracks(p Pass, pts []tracks.Point) error {
	for i := 0; i < len(pts); {
		j := i + 1
		if pts[i].Track != tracks.Unlinked {
			for j < len(pts) && pts[j].Track == pts[i].Track {
				j++
			}
		}
		if err := p.Track(pts[i:j:j]); err != nil {
			return err
		}
		i = j
	}
	return nil
}

// priorWindowOf is priorWindow for a recording of frames frames holding
// dets detections.
func priorWindowOf(dets, frames int) int {
	if dets == 0 || frames == 0 {
		return PriorWindowFrames
	}
	perFrame := float64(dets) / float64(frames)
	w := int(math.Ceil(priorStepsPerBin * flowprior.DefaultBins / perFrame))
	return min(max(w, minPriorWindowFrames), PriorWindowFrames)
}

// seriesFromFrames is flowprior.SeriesFromDetections on frames, read once:
// each window (and the first frame of the next) is measured, on all
// cores, as soon as it has been read.
func seriesFromFrames(ctx context.Context, frames Frames, cal *calib.Calibration, opt Options, windowFrames int) (*flowprior.Series, error) {
	n := frames.Len()
	hist := flowprior.HistOptions{MaxStepPx: opt.MaxStepPx, Intervals: intervals(opt, n)}
	type job struct {
		i, f0 int
		pts   [][]flowprior.Point
	}
	var profiles []*flowprior.Profile
	var errs []error
	var mu sync.Mutex
	jobs := make(chan job)
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Go(func() {
			for j := range jobs {
				f1 := j.f0 + len(j.pts)
				o := hist
				o.Intervals = hist.Intervals[min(j.f0, len(hist.Intervals)):min(f1, len(hist.Intervals))]
				p, err := flowprior.FromDetections(j.pts, cal, o)
				mu.Lock()
				profiles[j.i], errs[j.i] = p, err
				mu.Unlock()
			}
		})
	}
	var s flowprior.Series
	var win [][]flowprior.Point
	send := func() {
		s.Start = append(s.Start, len(s.Start)*windowFrames)
		mu.Lock()
		profiles, errs = append(profiles, nil), append(errs, nil)
		mu.Unlock()
		jobs <- job{len(s.Start) - 1, s.Start[len(s.Start)-1], win}
	}
	err := frames.Each(func(f int, ds []Detection) error {
		if f%cancelCheckFrames == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		var sh flowprior.Shift
		if f < len(opt.CommonMode) {
			sh = opt.CommonMode[f]
		}
		pts := make([]flowprior.Point, len(ds))
		for i, d := range ds {
			pts[i] = flowprior.Point{XPx: d.XPx - sh.DXPx, YPx: d.YPx - sh.DYPx}
		}
		win = append(win, pts)
		if len(win) == windowFrames+1 {
			send()
			win = [][]flowprior.Point{pts} // the next window starts with this frame
		}
		return nil
	})
	if err == nil && len(win) >= 2 {
		send()
	}
	close(jobs)
	wg.Wait()
	if err != nil {
		return nil, err
	}
	s.Profiles = profiles
	known := 0
	var firstErr error
	for i, p := range profiles {
		if errs[i] != nil && firstErr == nil {
			firstErr = errs[i]
		}
		if p != nil {
			known++
		}
	}
	if known == 0 {
		if firstErr == nil {
			firstErr = fmt.Errorf("flowprior: %d frames are too few for a window", n)
		}
		return nil, firstErr
	}
	return &s, nil
}

// FrameSpool is Frames kept in a compact binary file instead of memory:
// each frame's detections are appended as they are found.
type FrameSpool struct {
	f      *os.File
	name   string // removed by Close when the file could not be unlinked at once
	w      *bufio.Writer
	size   int64
	frames int
	dets   int
	enc    []byte
}

// frameSpoolBuffer is the spool's write and read buffer: a thousand
// detections per system call.
const frameSpoolBuffer = 1 << 16

// detBytes is a detection's record: four float64, little-endian.
const detBytes = 4 * 8

// maxFrameDetections bounds a frame read back from the spool: more than
// ten million detections in one frame is a damaged spool.
const maxFrameDetections = 10_000_000

// NewFrameSpool makes an empty spool whose file lives in dir (os.TempDir
// when dir is ""), named and removed as tracks.NewSpool's.
func NewFrameSpool(dir string) (*FrameSpool, error) {
	f, name, err := tracks.TempFile(dir)
	if err != nil {
		return nil, fmt.Errorf("link: making a detection spool: %w", err)
	}
	return &FrameSpool{f: f, name: name, w: bufio.NewWriterSize(f, frameSpoolBuffer)}, nil
}

// Add appends frame's detections; frames come in increasing order, and
// frames skipped hold no detections.
func (s *FrameSpool) Add(frame int, dets []Detection) error {
	if s.f == nil {
		return errors.New("link: detection spool is closed")
	}
	if frame < s.frames {
		return fmt.Errorf("link: frame %d spooled after frame %d", frame, s.frames-1)
	}
	for s.frames < frame {
		if err := s.put(nil); err != nil {
			return err
		}
	}
	return s.put(dets)
}

// put appends one frame.
func (s *FrameSpool) put(dets []Detection) error {
	b := binary.LittleEndian.AppendUint32(s.enc[:0], uint32(len(dets)))
	for _, d := range dets {
		for _, v := range [...]float64{d.XPx, d.YPx, d.Brightness, d.SizePx} {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
		}
	}
	s.enc = b
	n, err := s.w.Write(b)
	s.size += int64(n)
	if err != nil {
		return fmt.Errorf("link: writing the detection spool: %w", err)
	}
	s.frames++
	s.dets += len(dets)
	return nil
}

// Len implements Frames.
func (s *FrameSpool) Len() int { return s.frames }

// Detections implements Frames.
func (s *FrameSpool) Detections() int { return s.dets }

// Each implements Frames. Add must not be called while it runs.
func (s *FrameSpool) Each(fn func(frame int, dets []Detection) error) error {
	if s.f == nil {
		return errors.New("link: detection spool is closed")
	}
	if err := s.w.Flush(); err != nil {
		return fmt.Errorf("link: writing the detection spool: %w", err)
	}
	r := bufio.NewReaderSize(io.NewSectionReader(s.f, 0, s.size), frameSpoolBuffer)
	var head [4]byte
	var rec []byte
	var dets []Detection
	for f := range s.frames {
		if _, err := io.ReadFull(r, head[:]); err != nil {
			return fmt.Errorf("link: reading the detection spool at frame %d: %w", f, err)
		}
		n := int(binary.LittleEndian.Uint32(head[:]))
		if n > maxFrameDetections {
			return fmt.Errorf("link: damaged detection spool: %d detections in frame %d", n, f)
		}
		rec = slices.Grow(rec[:0], n*detBytes)[:n*detBytes]
		if _, err := io.ReadFull(r, rec); err != nil {
			return fmt.Errorf("link: reading the detection spool at frame %d: %w", f, err)
		}
		dets = slices.Grow(dets[:0], n)[:n]
		for i := range dets {
			b := rec[i*detBytes:]
			v := func(k int) float64 { return math.Float64frombits(binary.LittleEndian.Uint64(b[8*k:])) }
			dets[i] = Detection{XPx: v(0), YPx: v(1), Brightness: v(2), SizePx: v(3)}
		}
		if err := fn(f, dets); err != nil {
			return err
		}
	}
	return nil
}

// Close removes the spool's file; it may be called more than once.
func (s *FrameSpool) Close() error {
	if s.f == nil {
		return nil
	}
	err := tracks.CloseTemp(s.f, s.name)
	s.f = nil
	return err
}

// Spilling of long tracks (LinkStream): a tracer that stays in view for
// the whole recording (a sample at rest) keeps its track open, so the
// older points of every track longer than spillAtPoints go to a file and
// come back when the track finishes.
const (
	// spillAtPoints is the length at which a track's older points are
	// spilled: 10 kB of points per tracer in view.
	spillAtPoints = 128
	// spillKeepPoints stay in memory: the last two, whose step
	// Linker.steps reports (the prediction keeps its own ring).
	spillKeepPoints = 2
	// spillPointBytes is a spilled point's record (tracks.AppendRecord).
	spillPointBytes = tracks.RecordBytes
)

// piece is a run of a track's points in the spill file.
type piece struct {
	off int64
	n   int
}

// spillFile holds the spilled points of one linking pass.
type spillFile struct {
	f    *os.File
	name string // removed by close when it could not be unlinked at once
	size int64
	buf  []byte
	err  error // the first error, reported by linkPass
}

// newSpillFile makes an empty spill file in os.TempDir, named and removed
// as tracks.NewSpool's.
func newSpillFile() (*spillFile, error) {
	f, name, err := tracks.TempFile("")
	if err != nil {
		return nil, fmt.Errorf("link: making a spill file: %w", err)
	}
	return &spillFile{f: f, name: name}, nil
}

// close removes the file.
func (s *spillFile) close() {
	tracks.CloseTemp(s.f, s.name)
}

// spillLong moves the older points of the active tracks longer than
// spillAtPoints to the spill file.
func (l *Linker) spillLong() {
	s := l.spill
	for _, t := range l.active {
		n := len(t.pts) - spillKeepPoints
		if len(t.pts) < spillAtPoints || s.err != nil {
			continue
		}
		b := s.buf[:0]
		for _, p := range t.pts[:n] {
			b = tracks.AppendRecord(b, p)
		}
		s.buf = b
		if _, err := s.f.WriteAt(b, s.size); err != nil {
			s.err = fmt.Errorf("link: writing the spill file: %w", err)
			return
		}
		t.pieces = append(t.pieces, piece{s.size, n})
		s.size += int64(len(b))
		t.spilled += n
		t.pts = t.pts[:copy(t.pts, t.pts[n:])]
	}
}

// unspill appends the spilled points of t, as track id, to the
// finished points.
func (l *Linker) unspill(t *track, id int) {
	s := l.spill
	l.done = slices.Grow(l.done, t.size())
	for _, pc := range t.pieces {
		b := slices.Grow(s.buf[:0], pc.n*spillPointBytes)[:pc.n*spillPointBytes]
		s.buf = b
		if _, err := s.f.ReadAt(b, pc.off); err != nil && s.err == nil {
			s.err = fmt.Errorf("link: reading the spill file: %w", err)
		}
		for i := range pc.n {
			l.done = append(l.done, tracks.DecodeRecord(b[i*spillPointBytes:], id))
		}
	}
	t.spilled, t.pieces = 0, nil
}
