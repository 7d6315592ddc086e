package detect

import (
	"errors"
	"fmt"
	"io"
	"runtime"
	"sync"

	"gaptrace/track/frames"
	"gocv.io/x/gocv"
)

// Run detects the tracers in every frame of src against the background bg
// (an empty Mat for none) and calls emit once per frame, in frame order, with
// the frame's index in the input and its detections. opt.Workers frames are
// processed at once, each worker with its own Detector; frames are read by
// one goroutine into a fixed pool of buffers, so memory does not grow with
// the number of frames. The detections do not depend on the number of
// workers. emit may keep dets. With PolarityAuto the polarity is decided on
// the first frame and kept for all.
//
// Run stops at the first error, from src, a Detector or emit, and returns it.
func Run(src frames.Source, bg gocv.Mat, opt Options, emit func(frame int, dets []Detection) error) error {
	opt, err := opt.withDefaults()
	if err != nil {
		return err
	}
	workers := opt.Workers
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	info := src.Info()
	// One copy of the background, shared read-only by the workers.
	var shared *Detector
	if shared, err = NewDetector(opt); err != nil {
		return err
	}
	defer shared.Close()
	if !bg.Empty() {
		if bg.Cols() != info.WidthPx || bg.Rows() != info.HeightPx {
			return fmt.Errorf("detect: background is %dx%d px, %s is %dx%d px", bg.Cols(), bg.Rows(), info.Path, info.WidthPx, info.HeightPx)
		}
		if err := shared.SetBackground(bg); err != nil {
			return err
		}
	}
	newDetector := func() (*Detector, error) {
		d, err := NewDetector(opt)
		if err != nil {
			return nil, err
		}
		d.bg, d.bgW, d.bgH = shared.bg, shared.bgW, shared.bgH
		return d, nil
	}

	// The pool of frame buffers: each is read into, detected in, and
	// returned. Two per worker keep the reader ahead.
	nbuf := 2*workers + 1
	pool := make([]gocv.Mat, nbuf)
	for i := range pool {
		pool[i] = gocv.NewMat()
	}
	defer func() {
		for i := range pool {
			pool[i].Close()
		}
	}()
	free := make(chan int, nbuf)
	for i := range pool {
		free <- i
	}
	type job struct{ seq, index, buf int }
	type result struct {
		seq, index int
		dets       []Detection
		err        error
	}

	// The first frame decides the polarity before the workers start.
	first := <-free
	firstIndex, err := src.Next(&pool[first])
	if errors.Is(err, io.EOF) {
		return nil
	}
	if err != nil {
		return err
	}
	if opt.Polarity == PolarityAuto {
		d, err := newDetector()
		if err != nil {
			return err
		}
		_, err = d.Frame(pool[first], firstIndex, nil)
		opt.Polarity = d.Polarity()
		d.Close()
		if err != nil {
			return err
		}
	}

	jobs := make(chan job, nbuf)
	results := make(chan result, nbuf)
	done := make(chan struct{})
	var wg sync.WaitGroup

	// Reader.
	wg.Add(1)
	go func() {
		defer wg.Done()
		defer close(jobs)
		jobs <- job{0, firstIndex, first}
		for seq := 1; ; seq++ {
			var b int
			select {
			case b = <-free:
			case <-done:
				return
			}
			i, err := src.Next(&pool[b])
			if errors.Is(err, io.EOF) {
				return
			}
			if err != nil {
				select {
				case results <- result{seq: seq, err: err}:
				case <-done:
				}
				return
			}
			select {
			case jobs <- job{seq, i, b}:
			case <-done:
				return
			}
		}
	}()

	// Workers.
	var wwg sync.WaitGroup
	for range workers {
		wwg.Add(1)
		go func() {
			defer wwg.Done()
			d, err := newDetector()
			if err != nil {
				select {
				case results <- result{seq: -1, err: err}:
				case <-done:
				}
				return
			}
			defer d.Close()
			for j := range jobs {
				dets, err := d.Frame(pool[j.buf], j.index, nil)
				free <- j.buf
				select {
				case results <- result{j.seq, j.index, dets, err}:
				case <-done:
					return
				}
			}
		}()
	}
	go func() {
		wwg.Wait()
		close(results)
	}()

	// Merge in frame order.
	pending := map[int]result{}
	next := 0
	var runErr error
	for res := range results {
		if runErr != nil {
			continue
		}
		if res.err != nil && res.seq < 0 {
			runErr = res.err
			close(done)
			continue
		}
		pending[res.seq] = res
		for {
			r, ok := pending[next]
			if !ok {
				break
			}
			delete(pending, next)
			next++
			if r.err == nil {
				r.err = emit(r.index, r.dets)
			}
			if r.err != nil {
				runErr = r.err
				close(done)
				break
			}
		}
	}
	wg.Wait()
	return runErr
}
