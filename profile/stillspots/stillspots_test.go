package stillspots

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gaptrace/calib"
	"gaptrace/track/tracks"
)

// The made-up cell of the tests: a 100 um gap seen at 1 um/px, filmed at
// 20 frames/s for 10 s, sheared through the whole recording.
const (
	testGapUM   = 100
	testFPS     = 20
	testFrames  = 200
	testWidthPx = 400
	// testNoisePx is the localization noise of every made-up detection.
	testNoisePx = 0.1
	// dustID is the first track id of the made-up still spots (tracers
	// have smaller ids).
	dustID = 1_000_000
	// maxPassingShare bounds the share of the tracers' points that lie
	// within a spot's radius by chance as they flow past it.
	maxPassingShare = 0.005
	// spotIDs is the range of track ids of one made-up still spot.
	spotIDs = 10_000
)

var testCal = &calib.Calibration{UMPerPx: 1, GapUM: testGapUM, GapPx: testGapUM}

// cell is a made-up recording: its velocity profile and what lies in it.
type cell struct {
	rng    *rand.Rand
	pts    []tracks.Point
	nextID int
	// found tells, for each still spot added (in order), whether Find
	// must find it.
	found []bool
}

func newCell(seed uint64) *cell { return &cell{rng: rand.New(rand.NewPCG(seed, 1))} }

// point is a detection at (x, y) px in frame f of track id.
func (c *cell) point(id, f int, xPx, yPx float64) tracks.Point {
	x := xPx + testNoisePx*c.rng.NormFloat64()
	y := yPx + testNoisePx*c.rng.NormFloat64()
	return tracks.Point{Track: id, Frame: f, TS: float64(f) / testFPS, XPx: x, YPx: y, XUM: x, YUM: y, SizePx: 1.5}
}

// flow adds n tracers following the profile vUMPerS(y), each seen for
// 20 frames from a random frame at a random height and place.
func (c *cell) flow(n int, vUMPerS func(yUM float64) float64) {
	for range n {
		id := c.nextID
		c.nextID++
		y := c.rng.Float64() * testGapUM
		x0 := c.rng.Float64() * testWidthPx
		f0 := c.rng.IntN(testFrames - 20)
		for f := f0; f < f0+20; f++ {
			c.pts = append(c.pts, c.point(id, f, x0+vUMPerS(y)*float64(f-f0)/testFPS, y))
		}
	}
}

// label numbers a new still spot from 1 (its points' Brightness; the
// tracers' is 0) and records whether Find must find it.
func (c *cell) label(found bool) float64 {
	c.found = append(c.found, found)
	return float64(len(c.found))
}

// still adds a spot at (x, y) px through frames [f0, f1), moving at
// vUMPerS, linked in pieces of piece frames (a broken track), one id each
// (dustID + spotIDs times the spot's label + the piece's); found tells
// whether Find must find it.
func (c *cell) still(xPx, yPx, vUMPerS float64, f0, f1, piece int, found bool) {
	label := c.label(found)
	id := dustID + spotIDs*int(label)
	for f := f0; f < f1; f++ {
		if (f-f0)%piece == 0 {
			id++
		}
		p := c.point(id, f, xPx+vUMPerS*float64(f-f0)/testFPS, yPx)
		p.Brightness = label
		c.pts = append(c.pts, p)
	}
}

// flicker adds a still spot at (x, y) px seen for on frames out of every
// period, as a track of its own each time, from frame f0 to the end.
func (c *cell) flicker(xPx, yPx float64, on, period, f0, f1 int, found bool) {
	label := c.label(found)
	for f := f0; f < f1; f++ {
		if (f-f0)%period < on {
			p := c.point(dustID+spotIDs*int(label)+(f-f0)/period, f, xPx, yPx)
			p.Brightness = label
			c.pts = append(c.pts, p)
		}
	}
}

// mislinked adds a still spot at (x, y) px, seen through the recording in
// one track that the linker also gave a tracer flowing into the spot at
// vUMPerS for its first 10 frames and another leaving it for the last 70.
func (c *cell) mislinked(xPx, yPx, vUMPerS float64) {
	label := c.label(true)
	step := vUMPerS / testFPS
	for f := range testFrames {
		x, l := xPx, label
		switch {
		case f < 10:
			x, l = xPx-step*float64(10-f), 0
		case f >= testFrames-70:
			x, l = xPx+step*float64(f-testFrames+71), 0
		}
		p := c.point(dustID+spotIDs*int(label), f, x, yPx)
		p.Brightness = l
		c.pts = append(c.pts, p)
	}
}

// Velocity profiles of the tests, um/s at height y um.
func couette(slipUMPerS, ratePerS float64) func(float64) float64 {
	return func(y float64) float64 { return slipUMPerS + ratePerS*y }
}

// plug is a fluid at rest below half the gap and sheared above.
func plug(y float64) float64 { return math.Max(0, 4*(y-testGapUM/2)) }

// TestFind runs Find and Source on made-up tracks: dust at rest among
// sheared tracers, whole or broken into short tracks; a particle stuck to
// the moving wall; slow tracers and a still spot at a wall that does not
// slip; a still spot in a band of fluid at rest; a phase of rest.
func TestFind(t *testing.T) {
	full := []Phase{{0, testFrames / testFPS}}
	cases := []struct {
		name   string
		phases []Phase
		build  func(c *cell)
		spots  int
	}{
		{"dust at rest among sheared tracers", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.still(100, 60, 0, 0, testFrames, testFrames, true)
			c.still(250, 30, 0, 0, testFrames, testFrames, true)
		}, 2},
		{"dust broken into tracks of 6 frames", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.still(150, 45, 0, 0, testFrames, 6, true)
		}, 1},
		{"dust broken into tracks of 2 frames, found by its long ones", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.still(150, 45, 0, 0, testFrames/2, 2, true)
			c.still(150, 45, 0, testFrames/2, testFrames, 20, true)
		}, 1},
		{"a blotch that flickers: runs of 2 frames at one place", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.flicker(180, 75, 2, 15, testFrames/2, testFrames, true)
		}, 1},
		{"a tracer at rest after the stop on the place of a flickering blotch", []Phase{{0, 8}}, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.flicker(180, 75, 2, 15, 80, 160, true)
			c.still(180, 75, 0, 165, testFrames, testFrames, false)
		}, 1},
		{"dust before, through and after the shear", []Phase{{2, 8}}, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.still(180, 75, 0, 0, testFrames, testFrames, true)
		}, 1},
		{"a lone still run of 3 frames", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.flicker(180, 75, 3, testFrames, testFrames-3, testFrames, false)
		}, 0},
		{"a particle stuck to the moving wall", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.still(0, testGapUM-1.5, 2*testGapUM, 0, testFrames, testFrames, false)
		}, 0},
		{"slow tracers and a stuck particle at a wall that does not slip", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			for k := range 10 {
				y := 1 + 0.4*float64(k)
				c.still(20*float64(k), y, 2*y, 0, testFrames, 40, false)
			}
			c.still(300, 2, 0, 0, testFrames, testFrames, false)
		}, 0},
		{"a still spot touching the stationary wall where the fluid slips", full, func(c *cell) {
			c.flow(800, couette(50, 1.5))
			c.still(300, 2, 0, 0, testFrames, testFrames, false)
		}, 0},
		{"dust in a band of fluid at rest", full, func(c *cell) {
			c.flow(800, plug)
			c.still(120, 20, 0, 0, testFrames, testFrames, false)
			c.still(220, 80, 0, 0, testFrames, testFrames, true)
		}, 1},
		{"slow tracers at the edge of a band at rest", full, func(c *cell) {
			c.flow(800, plug)
			for k := range 3 {
				y := testGapUM/2 + 0.03*float64(k+1)
				c.still(60*float64(k), y, plug(y), testFrames/2, testFrames/2+60, 20, false)
			}
		}, 0},
		{"dust linked to tracers passing by", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.mislinked(200, 60, couette(0, 2)(60))
		}, 1},
		{"dust while the fluid rests", nil, func(c *cell) {
			c.flow(800, func(float64) float64 { return 0 })
			c.still(120, 20, 0, 0, testFrames, testFrames, false)
		}, 0},
		{"dust seen only in the start-up half of the phase", full, func(c *cell) {
			c.flow(800, couette(0, 2))
			c.still(120, 70, 0, 0, testFrames/2-1, testFrames, false)
		}, 0},
	}
	for i, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			c := newCell(uint64(i + 1))
			tc.build(c)
			src := tracks.Slice(c.pts)
			s, err := Find(context.Background(), src, tc.phases, testCal)
			if err != nil {
				t.Fatal(err)
			}
			if s.Len() != tc.spots {
				t.Fatalf("%d spots %+v, want %d", s.Len(), s.Spots, tc.spots)
			}
			kept, err := tracks.Collect(s.Source(src))
			if err != nil {
				t.Fatal(err)
			}
			// Points of each still spot (by its label) and of the tracers
			// (0), in all and kept.
			count := func(pts []tracks.Point) map[int]int {
				n := map[int]int{}
				for _, p := range pts {
					n[int(p.Brightness)]++
				}
				return n
			}
			before, after := count(c.pts), count(kept)
			tracer, tracerKept := before[0], after[0]
			if lost := tracer - tracerKept; float64(lost) > maxPassingShare*float64(tracer) {
				t.Errorf("%d of %d tracer points left out, want at most %.1f %%", lost, tracer, 100*maxPassingShare)
			}
			// No point is kept inside a spot where it is left out: at any
			// time for a spot of the window, else within the phases.
			inPhase := func(tS float64) bool {
				for _, ph := range tc.phases {
					if tS >= ph.StartS && tS <= ph.EndS {
						return true
					}
				}
				return false
			}
			for _, sp := range s.Spots {
				for _, p := range kept {
					if (sp.Always || inPhase(p.TS)) && math.Hypot(p.XPx-sp.XPx, p.YPx-sp.YPx) <= sp.RadiusPx {
						t.Errorf("point %+v kept inside spot %+v", p, sp)
						break
					}
				}
			}
			for i, found := range c.found {
				k := i + 1
				switch {
				case found && after[k] != 0:
					t.Errorf("still spot %d: %d of %d points kept, want none", k, after[k], before[k])
				case !found && after[k] != before[k]:
					t.Errorf("still spot %d: %d of %d points left out, want none", k, before[k]-after[k], before[k])
				}
			}
		})
	}
}

// TestSourceSplits checks that a track passing through a spot is cut there
// into pieces with ids of their own, the same on every pass, and that the
// unlinked detections inside a spot go too.
func TestSourceSplits(t *testing.T) {
	s := &Spots{Spots: []Spot{{XPx: 10, YPx: 5, RadiusPx: 1, Always: true}}, maxID: 7}
	s.index()
	var tr tracks.Slice
	for f := range 6 {
		tr = append(tr, tracks.Point{Track: 3, Frame: f, TS: float64(f), XPx: float64(8 + f), YPx: 5})
	}
	tr = append(tr, tracks.Point{Track: tracks.Unlinked, Frame: 2, XPx: 10.2, YPx: 5.1},
		tracks.Point{Track: tracks.Unlinked, Frame: 3, XPx: 30, YPx: 5})
	var passes [2][]tracks.Point
	for k := range passes {
		var err error
		if passes[k], err = tracks.Collect(s.Source(tr)); err != nil {
			t.Fatal(err)
		}
	}
	if !slices.Equal(passes[0], passes[1]) {
		t.Fatalf("two passes differ:\n%v\n%v", passes[0], passes[1])
	}
	var got [][2]int // (track, frame)
	for _, p := range passes[0] {
		got = append(got, [2]int{p.Track, p.Frame})
	}
	// Frames 1-3 (x 9, 10, 11) lie within 1 px of the spot; the part after
	// the cut takes id 3 + 1*(7+1).
	want := [][2]int{{3, 0}, {11, 4}, {11, 5}, {tracks.Unlinked, 3}}
	if !slices.Equal(got, want) {
		t.Errorf("pieces %v, want %v", got, want)
	}
}

// TestFindErrors checks the errors of Find on a calibration without a gap
// and on an empty phase.
func TestFindErrors(t *testing.T) {
	cases := []struct {
		name   string
		cal    *calib.Calibration
		phases []Phase
	}{
		{"no calibration", nil, nil},
		{"no gap", &calib.Calibration{UMPerPx: 1}, nil},
		{"empty phase", testCal, []Phase{{2, 2}}},
	}
	for _, c := range cases {
		if _, err := Find(context.Background(), tracks.Slice{}, c.phases, c.cal); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}

// benchCell is the made-up recording of the benchmarks: 4 000 sheared
// tracers seen for 20 frames each and 30 dust spots broken into tracks of
// 25 frames, held in memory.
func benchCell() (tracks.Source, *Spots) {
	c := newCell(1)
	c.flow(4000, couette(0, 2))
	for k := range 30 {
		c.still(float64(10+12*k), float64(10+2*k), 0, 0, testFrames, 25, true)
	}
	src := tracks.Slice(c.pts)
	s, err := Find(context.Background(), src, []Phase{{0, testFrames / testFPS}}, testCal)
	if err != nil {
		panic(err)
	}
	return src, s
}

// BenchmarkFind times Find against one bare pass over the same tracks
// (sub-benchmark "pass"), and a pass through Spots.Source ("source").
func BenchmarkFind(b *testing.B) {
	src, s := benchCell()
	noop := func([]tracks.Point) error { return nil }
	b.Run("find", func(b *testing.B) {
		for range b.N {
			if _, err := Find(context.Background(), src, []Phase{{0, testFrames / testFPS}}, testCal); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("pass", func(b *testing.B) {
		for range b.N {
			src.Each(noop)
		}
	})
	b.Run("source", func(b *testing.B) {
		for range b.N {
			s.Source(src).Each(noop)
		}
	})
}
