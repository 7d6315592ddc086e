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
			full := cm
			cm = jitterOnly(cm, JitterWindowFrames)
			var ss float64
			for f := range full {
				d := full[f].DXPx - cm[f].DXPx
				ss += d * d
			}
			slowDrift = math.Sqrt(ss / float64(len(full)))
			if rx, ry := rmsShift(cm); math.Max(rx, ry) > JitterMinRMSPx {
				for f := range cm {
					if f < len(opt.CommonMode) {
						cm[f].DXPx += opt.CommonMode[f].DXPx
						cm[f].DYPx += opt.CommonMode[f].DYPx
					}
				}
				opt.CommonMode = cm
				same = false
			}
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

// commonModeOf measures the common-mode motion on the tracks of pass
// first as LinkContext does; it is the one part of LinkStream that holds a
// whole pass in memory.
func commonModeOf(first Pass, cal *calib.Calibration, opt Options, n int) ([]flowprior.Shift, error) {
	pts, err := tracks.Collect(first)
	if err != nil {
		return nil, err
	}
	switch {
	case len(opt.FlowChangesS) > 0:
		cuts := make([]float64, len(opt.FlowChangesS))
		for i, t := range opt.FlowChangesS {
			cuts[i] = t * opt.FPS
		}
		var clock []float64
		if opt.FrameTimesS != nil {
			clock = clocks(opt, n)
		}
		return flowprior.CommonModeFromTracksCut(pts, cal, n, clock, cuts)
	case opt.FrameTimesS != nil:
		return flowprior.CommonModeFromTracksAt(pts, cal, clocks(opt, n))
	}
	return flowprior.CommonModeFromTracks(pts, cal, n)
}

// linkPass runs one Linker over frames into a new Pass, calling step (when
// not nil) for every link as Pass.Step is.
func linkPass(ctx context.Context, frames Frames, cal *calib.Calibration, opt Options, newPass func() (Pass, error), step func(a, b *tracks.Point)) (Pass, Stats, error) {
	l, err := NewLinker(cal, opt)
	if err != nil {
		return nil, Stats{}, err
	}
	p, err := newPass()
	if err != nil {
		return nil, Stats{}, err
	}
	onStep := func(a, b *tracks.Point) {
		if step != nil {
			step(a, b)
		}
		p.Step(a, b)
	}
	err = frames.Each(func(f int, ds []Detection) error {
		if f%cancelCheckFrames == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		if err := l.Add(f, ds); err != nil {
			return err
		}
		l.steps(onStep)
		p.EndFrame(f)
		done := l.Flush()
		err := emitTracks(p, done)
		l.done = done[:0] // emitted: the room is reused
		return err
	})
	if err == nil {
		done, st := l.Close()
		if err = emitTracks(p, done); err == nil {
			return p, st, nil
		}
	}
	p.Close()
	return nil, Stats{}, err
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
	f, err := os.CreateTemp(dir, tracks.SpoolPrefix+"*")
	if err != nil {
		return nil, fmt.Errorf("link: making a detection spool: %w", err)
	}
	s := &FrameSpool{f: f, w: bufio.NewWriterSize(f, frameSpoolBuffer)}
	if err := os.Remove(f.Name()); err != nil {
		s.name = f.Name()
	}
	return s, nil
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
	err := s.f.Close()
	if s.name != "" {
		if rerr := os.Remove(s.name); err == nil {
			err = rerr
		}
	}
	s.f = nil
	return err
}
