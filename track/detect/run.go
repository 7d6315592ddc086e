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
// the first frame and kept for all. A frames.Packets source (Motion JPEG) is
// read undecoded and its frames decoded by the workers; the frames it holds
// decoded already (a frames.Head) go to the workers as they are.
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
	// returned. Two per worker keep the reader ahead. A source of
	// independent compressed frames hands over packets instead, which the
	// workers decode: decoding then runs in parallel too.
	packets, _ := src.(frames.Packets)
	nbuf := 2*workers + 1
	pool := make([]gocv.Mat, nbuf)
	pktBuf := make([][]byte, nbuf)
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
	type job struct {
		seq, index, buf int
		packet          []byte // nil: the frame is in pool[buf]
	}
	type result struct {
		seq, index int
		dets       []Detection
		err        error
	}
	// next reads the next frame of src into buffer b.
	next := func(b int) (job, error) {
		if packets != nil {
			i, pk, err := packets.NextPacket(pktBuf[b], &pool[b])
			if pk != nil {
				pktBuf[b] = pk
			}
			return job{index: i, buf: b, packet: pk}, err
		}
		i, err := src.Next(&pool[b])
		return job{index: i, buf: b}, err
	}

	// The first frame decides the polarity before the workers start.
	firstJob, err := next(<-free)
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
		img := pool[firstJob.buf]
		if firstJob.packet != nil {
			img = gocv.NewMat()
			defer img.Close()
			err = packets.Decode(firstJob.index, firstJob.packet, &img)
		}
		if err == nil {
			_, err = d.Frame(img, firstJob.index, nil)
		}
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
		jobs <- firstJob
		for seq := 1; ; seq++ {
			var b int
			select {
			case b = <-free:
			case <-done:
				return
			}
			j, err := next(b)
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
			j.seq = seq
			select {
			case jobs <- j:
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
			own := gocv.NewMat() // the decoded frame of a packet
			defer own.Close()
			for j := range jobs {
				var dets []Detection
				var err error
				if j.packet != nil {
					err = packets.Decode(j.index, j.packet, &own)
					free <- j.buf
					if err == nil {
						dets, err = d.Frame(own, j.index, nil)
					}
				} else {
					dets, err = d.Frame(pool[j.buf], j.index, nil)
					free <- j.buf
				}
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
	want := 0
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
			r, ok := pending[want]
			if !ok {
				break
			}
			delete(pending, want)
			want++
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
