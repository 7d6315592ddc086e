package profile

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"runtime/debug"
	"runtime/metrics"
	"slices"
	"sync"
	"testing"
	"time"

	"gaptrace/calib/experiment"
	"gaptrace/track/synth"
	"gaptrace/track/tracks"
)

// listSource hands out its tracks in the order of the list.
type listSource [][]tracks.Point

func (l listSource) Each(fn func([]tracks.Point) error) error {
	for _, t := range l {
		if err := fn(t); err != nil {
			return err
		}
	}
	return nil
}

// listOf returns the tracks of pts, in id order.
func listOf(t *testing.T, pts []tracks.Point) listSource {
	t.Helper()
	var l listSource
	if err := tracks.Slice(pts).Each(func(tr []tracks.Point) error {
		l = append(l, slices.Clone(tr))
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	return l
}

// fingerprint is everything Analyze found that a report or summary.json
// shows, as text.
func fingerprint(t *testing.T, r *Result) string {
	t.Helper()
	b, err := json.Marshal(struct {
		S any
		A any
	}{r.ShearPhases, r.AfterStop})
	if err != nil {
		t.Fatal(err)
	}
	return fmt.Sprintf("%s\n%v\n%v\n%v\n%v", b, r.Profiles, r.Map, r.Warnings, r.Lag)
}

// TestOrderOfTracks checks that the numbers do not depend on the order in
// which the Source hands out the tracks: in id order, reversed, shuffled.
func TestOrderOfTracks(t *testing.T) {
	s, err := synth.Builtin("step-plane", 4)
	if err != nil {
		t.Fatal(err)
	}
	s.Frames = 2 * AfterDenseFrames // past the dense part after the stop
	l := listOf(t, s.Observe(noisePx, breakPerFrame, 4))
	rev := slices.Clone(l)
	slices.Reverse(rev)
	shuf := slices.Clone(l)
	rng := rand.New(rand.NewPCG(4, 4))
	rng.Shuffle(len(shuf), func(i, j int) { shuf[i], shuf[j] = shuf[j], shuf[i] })
	var want string
	for _, c := range []struct {
		name string
		src  listSource
	}{{"id order", l}, {"reversed", rev}, {"shuffled", shuf}} {
		r, err := Analyze(context.Background(), c.src, s.Experiment(), s.Calibration(), Options{Seed: 4, EveryS: EveryAuto})
		if err != nil {
			t.Fatal(err)
		}
		if r.AfterStop == nil {
			t.Fatal("no after-stop analysis")
		}
		got := fingerprint(t, r)
		if want == "" {
			want = got
		} else if got != want {
			t.Errorf("%s: the results differ from those of the tracks in id order", c.name)
		}
	}
}

// TestLayerKeepOrder checks that a layer over its budget keeps the same
// tracks whatever the order they come in, and no more samples than its
// limit.
func TestLayerKeepOrder(t *testing.T) {
	const tracksN, limit = 300, 1000
	rng := rand.New(rand.NewPCG(1, 2))
	lens := make([]int, tracksN)
	for i := range lens {
		lens[i] = 1 + rng.IntN(20)
	}
	kept := func(order []int) []int {
		var l layerKeep
		l.limit = limit
		for _, id := range order {
			l.offer(id, make([]sample, lens[id]))
		}
		if l.total > limit {
			t.Errorf("%d samples kept, limit %d", l.total, limit)
		}
		var ids []int
		for _, e := range l.r.es {
			ids = append(ids, e.id)
		}
		slices.Sort(ids)
		return ids
	}
	order := make([]int, tracksN)
	for i := range order {
		order[i] = i
	}
	want := kept(order)
	if len(want) == 0 || len(want) == tracksN {
		t.Fatalf("%d of %d tracks kept: the budget does not bite", len(want), tracksN)
	}
	for range 5 {
		rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
		if got := kept(order); !slices.Equal(got, want) {
			t.Fatalf("kept %v, in id order %v", got, want)
		}
	}
}

// cancelSource cancels its context in pass cancelPass (from 1) after
// handing out its last track, and counts the passes begun.
type cancelSource struct {
	listSource
	cancelPass, passes int
	cancel             context.CancelFunc
}

func (c *cancelSource) Each(fn func([]tracks.Point) error) error {
	c.passes++
	for i, t := range c.listSource {
		if err := fn(t); err != nil {
			return err
		}
		if c.passes == c.cancelPass && i == len(c.listSource)-1 {
			c.cancel()
		}
	}
	return nil
}

// TestAnalyzeCancel checks that Analyze stops when its context is done:
// within a pass over the tracks, and between the last pass over the
// samples and the layers' profiles, before it reads the tracks again.
func TestAnalyzeCancel(t *testing.T) {
	s, err := synth.Builtin("startup-bands", 5)
	if err != nil {
		t.Fatal(err)
	}
	l := listOf(t, s.Observe(noisePx, breakPerFrame, 5))
	for pass := 1; pass <= 4; pass++ {
		ctx, cancel := context.WithCancel(context.Background())
		src := &cancelSource{listSource: l, cancelPass: pass, cancel: cancel}
		_, err := Analyze(ctx, src, s.Experiment(), s.Calibration(), Options{Seed: 5})
		cancel()
		if !errors.Is(err, context.Canceled) {
			t.Errorf("cancelled in pass %d: error %v, want %v", pass, err, context.Canceled)
		}
		if src.passes != pass {
			t.Errorf("cancelled in pass %d: %d passes begun", pass, src.passes)
		}
	}
}

// shearSource generates, on the fly, the tracks of tracers in a steady
// linear shear followed by rest: tracers at fixed heights, carried along
// the flow across a field of widthUM and entering again at its left edge
// as new tracks, tracks broken at random, positions with Gaussian noise.
// Nothing of it is stored: each pass makes the same tracks again.
type shearSource struct {
	tracers, frames int
	fps             float64
	gapUM, widthUM  float64
	ratePerS        float64
	shear           [2]float64 // start and stop, s
	noiseUM         float64
	// breakPerFrame is the chance per frame that a track breaks while
	// the sample is sheared, restBreakPerFrame while it rests.
	breakPerFrame, restBreakPerFrame float64
}

func (g shearSource) Each(fn func([]tracks.Point) error) error {
	var buf []tracks.Point
	id := 0
	for i := range g.tracers {
		rng := rand.New(rand.NewPCG(uint64(i), 0x736f75726365))
		y := (float64(i) + 0.5) / float64(g.tracers) * g.gapUM
		x := rng.Float64() * g.widthUM
		v := g.ratePerS * y
		buf = buf[:0]
		emit := func() error {
			if len(buf) > 1 {
				if err := fn(buf); err != nil {
					return err
				}
				id++
			}
			buf = buf[:0]
			return nil
		}
		for f := range g.frames {
			tS := float64(f) / g.fps
			if tS > g.shear[0] && tS <= g.shear[1] {
				x += v / g.fps
			}
			if x >= g.widthUM {
				x -= g.widthUM
				if err := emit(); err != nil {
					return err
				}
			}
			br := g.restBreakPerFrame
			if tS > g.shear[0] && tS <= g.shear[1] {
				br = g.breakPerFrame
			}
			if rng.Float64() < br {
				if err := emit(); err != nil {
					return err
				}
			}
			buf = append(buf, tracks.Point{Track: id, Frame: f, TS: tS,
				XUM: x + g.noiseUM*rng.NormFloat64(), YUM: y + g.noiseUM*rng.NormFloat64()})
		}
		if err := emit(); err != nil {
			return err
		}
	}
	return nil
}

// benchShear returns a generated recording of frames at 100 frames/s:
// rest, a steady shear from 0.5 s to 5.5 s, then rest to the end, with
// benchTracers tracers in view of a 640x480 px field at 2 um/px, and its
// experiment.
func benchShear(t testing.TB, frames int) (shearSource, *synth.Scenario) {
	s, err := synth.Builtin("homogeneous", 6)
	if err != nil {
		t.Fatal(err)
	}
	rate := 1.0
	s.Frames = frames
	s.Motion = []experiment.Segment{{StartS: 0.5, EndS: 5.5, RatePerS: &rate}}
	g := shearSource{tracers: benchTracers, frames: frames, fps: s.FPS, gapUM: s.Geometry.GapUM, widthUM: float64(s.WidthPx) * s.UMPerPx,
		ratePerS: rate, shear: [2]float64{0.5, 5.5}, noiseUM: noisePx * s.UMPerPx,
		breakPerFrame: benchBreakPerFrame, restBreakPerFrame: benchRestBreakPerFrame}
	return g, s
}

// benchTracers tracers in view, as in issue 13's recording. Tracks break
// with benchBreakPerFrame a frame while sheared, besides leaving the
// field, and with benchRestBreakPerFrame at rest, where a tracer that is
// still is lost only when missed for longer than the linker's gap
// closing bridges, about once a minute at 100 frames/s (an assumption of
// the benchmark, not a measurement).
const (
	benchTracers           = 450
	benchBreakPerFrame     = 0.005
	benchRestBreakPerFrame = 0.0002
)

// peakLive runs f and returns the largest live heap, bytes, seen during
// it above the live heap before it: the runtime's count of the heap
// marked live by each garbage collection, sampled every millisecond.
func peakLive(f func()) uint64 {
	defer debug.SetGCPercent(debug.SetGCPercent(gcPercent))
	runtime.GC()
	sample := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	read := func() uint64 {
		metrics.Read(sample)
		return sample[0].Value.Uint64()
	}
	base := read()
	var peak uint64
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			peak = max(peak, read())
			select {
			case <-stop:
				return
			case <-tick.C:
			}
		}
	}()
	f()
	runtime.GC()
	close(stop)
	wg.Wait()
	peak = max(peak, read())
	if peak < base {
		return 0
	}
	return peak - base
}

// BenchmarkAnalyzeMemory reports the peak live heap of Analyze on a
// generated recording of a steady shear and an observation after the stop
// of increasing length.
func BenchmarkAnalyzeMemory(b *testing.B) {
	for _, frames := range []int{1500, 6000, 24000} {
		b.Run(fmt.Sprintf("frames=%d", frames), func(b *testing.B) {
			g, s := benchShear(b, frames)
			var peak uint64
			for range b.N {
				peak = max(peak, peakLive(func() {
					if _, err := Analyze(context.Background(), g, s.Experiment(), s.Calibration(), Options{Seed: 1}); err != nil {
						b.Fatal(err)
					}
				}))
			}
			b.ReportMetric(float64(peak)/(1<<20), "peak-MiB")
		})
	}
}

// maxMemoryGrowth bounds the ratio of Analyze's peak live heap on the
// longest recording of TestAnalyzeMemoryBounded to that on the shortest:
// issue 13's own criterion for a whole run, 1.2. What Analyze keeps is
// bounded by its reservoirs, grids and budgets, which the shortest
// recording mostly fills already; the rest is the garbage collector's
// timing of the transient samples of one track.
const maxMemoryGrowth = 1.2

// memoryRepeats is how many times TestAnalyzeMemoryBounded measures each
// length, keeping the smallest peak. The error of one measurement is one
// way only: objects allocated while the collector marks count as live
// until the next cycle, and a loaded machine stretches the marking (one
// run at 1.29 against 1.17 alone, stop 22), so the least of a few runs is
// the closest to the true peak.
const memoryRepeats = 2

// TestAnalyzeMemoryBounded checks that Analyze's peak live heap does not
// grow with the length of the observation after the stop (1 500 against
// 12 000 frames of 450 tracers).
func TestAnalyzeMemoryBounded(t *testing.T) {
	var peaks []float64
	for _, frames := range []int{1500, 12000} {
		g, s := benchShear(t, frames)
		peak := math.Inf(1)
		for range memoryRepeats {
			peak = min(peak, float64(peakLive(func() {
				r, err := Analyze(context.Background(), g, s.Experiment(), s.Calibration(), Options{Seed: 1})
				if err != nil {
					t.Fatal(err)
				}
				if r.AfterStop == nil || len(r.ShearPhases) != 1 || math.IsNaN(float64(r.ShearPhases[0].BulkRatePerS)) {
					t.Fatalf("%d frames: no shear phase or no after-stop analysis", frames)
				}
			})))
		}
		peaks = append(peaks, peak)
	}
	t.Logf("peak live heap: %.1f MiB at 1500 frames, %.1f MiB at 12000", peaks[0]/(1<<20), peaks[1]/(1<<20))
	if peaks[1] > maxMemoryGrowth*peaks[0] {
		t.Errorf("peak live heap grows from %.1f MiB to %.1f MiB with 8 times the frames, beyond a factor %g", peaks[0]/(1<<20), peaks[1]/(1<<20), maxMemoryGrowth)
	}
}

// gcPercent is the garbage collector's target while peakLive measures:
// a collection every 10 % of growth marks the live heap often enough that
// its largest value is within about a tenth of the true peak.
const gcPercent = 10
