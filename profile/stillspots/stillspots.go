// Package stillspots finds the spots of a recording that stay still through
// a shear phase while the fluid at their height flows: dust and scratches
// on the cell's window, or the blotches a codec leaves at fixed places next
// to a moving textured wall. They are detected like tracers but follow no
// fluid, so they are left out of the profile analysis (Spots.Source); the
// tracks table keeps them.
//
// The test is made against the fluid itself, in the steady part of each
// shear phase (its second half, after the start-up). A first pass gives
// each height bin its fluid velocity along the walls: the median, weighted
// by points, of the least-squares velocities of the track pieces of at
// least MinPiecePoints points there, and the spread of those pieces about
// it (scaled MAD). A second pass cuts the tracks where they step farther
// than a still spot can (StepSigmas, MaxStillStepPx), so that a spot the
// linker joined to a passing tracer is seen on its own, and tests every
// run of at least MinRunPoints points: it is still when its velocity is
// zero within StillZ of its own standard uncertainty (or below RestShare of
// the fluid's), and no tracer when it also lies more than FlowZ combined
// standard deviations from the fluid at its height. Next to a wall that
// does not slip the fluid itself is nearly at rest, so there a still spot
// cannot be told from the fluid and is kept; so is a still spot within
// StuckRadii tracer radii of the stationary wall, which may be a particle
// stuck to that wall (at rest with it). A particle stuck to the moving wall
// moves with it and is never still.
//
// The still runs are gathered by position, not per track, since a spot
// that the linker broke into many short tracks is one spot: runs whose mean
// positions lie within MergePx form one spot when they hold MinPiecePoints
// points together. Every detection within the spot's radius is left out,
// splitting the tracks that pass through it: at any time of the recording
// for a spot seen in most frames (dust stays where it is), within the
// shear phases for one seen now and then (WindowShare). Memory is bounded by the height bins and the
// number of still positions, not by the number of frames.
package stillspots

import (
	"container/heap"
	"context"
	"fmt"
	"math"
	"slices"

	"gaptrace/calib"
	"gaptrace/calib/robust"
	"gaptrace/track/tracks"
)

// Thresholds of the test, each with its reason.
const (
	// MinPiecePoints is the shortest piece whose velocity and residual
	// scatter are tested: five points leave three degrees of freedom for
	// the scatter, enough that a still dust piece and a tracer differ by
	// many standard uncertainties at any shear the linker follows.
	MinPiecePoints = 5
	// MinRunPoints is the shortest still run tested on its own: two
	// points give a velocity, with the localization noise for its
	// uncertainty. A spot that the linker breaks into such short runs (a
	// blotch that flickers) is kept only when its runs at one place hold
	// MinPiecePoints points together.
	MinRunPoints = 2
	// SteadyFromShare is where, as a share of its duration, the steady
	// part of a shear phase begins: the profile's own steady window is the
	// second half, after the start-up in which the fluid may still be at
	// rest.
	SteadyFromShare = 0.5
	// StillZ: a piece is still when its velocity is within StillZ standard
	// uncertainties of zero (coverage factor 3, common practice).
	StillZ = 3
	// RestShare: a piece slower than this share of the fluid at its height
	// is still whatever its uncertainty; a tracer that follows the fluid
	// can not lag it twentyfold in steady shear, while dust with a residue
	// of the camera-shake correction drifts by a little.
	RestShare = 0.05
	// FlowZ: a still piece is no tracer when the fluid at its height moves
	// faster than FlowZ combined standard deviations (the piece's
	// uncertainty and the tracers' spread in the bin): five, so that a
	// genuine tracer, normally distributed about the fluid, is taken for a
	// spot with a probability below 1e-6 per piece.
	FlowZ = 5
	// StuckRadii: a still spot whose centre lies within this many tracer
	// radii of the stationary wall may be a particle stuck to that wall,
	// which is a tracer of the wall's motion (at rest), and is kept. A
	// stuck particle's centre sits one radius off the wall; the other two
	// radii allow for the wall line's and the radius' uncertainty.
	StuckRadii = 3
	// radiusPerSize converts a detection's size_px (the radius of
	// gyration of a Gaussian spot of standard deviation s, sqrt(2) s) to
	// the spot's radius, taken as 2 s (its visible edge).
	radiusPerSize = math.Sqrt2
	// MergePx: still pieces whose mean positions lie within this distance
	// are one spot: several times the localization error of a piece mean,
	// below the separation at which the detector resolves two spots.
	MergePx = 2
	// radiusSigmas and minRadiusPx: every detection within radiusSigmas
	// times the scatter of a spot's detections about its centre, and at
	// least minRadiusPx, is the spot's: the scatter holds the spot's own
	// localization noise and the pull of tracers passing over it.
	radiusSigmas = 3
	minRadiusPx  = 1
	// WindowShare: a spot seen still in at least half the frames of the
	// steady windows belongs to the window (dust, a scratch) and is there
	// before and after the shear too; a spot seen less may be a blotch of
	// the codec where the moving wall was, and a tracer that comes to rest
	// on its place after the stop is a tracer.
	WindowShare = 0.5
	// StepSigmas and MaxStillStepPx: a step between two points of a
	// track longer than StepSigmas times the noise of a step (sqrt(2)
	// times the localization noise), and than MaxStillStepPx, is not a
	// still spot's, so the search for still pieces cuts the tracks there:
	// a spot linked to a tracer passing by (a mislink) leaves still pieces
	// of its own. Eight sigmas as velocity.JumpSigmas; a spot is a pixel
	// or more across and its centre wanders by less than that.
	StepSigmas     = 8
	MaxStillStepPx = 1
	// heightBins is the number of height bins across the gap for the local
	// fluid velocity: 20 layers resolve a shear band of a tenth of the gap
	// while holding hundreds of pieces each in a short recording.
	heightBins = 20
	// binPieces bounds the pieces kept per bin and phase for the median,
	// chosen by a hash of the track id (so the order of the tracks does not
	// matter): the median's standard error is then at most 1.25 / sqrt(4096)
	// = 2 % of the spread.
	binPieces = 4096
	// noisePieces bounds the pieces kept for the localization noise, the
	// median of their residual scatter.
	noisePieces = 4096
)

// Phase is the time span of one shear phase, s.
type Phase struct{ StartS, EndS float64 }

// Spot is one still spot.
type Spot struct {
	XPx, YPx float64 // centre in the image, px
	YUM      float64 // height above the stationary wall, um
	RadiusPx float64 // detections within this distance of the centre are the spot's
	// StillPoints is the number of points of the still pieces that found
	// it, in all shear phases.
	StillPoints int
	// FluidUMPerS is the fluid's velocity at its height in the phase where
	// it was found moving fastest, um/s.
	FluidUMPerS float64
	// Always is set for a spot seen still in at least WindowShare of the
	// frames of the steady windows: a feature of the window, left out at
	// any time of the recording. Other spots (a blotch that comes and
	// goes) are left out only within the shear phases.
	Always bool
}

// Spots is the outcome of Find: the still spots and what Source needs to
// leave them out.
type Spots struct {
	Spots []Spot
	// NoiseUM is the localization noise the pieces were tested with, um
	// (the median residual scatter of their fits).
	NoiseUM float64
	maxID   int
	shear   []Phase          // the shear phases, where every spot is left out
	cell    map[[2]int]int32 // 1-px cell → index of a spot whose disc covers it
}

// fit is one piece's least-squares velocity along the walls.
type fit struct {
	n                int
	vUMPerS          float64
	scatterUM, sxxS2 float64 // residual rms (n-2 degrees of freedom) and sum of squared time offsets
	yUM, xPx, yPx    float64 // mean position
	sizePx           float64 // mean size
}

// fitPiece fits x_um = a + v t to the points p (at least 3).
func fitPiece(p []tracks.Point) fit {
	n := float64(len(p))
	var mt, mx, my, px, py, sz float64
	for _, q := range p {
		mt += q.TS
		mx += q.XUM
		my += q.YUM
		px += q.XPx
		py += q.YPx
		sz += q.SizePx
	}
	mt, mx, my, px, py, sz = mt/n, mx/n, my/n, px/n, py/n, sz/n
	var sxx, sxy float64
	for _, q := range p {
		dt := q.TS - mt
		sxx += dt * dt
		sxy += dt * (q.XUM - mx)
	}
	f := fit{n: len(p), sxxS2: sxx, yUM: my, xPx: px, yPx: py, sizePx: sz}
	if sxx > 0 {
		f.vUMPerS = sxy / sxx
	}
	var ss float64
	for _, q := range p {
		r := q.XUM - mx - f.vUMPerS*(q.TS-mt)
		ss += r * r
	}
	if len(p) > 2 {
		f.scatterUM = math.Sqrt(ss / (n - 2))
	}
	return f
}

// errUMPerS is the standard uncertainty of the piece's velocity, with its
// scatter floored at the recording's localization noise.
func (f fit) errUMPerS(noiseUM float64) float64 {
	if !(f.sxxS2 > 0) {
		return math.Inf(1)
	}
	return math.Max(f.scatterUM, noiseUM) / math.Sqrt(f.sxxS2)
}

// sample is one piece in a bin's reservoir.
type sample struct {
	h    uint64
	v, w float64
}

// reservoir keeps the k samples of smallest hash (a max-heap on h).
type reservoir struct {
	k int
	s []sample
}

func (r *reservoir) Len() int           { return len(r.s) }
func (r *reservoir) Less(i, j int) bool { return r.s[i].h > r.s[j].h }
func (r *reservoir) Swap(i, j int)      { r.s[i], r.s[j] = r.s[j], r.s[i] }
func (r *reservoir) Push(x any)         { r.s = append(r.s, x.(sample)) }
func (r *reservoir) Pop() any {
	x := r.s[len(r.s)-1]
	r.s = r.s[:len(r.s)-1]
	return x
}

func (r *reservoir) offer(s sample) {
	switch {
	case len(r.s) < r.k:
		heap.Push(r, s)
	case s.h < r.s[0].h:
		r.s[0] = s
		heap.Fix(r, 0)
	}
}

// hash mixes a track id and a phase index (splitmix64's finalizer).
func hash(id, phase int) uint64 {
	z := uint64(id)*0x9e3779b97f4a7c15 + uint64(phase)*0xbf58476d1ce4e5b9
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// fluid is the local fluid velocity of one bin in one phase, um/s.
type fluid struct{ vUMPerS, spreadUMPerS float64 }

// weightedMedian returns the median of v weighted by w (s is sorted).
func weightedMedian(s []sample) float64 {
	if len(s) == 0 {
		return math.NaN()
	}
	slices.SortFunc(s, func(a, b sample) int { return cmpFloat(a.v, b.v) })
	var tot float64
	for _, x := range s {
		tot += x.w
	}
	var acc float64
	for _, x := range s {
		acc += x.w
		if acc >= tot/2 {
			return x.v
		}
	}
	return s[len(s)-1].v
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// fluidOf returns a bin's fluid velocity and the spread of its tracers.
func fluidOf(s []sample) fluid {
	if len(s) == 0 {
		return fluid{math.NaN(), math.NaN()}
	}
	m := weightedMedian(s)
	dev := make([]sample, len(s))
	for i, x := range s {
		dev[i] = sample{v: math.Abs(x.v - m), w: x.w}
	}
	return fluid{m, robust.MADToSigma * weightedMedian(dev)}
}

// pieces calls fn with the part of track t inside each steady window (its
// index and points), when that part has at least minPoints points.
func pieces(t []tracks.Point, win []Phase, minPoints int, fn func(k int, p []tracks.Point)) {
	if len(t) < minPoints || t[0].Track == tracks.Unlinked {
		return
	}
	for k, w := range win {
		a, _ := slices.BinarySearchFunc(t, w.StartS, func(p tracks.Point, s float64) int { return cmpFloat(p.TS, s) })
		b, _ := slices.BinarySearchFunc(t, w.EndS, func(p tracks.Point, s float64) int { return cmpFloat(p.TS, s) })
		if b-a >= minPoints {
			fn(k, t[a:b])
		}
	}
}

// stillRuns calls fn with every run of at least MinRunPoints points of p
// whose steps are all at most maxStepPx long.
func stillRuns(p []tracks.Point, maxStepPx float64, fn func(run []tracks.Point)) {
	from := 0
	for i := 1; i <= len(p); i++ {
		if i == len(p) || math.Hypot(p[i].XPx-p[i-1].XPx, p[i].YPx-p[i-1].YPx) > maxStepPx {
			if i-from >= MinRunPoints {
				fn(p[from:i])
			}
			from = i
		}
	}
}

// still gathers the still pieces of one 1-px cell.
type still struct {
	points           int
	sx, sy, sxx, syy float64 // sums over the pieces' points, px and px^2
	yUM              float64 // sum of the points' heights, um
	fluidUMPerS      float64 // the fluid's velocity where it is fastest, um/s
	fastestAbsUMPerS float64
}

// Find returns the still spots of src during the shear phases shear, with
// cal's gap and scale. With no shear phase there is nothing to test
// against and no spot is found.
func Find(ctx context.Context, src tracks.Source, shear []Phase, cal *calib.Calibration) (*Spots, error) {
	out := &Spots{shear: slices.Clone(shear)}
	if cal == nil || !(cal.GapUM > 0) || !(cal.UMPerPx > 0) {
		return nil, fmt.Errorf("stillspots: a calibration with a positive gap and scale is needed (gap %v um)", gapOf(cal))
	}
	var win []Phase
	for _, p := range shear {
		if !(p.EndS > p.StartS) {
			return nil, fmt.Errorf("stillspots: shear phase from %g s to %g s is empty", p.StartS, p.EndS)
		}
		win = append(win, Phase{p.StartS + SteadyFromShare*(p.EndS-p.StartS), p.EndS})
	}
	bin := func(yUM float64) int {
		return min(heightBins-1, max(0, int(yUM/cal.GapUM*heightBins)))
	}
	// First pass: the pieces' velocities per bin and phase, and their
	// residual scatter.
	res := make([][]reservoir, len(win))
	for k := range res {
		res[k] = make([]reservoir, heightBins)
		for b := range res[k] {
			res[k][b].k = binPieces
		}
	}
	noise := reservoir{k: noisePieces}
	// The frame interval, from the first and last frames and their times.
	first, last := tracks.Point{Frame: math.MaxInt}, tracks.Point{Frame: math.MinInt}
	err := src.Each(func(t []tracks.Point) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		for _, p := range t {
			out.maxID = max(out.maxID, p.Track)
			if p.Frame < first.Frame {
				first = p
			}
			if p.Frame > last.Frame {
				last = p
			}
		}
		pieces(t, win, MinPiecePoints, func(k int, p []tracks.Point) {
			f := fitPiece(p)
			h := hash(p[0].Track, k)
			res[k][bin(f.yUM)].offer(sample{h: h, v: f.vUMPerS, w: float64(f.n)})
			noise.offer(sample{h: h, v: f.scatterUM, w: 1})
		})
		return nil
	})
	if err != nil || len(win) == 0 {
		return out, err
	}
	if len(noise.s) == 0 {
		return out, nil
	}
	out.NoiseUM = weightedMedian(noise.s)
	fl := make([][]fluid, len(win))
	for k := range res {
		fl[k] = make([]fluid, heightBins)
		for b := range res[k] {
			fl[k][b] = fluidOf(res[k][b].s)
			res[k][b].s = nil
		}
	}
	// Second pass: the still pieces where the fluid flows, gathered by
	// position.
	cells := map[[2]int]*still{}
	maxStepPx := math.Max(StepSigmas*math.Sqrt2*out.NoiseUM/cal.UMPerPx, MaxStillStepPx)
	err = src.Each(func(t []tracks.Point) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		pieces(t, win, MinRunPoints, func(k int, whole []tracks.Point) {
			stillRuns(whole, maxStepPx, func(p []tracks.Point) {
				f := fitPiece(p)
				fb := fl[k][bin(f.yUM)]
				if !isSpot(f, fb, out.NoiseUM, cal.UMPerPx) {
					return
				}
				key := [2]int{int(math.Round(f.xPx)), int(math.Round(f.yPx))}
				c := cells[key]
				if c == nil {
					c = &still{}
					cells[key] = c
				}
				for _, q := range p {
					c.sx += q.XPx
					c.sy += q.YPx
					c.sxx += q.XPx * q.XPx
					c.syy += q.YPx * q.YPx
					c.yUM += q.YUM
				}
				c.points += len(p)
				if a := math.Abs(fb.vUMPerS); a > c.fastestAbsUMPerS {
					c.fastestAbsUMPerS, c.fluidUMPerS = a, fb.vUMPerS
				}
			})
		})
		return nil
	})
	if err != nil {
		return nil, err
	}
	var steadyFrames float64
	if last.Frame > first.Frame {
		dtS := (last.TS - first.TS) / float64(last.Frame-first.Frame)
		for _, w := range win {
			steadyFrames += (w.EndS - w.StartS) / dtS
		}
	}
	out.Spots = merge(cells, steadyFrames)
	out.index()
	return out, nil
}

func gapOf(c *calib.Calibration) any {
	if c == nil {
		return "none"
	}
	return c.GapUM
}

// isSpot tells whether the piece f, in a bin whose fluid is fb, is still
// while the fluid flows, and not where a particle stuck to the stationary
// wall may sit.
func isSpot(f fit, fb fluid, noiseUM, umPerPx float64) bool {
	if math.IsNaN(fb.vUMPerS) {
		return false
	}
	sv := f.errUMPerS(noiseUM)
	still := math.Abs(f.vUMPerS) <= math.Max(StillZ*sv, RestShare*math.Abs(fb.vUMPerS))
	flows := math.Abs(f.vUMPerS-fb.vUMPerS) > FlowZ*math.Hypot(sv, fb.spreadUMPerS)
	stuck := f.yUM < StuckRadii*radiusPerSize*f.sizePx*umPerPx
	return still && flows && !stuck
}

// merge joins the cells within MergePx of each other into spots, in
// recordings whose steady windows hold steadyFrames frames.
func merge(cells map[[2]int]*still, steadyFrames float64) []Spot {
	keys := make([][2]int, 0, len(cells))
	for k := range cells {
		keys = append(keys, k)
	}
	slices.SortFunc(keys, func(a, b [2]int) int {
		if a[1] != b[1] {
			return a[1] - b[1]
		}
		return a[0] - b[0]
	})
	parent := make([]int, len(keys))
	for i := range parent {
		parent[i] = i
	}
	var root func(i int) int
	root = func(i int) int {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	for i, a := range keys {
		for j := i + 1; j < len(keys) && keys[j][1]-a[1] <= MergePx; j++ {
			if b := keys[j]; abs(b[0]-a[0]) <= MergePx {
				parent[root(j)] = root(i)
			}
		}
	}
	groups := map[int]*still{}
	var order []int
	for i, k := range keys {
		r := root(i)
		g := groups[r]
		if g == nil {
			g = &still{}
			groups[r] = g
			order = append(order, r)
		}
		c := cells[k]
		g.points += c.points
		g.sx += c.sx
		g.sy += c.sy
		g.sxx += c.sxx
		g.syy += c.syy
		g.yUM += c.yUM
		if c.fastestAbsUMPerS > g.fastestAbsUMPerS {
			g.fastestAbsUMPerS, g.fluidUMPerS = c.fastestAbsUMPerS, c.fluidUMPerS
		}
	}
	out := make([]Spot, 0, len(order))
	for _, r := range order {
		g := groups[r]
		if g.points < MinPiecePoints {
			continue // too little evidence in one place
		}
		n := float64(g.points)
		x, y := g.sx/n, g.sy/n
		varPx := math.Max(0, g.sxx/n-x*x) + math.Max(0, g.syy/n-y*y)
		out = append(out, Spot{XPx: x, YPx: y, YUM: g.yUM / n, RadiusPx: math.Max(minRadiusPx, radiusSigmas*math.Sqrt(varPx/2)),
			StillPoints: g.points, FluidUMPerS: g.fluidUMPerS, Always: float64(g.points) >= WindowShare*steadyFrames})
	}
	return out
}

func abs(a int) int {
	if a < 0 {
		return -a
	}
	return a
}

// index fills the cell map Source looks detections up in.
func (s *Spots) index() {
	s.cell = map[[2]int]int32{}
	for i, sp := range s.Spots {
		r := int(math.Ceil(sp.RadiusPx))
		for cy := int(math.Floor(sp.YPx)) - r; cy <= int(math.Floor(sp.YPx))+r; cy++ {
			for cx := int(math.Floor(sp.XPx)) - r; cx <= int(math.Floor(sp.XPx))+r; cx++ {
				if _, ok := s.cell[[2]int{cx, cy}]; !ok {
					s.cell[[2]int{cx, cy}] = int32(i)
				}
			}
		}
	}
}

// owner returns whether the detection p lies within the radius of a spot
// that is left out at its time.
func (s *Spots) owner(p *tracks.Point) bool {
	i, ok := s.cell[[2]int{int(math.Floor(p.XPx)), int(math.Floor(p.YPx))}]
	if !ok {
		return false
	}
	inShear := false
	for _, ph := range s.shear {
		if p.TS >= ph.StartS && p.TS <= ph.EndS {
			inShear = true
			break
		}
	}
	covers := func(sp *Spot) bool {
		return (sp.Always || inShear) && math.Hypot(p.XPx-sp.XPx, p.YPx-sp.YPx) <= sp.RadiusPx
	}
	if covers(&s.Spots[i]) {
		return true
	}
	// Another spot's disc may cover the cell too.
	for j := range s.Spots {
		if int32(j) != i && covers(&s.Spots[j]) {
			return true
		}
	}
	return false
}

// Len returns the number of still spots.
func (s *Spots) Len() int {
	if s == nil {
		return 0
	}
	return len(s.Spots)
}

// Warning returns the summary's line on the spots left out, "" when there
// are none.
func (s *Spots) Warning() string {
	if s.Len() == 0 {
		return ""
	}
	return fmt.Sprintf("%d static spots left out of the profile analysis: detections that stayed still through a shear phase "+
		"while the fluid at their height moved (dust or scratches on the window, or codec blotches); tracks.csv keeps them", s.Len())
}

// Source returns src without the detections within the spots' radii: at
// any time for a spot of the window (Spot.Always), within the shear phases
// for the others. A
// track that passes through a spot is split there: the part after the k-th
// cut takes the id id + k*(largest id + 1), so ids stay unique and the
// same on every pass. Unlinked detections inside a spot are left out too.
func (s *Spots) Source(src tracks.Source) tracks.Source {
	if s.Len() == 0 {
		return src
	}
	return &filtered{s: s, src: src}
}

type filtered struct {
	s   *Spots
	src tracks.Source
}

// Each implements tracks.Source.
func (f *filtered) Each(fn func([]tracks.Point) error) error {
	var buf []tracks.Point
	stride := f.s.maxID + 1
	return f.src.Each(func(t []tracks.Point) error {
		drop := -1
		for i := range t {
			if f.s.owner(&t[i]) {
				drop = i
				break
			}
		}
		if drop < 0 {
			return fn(t)
		}
		if t[0].Track == tracks.Unlinked {
			return nil
		}
		buf = append(buf[:0], t[:drop]...)
		k := 0
		emit := func() error {
			if len(buf) == 0 {
				return nil
			}
			err := fn(buf)
			buf = buf[:0]
			k++
			return err
		}
		for _, p := range t[drop:] {
			if f.s.owner(&p) {
				if err := emit(); err != nil {
					return err
				}
				continue
			}
			if len(buf) == 0 && k > 0 {
				p.Track += k * stride
			} else if len(buf) > 0 {
				p.Track = buf[0].Track
			}
			buf = append(buf, p)
		}
		return emit()
	})
}
