// Package link joins tracer detections, frame by frame, into trajectories.
//
// Each frame's detections are matched to the active tracks by a global
// assignment that minimizes the summed squared distance to each track's
// predicted position, normalized by its search radius. The assignment is
// solved by the Hungarian method on the independent sub-problems: the
// connected components of the graph of candidate pairs, found with a grid of
// cells no smaller than the search radius, so time and memory stay linear in
// the number of detections. A track's prediction comes from its own recent
// motion and, until it has some, from a flow prior (package flowprior), the
// displacement per frame at its height in the gap, so the search region
// follows the flow: large displacements near the moving wall link as reliably
// as small ones near the stationary wall. A track that misses a few frames
// (GapFrames) is carried forward on its prediction and may pick up again.
// Common-mode motion of the image (jitter, drift), when given per frame, is
// removed before linking and from the gap coordinates of the output.
//
// A camera whose frame rate varies (phones, webcams, skipped frames) is
// linked on its true frame times (Options.FrameTimesS): motion estimates and
// the flow prior are kept per nominal frame interval, 1/FPS, and every
// prediction is scaled by the actual interval to the frame it predicts.
package link

import (
	"errors"
	"fmt"
	"gaptrace/track/internal/grid"
	"math"
	"slices"
	"sort"

	"gaptrace/calib"
	"gaptrace/track/flowprior"
	"gaptrace/track/tracks"
)

// Detection is one detected tracer in a frame.
type Detection struct {
	XPx, YPx   float64 // image position, px
	Brightness float64 // integrated, background-subtracted grey levels
	SizePx     float64 // radius of gyration, px
}

// Options sets the linker.
type Options struct {
	// FPS is the frame rate, 1/s; a point's time is its frame / FPS
	// unless FrameTimesS gives it. With FrameTimesS it is the nominal rate:
	// the unit of the motion estimates and of the prior is 1/FPS.
	FPS float64
	// FrameTimesS[f], when not nil, is the time of frame f, s, for a
	// camera whose frame intervals vary: strictly increasing and finite.
	// Points get it as their time, and a prediction from frame f to g is
	// scaled by (FrameTimesS[g] - FrameTimesS[f]) x FPS nominal intervals.
	// Frames past its end follow its last frame at 1/FPS.
	FrameTimesS []float64
	// MaxStepPx is the largest displacement of a tracer between consecutive
	// frames, px, after common-mode motion is removed. It is also the search
	// radius of a tracer with no motion estimate (no prior, one point).
	MaxStepPx float64
	// SearchPx is the radius of the search region around a prediction, px,
	// for one frame; it widens by GapGrowth per missed frame. Zero means
	// SearchFraction of the median nearest-neighbour distance of the first
	// frame with enough detections, capped at MaxStepPx.
	SearchPx float64
	// GapFrames is the largest number of consecutive frames a track may miss
	// and continue. Zero means no gap closing.
	GapFrames int
	// MinPoints is the fewest points a track needs to be kept; the points
	// of shorter ones are output as tracks.Unlinked. Zero means 2.
	MinPoints int
	// Prior predicts the displacement of tracers without their own motion
	// estimate. Nil means none (Link builds one).
	Prior flowprior.Field
	// CommonMode[f] is the offset of frame f's image relative to frame 0,
	// px; it is subtracted before linking. Frames past its end use zero.
	CommonMode []flowprior.Shift
	// MeasureCommonMode makes Link measure the common-mode motion from the
	// tracks of its first pass (flowprior.CommonModeFromTracks), keep its
	// part across the flow and the part along the flow faster than
	// JitterWindowFrames, and add it to CommonMode for the final pass when
	// its RMS exceeds JitterMinRMSPx. The Linker ignores it.
	MeasureCommonMode bool
	// FlowChangesS are the times, s from the first frame, at which the
	// imposed flow changes (the starts and stops of shear, from the
	// motion program or the rheometer log): the common-mode fit's pieces
	// of track do not span them (flowprior.CommonModeFromTracksCut).
	FlowChangesS []float64
	// ReferenceFrames, when positive, refers the common mode measured
	// (MeasureCommonMode) to the median shift of frames 0 to
	// ReferenceFrames-1 instead of to frame 0: the frames whose median
	// image the calibration found the wall lines on, whose edges lie where
	// the camera was at the median of their shifts. Referred to frame 0,
	// every corrected position carries frame 0's shake against the walls
	// (on the coverage sweep's renders with 0.2 and 0.5 px of jitter, band
	// boundaries 0.25 to 0.5 px off; issue 12).
	ReferenceFrames int
}

// Tunings of the linker.
const (
	// DefaultGapFrames bridges a tracer that blinks or leaves focus for up
	// to three frames: longer gaps are more often a different tracer
	// arriving at the predicted place (common practice).
	DefaultGapFrames = 3
	// SearchFraction sets the default search radius to this fraction of
	// the median nearest-neighbour distance: below one half, the search
	// discs of two neighbours rarely overlap, and the radius is still many
	// times the localization noise of well-imaged tracers (common
	// practice).
	SearchFraction = 0.4
	// GapGrowth widens the search radius by this fraction of SearchPx per
	// missed frame: the prediction error grows with the time extrapolated.
	GapGrowth = 0.5
	// GapPenalty is added to the normalized cost (d/r)^2 per missed frame,
	// so that of two otherwise equal candidates the track with the shorter
	// gap wins.
	GapPenalty = 0.2
	// AltPenalty is added to the cost of a track continuing not as its own
	// motion predicts but as the flow prior or a standstill does (the start
	// or stop of shear): such a link must fit well to beat a new track.
	AltPenalty = 0.3
	// altApart is how far, in search radii, an alternative prediction must
	// lie from the track's own to be searched separately.
	altApart = 0.5
	// PriorWeightSteps weighs the flow prior against a track's own motion
	// as if the prior were this many measured steps.
	PriorWeightSteps = 2
	// velocityWindow is the number of recent points a track's own velocity
	// is taken over: enough to average the localization noise, few enough
	// to follow a change of shear rate.
	velocityWindow = 5
	// minSpacingSample is the fewest detections in a frame for its
	// nearest-neighbour distance to set the default search radius.
	minSpacingSample = 10
)

// Stats counts what a linker did.
type Stats struct {
	Detections int     // detections added
	Links      int     // links between consecutive frames
	GapLinks   int     // links across one or more missed frames
	Tracks     int     // tracks kept (MinPoints or more)
	Unlinked   int     // detections in no kept track
	Conflicts  int     // sub-problems with more than one candidate pair, solved by assignment
	Largest    int     // most candidate pairs in one sub-problem
	SearchPx   float64 // search radius used, px
	// CommonMode is the per-frame image offset removed, px (Link's final
	// pass; nil when none).
	CommonMode []flowprior.Shift
	// SlowDriftPx is the RMS of the common-mode motion along the flow that
	// Link measured but left in, px: the part slower than
	// JitterWindowFrames, which tracks alone cannot tell from a uniform
	// motion of the sample (a camera's sway, or slip). Zero when not
	// measured (MeasureCommonMode off, or a steady camera).
	SlowDriftPx float64
}

// track is an active trajectory.
type track struct {
	pts  []tracks.Point
	hx   [velocityWindow]float64 // recent corrected positions, px (ring)
	hy   [velocityWindow]float64
	hf   [velocityWindow]int
	nh   int // points in the ring
	last int // frame of the last point
	// spilled counts the track's first points moved out of pts to a
	// spill file (LinkStream), which pieces locate there.
	spilled int
	pieces  []piece
}

// size is the number of points of the track, spilled ones included.
func (t *track) size() int { return t.spilled + len(t.pts) }

// push records the corrected position of the point just appended to pts.
func (t *track) push(frame int, x, y float64) {
	i := (t.size() - 1) % velocityWindow
	t.hx[i], t.hy[i], t.hf[i] = x, y, frame
	if t.nh < velocityWindow {
		t.nh++
	}
	t.last = frame
}

// newest and oldest return the ring's newest and oldest entries.
func (t *track) newest() int { return (t.size() - 1) % velocityWindow }
func (t *track) oldest() int {
	if t.nh < velocityWindow {
		return 0
	}
	return t.size() % velocityWindow
}

// edge is a candidate pair of a track and a detection, with its cost
// relative to leaving both unpaired (negative: pairing is better).
type edge struct {
	t, d int32
	cost float64
}

// Linker links frames as they are added; memory is bounded by the active
// tracks plus the points of finished tracks not yet taken by Flush.
type Linker struct {
	cal      *calib.Calibration
	toGap    func(xPx, yPx float64) (xUM, yUM float64) // cal.ToGap
	opt      Options
	searchPx float64
	active   []*track
	done     []tracks.Point
	lastF    int
	started  bool
	stats    Stats

	// Buffers reused from frame to frame.
	block   []tracks.Point // unused room for new tracks' points
	p       []pos
	curDets []Detection
	g       grid.Grid
	edges   []edge
	parent  []int32
	comp    []int32
	order   []int32
	cursor  []int32
	dTaken  []bool
	asg     assigner
	cost    []float64
	lt, ld  []int32

	// spill, when not nil, holds the older points of long tracks
	// (LinkStream).
	spill *spillFile
}

// NewLinker checks opt and returns a Linker for frames mapped by cal.
func NewLinker(cal *calib.Calibration, opt Options) (*Linker, error) {
	if cal == nil {
		return nil, errors.New("link: no calibration")
	}
	if err := cal.Check(); err != nil {
		return nil, fmt.Errorf("link: %w", err)
	}
	switch {
	case !(opt.FPS > 0) || math.IsInf(opt.FPS, 0):
		return nil, fmt.Errorf("link: FPS must be positive, got %g", opt.FPS)
	case !(opt.MaxStepPx > 0) || math.IsInf(opt.MaxStepPx, 0):
		return nil, fmt.Errorf("link: MaxStepPx must be positive, got %g px", opt.MaxStepPx)
	case opt.SearchPx < 0 || math.IsNaN(opt.SearchPx) || math.IsInf(opt.SearchPx, 0):
		return nil, fmt.Errorf("link: SearchPx must be positive or zero, got %g px", opt.SearchPx)
	case opt.GapFrames < 0:
		return nil, fmt.Errorf("link: GapFrames must not be negative, got %d", opt.GapFrames)
	case opt.MinPoints < 0:
		return nil, fmt.Errorf("link: MinPoints must not be negative, got %d", opt.MinPoints)
	}
	if err := checkTimes(opt.FrameTimesS); err != nil {
		return nil, err
	}
	if opt.MinPoints == 0 {
		opt.MinPoints = 2
	}
	l := &Linker{cal: cal, toGap: cal.GapMapper(), opt: opt, searchPx: math.Min(opt.SearchPx, opt.MaxStepPx)}
	return l, nil
}

// checkTimes reports frame times that do not increase or are not numbers.
func checkTimes(ts []float64) error {
	for f, t := range ts {
		if math.IsNaN(t) || math.IsInf(t, 0) {
			return fmt.Errorf("link: frame %d's time %g s is not a number", f, t)
		}
		if f > 0 && !(t > ts[f-1]) {
			return fmt.Errorf("link: frame %d's time %g s does not follow frame %d's (%g s)", f, t, f-1, ts[f-1])
		}
	}
	return nil
}

// timeS is the time of frame, s: FrameTimesS, else frame / FPS.
func (l *Linker) timeS(frame int) float64 { return frameTimeS(l.opt, frame) }

// clock is the time of frame in nominal frame intervals (frame itself at a
// steady rate): the unit in which predictions are made.
func (l *Linker) clock(frame int) float64 {
	if l.opt.FrameTimesS == nil {
		return float64(frame)
	}
	return frameTimeS(l.opt, frame) * l.opt.FPS
}

// frameTimeS is the time of frame, s, under opt.
func frameTimeS(opt Options, frame int) float64 {
	ts := opt.FrameTimesS
	if n := len(ts); n > 0 && frame >= 0 {
		if frame < n {
			return ts[frame]
		}
		return ts[n-1] + float64(frame-n+1)/opt.FPS
	}
	return float64(frame) / opt.FPS
}

// Add links the detections of frame to the active tracks. Frames must come
// in increasing order; missing frames count as frames without detections.
func (l *Linker) Add(frame int, dets []Detection) error {
	if l.started && frame <= l.lastF {
		return fmt.Errorf("link: frame %d added after frame %d", frame, l.lastF)
	}
	if frame < 0 {
		return fmt.Errorf("link: negative frame %d", frame)
	}
	for _, d := range dets {
		if math.IsNaN(d.XPx) || math.IsNaN(d.YPx) || math.IsInf(d.XPx, 0) || math.IsInf(d.YPx, 0) {
			return fmt.Errorf("link: frame %d: detection at (%g, %g) px is not a position", frame, d.XPx, d.YPx)
		}
	}
	l.started, l.lastF = true, frame
	l.stats.Detections += len(dets)

	// Tracks that can no longer be continued end here.
	l.retire(frame)

	var sh flowprior.Shift
	if frame < len(l.opt.CommonMode) {
		sh = l.opt.CommonMode[frame]
	}
	l.p = l.p[:0]
	for _, d := range dets {
		l.p = append(l.p, pos{d.XPx - sh.DXPx, d.YPx - sh.DYPx})
	}
	if l.searchPx == 0 && len(l.p) >= minSpacingSample {
		l.searchPx = math.Min(SearchFraction*medianNN(l.p, &l.g), l.opt.MaxStepPx)
	}
	l.stats.SearchPx = l.searchPx

	l.curDets = dets
	l.candidates(frame)
	l.resolve()

	// Apply: continued tracks, then new tracks from the remaining detections.
	for i, d := range dets {
		if l.dTaken[i] {
			continue
		}
		t := &track{pts: l.newPoints()}
		l.append(t, frame, d, l.p[i])
		l.active = append(l.active, t)
	}
	l.curDets = nil
	return nil
}

// Point storage of new tracks: each starts with room for trackStartPoints
// points cut from a shared block of blockTracks tracks' worth, so that most
// tracks never grow their slice (a track lasts tens to hundreds of frames).
const (
	trackStartPoints = 16
	blockTracks      = 64
)

// newPoints returns an empty point slice with room for trackStartPoints.
func (l *Linker) newPoints() []tracks.Point {
	if len(l.block) < trackStartPoints {
		l.block = make([]tracks.Point, trackStartPoints*blockTracks)
	}
	p := l.block[:0:trackStartPoints]
	l.block = l.block[trackStartPoints:]
	return p
}

// retire ends the tracks that cannot be continued at frame or later.
func (l *Linker) retire(frame int) {
	keep := l.active[:0]
	for _, t := range l.active {
		if frame-t.last > l.opt.GapFrames+1 {
			l.finish(t)
			continue
		}
		keep = append(keep, t)
	}
	clear(l.active[len(keep):])
	l.active = keep
}

// append adds a detection to a track.
func (l *Linker) append(t *track, frame int, d Detection, p pos) {
	xUM, yUM := l.toGap(p.XPx, p.YPx)
	t.pts = append(t.pts, tracks.Point{Track: tracks.Unlinked, Frame: frame, TS: l.timeS(frame),
		XPx: d.XPx, YPx: d.YPx, XUM: xUM, YUM: yUM, Brightness: d.Brightness, SizePx: d.SizePx})
	t.push(frame, p.XPx, p.YPx)
}

// finish moves a track's points to the output.
func (l *Linker) finish(t *track) {
	id := tracks.Unlinked
	if t.size() >= l.opt.MinPoints {
		id = l.stats.Tracks
		l.stats.Tracks++
	} else {
		l.stats.Unlinked += t.size()
	}
	if t.spilled > 0 {
		l.unspill(t, id) // the points spilled come back first
	}
	for i := range t.pts {
		t.pts[i].Track = id
	}
	l.done = append(l.done, t.pts...)
}

// predict returns a track's expected displacement per nominal frame
// interval and whether it has any motion estimate, and, for a track with its
// own motion, the flow prior's displacement at its height (pok false when
// none or not needed).
func (l *Linker) predict(t *track) (vx, vy float64, ok bool, px, py float64, pok bool) {
	n := t.newest()
	if l.opt.Prior != nil {
		_, yUM := l.toGap(t.hx[n], t.hy[n])
		px, py, pok = l.opt.Prior.Step(t.last, yUM)
	}
	if t.nh < 2 {
		return px, py, pok, 0, 0, false
	}
	o := t.oldest()
	steps := l.clock(t.hf[n]) - l.clock(t.hf[o])
	ox, oy := (t.hx[n]-t.hx[o])/steps, (t.hy[n]-t.hy[o])/steps
	if !pok {
		return ox, oy, true, 0, 0, false
	}
	w := steps / (steps + PriorWeightSteps)
	return w*ox + (1-w)*px, w*oy + (1-w)*py, true, px, py, true
}

// candidates lists the candidate pairs of active tracks and the frame's
// detections.
func (l *Linker) candidates(frame int) {
	l.edges = l.edges[:0]
	if len(l.p) == 0 || len(l.active) == 0 {
		return
	}
	cell := l.searchPx
	if cell == 0 {
		cell = l.opt.MaxStepPx
	}
	l.g.Build(len(l.p), l.posAt, cell)
	now := l.clock(frame)
	for ti, t := range l.active {
		// k frames ahead (k-1 missed), dk nominal intervals ahead; the
		// search widens with whichever is longer.
		k := frame - t.last
		dk := now - l.clock(t.last)
		wide := math.Max(float64(k), dk)
		vx, vy, ok, px, py, pok := l.predict(t)
		n := t.newest()
		lx, ly := t.hx[n], t.hy[n]
		var r float64
		if ok && l.searchPx > 0 {
			r = l.searchPx * (1 + GapGrowth*(wide-1))
		} else {
			r = l.opt.MaxStepPx * wide
		}
		first := len(l.edges)
		penalty := GapPenalty * float64(k-1)
		l.near(ti, lx, ly, vx, vy, dk, wide, r, penalty, first)
		if !ok || l.searchPx == 0 || t.nh < 2 {
			continue
		}
		// A track with its own motion may also continue as the flow or
		// the sample stops or starts: around the prior's and the
		// motionless prediction, at a price.
		for _, alt := range [2][3]float64{{px, py, b2f(pok)}, {0, 0, 1}} {
			if ax, ay := alt[0]-vx, alt[1]-vy; alt[2] == 0 || (ax*ax+ay*ay)*dk*dk < r*r*altApart*altApart {
				continue
			}
			l.near(ti, lx, ly, alt[0], alt[1], dk, wide, r, penalty+AltPenalty, first)
		}
	}
}

// near adds the candidate pairs of track ti, last at (lx, ly), with the
// detections within r of its position predicted dk nominal frame intervals
// ahead at (vx, vy) per interval, at cost (d/r)^2 + extra, and no farther
// than wide times MaxStepPx from (lx, ly). Pairs already listed from index
// first on keep their cheaper cost.
func (l *Linker) near(ti int, lx, ly, vx, vy, dk, wide, r, extra float64, first int) {
	maxStep := l.opt.MaxStepPx * wide
	qx, qy := lx+vx*dk, ly+vy*dk
	r2 := r * r
	l.g.Near(qx, qy, r, func(j int) {
		p := l.p[j]
		if dx, dy := p.XPx-lx, p.YPx-ly; dx*dx+dy*dy > maxStep*maxStep {
			return
		}
		dx, dy := p.XPx-qx, p.YPx-qy
		c := (dx*dx+dy*dy)/r2 + extra - 1
		if c >= 0 {
			return
		}
		for e := first; e < len(l.edges); e++ {
			if l.edges[e].d == int32(j) {
				l.edges[e].cost = math.Min(l.edges[e].cost, c)
				return
			}
		}
		l.edges = append(l.edges, edge{int32(ti), int32(j), c})
	})
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// resolve picks the pairs of a minimum-cost assignment on each connected
// component of the candidate graph and appends the detections to their
// tracks, marking them in dTaken.
func (l *Linker) resolve() {
	nt, nd := len(l.active), len(l.p)
	l.dTaken = slices.Grow(l.dTaken[:0], nd)[:nd]
	clear(l.dTaken)
	if len(l.edges) == 0 {
		return
	}
	// Union-find over tracks (0..nt-1) and detections (nt..nt+nd-1).
	l.parent = slices.Grow(l.parent[:0], nt+nd)[:nt+nd]
	for i := range l.parent {
		l.parent[i] = int32(i)
	}
	find := func(i int32) int32 {
		for l.parent[i] != i {
			l.parent[i] = l.parent[l.parent[i]]
			i = l.parent[i]
		}
		return i
	}
	for _, e := range l.edges {
		a, b := find(e.t), find(int32(nt)+e.d)
		if a != b {
			l.parent[a] = b
		}
	}
	// Order edges by component (counting sort on the root).
	l.comp = slices.Grow(l.comp[:0], nt+nd+1)[:nt+nd+1]
	clear(l.comp)
	for _, e := range l.edges {
		l.comp[find(e.t)+1]++
	}
	for i := 1; i < len(l.comp); i++ {
		l.comp[i] += l.comp[i-1]
	}
	l.order = slices.Grow(l.order[:0], len(l.edges))[:len(l.edges)]
	l.cursor = append(l.cursor[:0], l.comp...)
	cursor := l.cursor
	for i, e := range l.edges {
		r := find(e.t)
		l.order[cursor[r]] = int32(i)
		cursor[r]++
	}
	for r := 0; r+1 < len(l.comp); r++ {
		es := l.order[l.comp[r]:l.comp[r+1]]
		switch len(es) {
		case 0:
			continue
		case 1:
			e := l.edges[es[0]]
			l.take(int(e.t), int(e.d))
			continue
		}
		l.stats.Conflicts++
		l.stats.Largest = max(l.stats.Largest, len(es))
		l.solve(es)
	}
}

// solve assigns one connected component given by its edges.
func (l *Linker) solve(es []int32) {
	// Local indices for the component's tracks and detections.
	l.lt, l.ld = l.lt[:0], l.ld[:0]
	tIdx := make(map[int32]int, 8)
	dIdx := make(map[int32]int, 8)
	for _, ei := range es {
		e := l.edges[ei]
		if _, ok := tIdx[e.t]; !ok {
			tIdx[e.t] = len(l.lt)
			l.lt = append(l.lt, e.t)
		}
		if _, ok := dIdx[e.d]; !ok {
			dIdx[e.d] = len(l.ld)
			l.ld = append(l.ld, e.d)
		}
	}
	n, m := len(l.lt), len(l.ld)
	rowsAreTracks := n <= m
	if !rowsAreTracks {
		n, m = m, n
	}
	l.cost = slices.Grow(l.cost[:0], n*m)[:n*m]
	clear(l.cost)
	for _, ei := range es {
		e := l.edges[ei]
		i, j := tIdx[e.t], dIdx[e.d]
		if !rowsAreTracks {
			i, j = j, i
		}
		l.cost[i*m+j] = e.cost
	}
	col := l.asg.solve(l.cost, n, m)
	for i := 0; i < n; i++ {
		j := col[i]
		if l.cost[i*m+j] >= 0 {
			continue // matched to a forbidden pair: both stay unpaired
		}
		if rowsAreTracks {
			l.take(int(l.lt[i]), int(l.ld[j]))
		} else {
			l.take(int(l.lt[j]), int(l.ld[i]))
		}
	}
}

// take pairs track ti with detection di of the current frame.
func (l *Linker) take(ti, di int) {
	t := l.active[ti]
	if t.last == l.lastF {
		panic("link: track paired twice in one frame") // the assignment guarantees otherwise
	}
	if l.lastF-t.last > 1 {
		l.stats.GapLinks++
	} else {
		l.stats.Links++
	}
	l.dTaken[di] = true
	l.append(t, l.lastF, l.curDets[di], l.p[di])
}

// Flush returns the points of the tracks finished so far, grouped by track
// and in frame order within each, and forgets them. Track ids increase in
// the order tracks finish.
func (l *Linker) Flush() []tracks.Point {
	out := l.done
	l.done = nil
	return out
}

// Close ends all active tracks and returns the remaining points and the
// statistics. The Linker must not be used afterwards.
func (l *Linker) Close() ([]tracks.Point, Stats) {
	for _, t := range l.active {
		l.finish(t)
	}
	l.active = nil
	return l.Flush(), l.stats
}

// steps calls fn for every link the last Add made between consecutive
// frames: the track's point in the frame before and its new point (whose
// Track is still Unlinked: ids are given as tracks finish).
func (l *Linker) steps(fn func(a, b *tracks.Point)) {
	for _, t := range l.active {
		n := len(t.pts)
		if t.last == l.lastF && n >= 2 && t.pts[n-2].Frame == l.lastF-1 {
			fn(&t.pts[n-2], &t.pts[n-1])
		}
	}
}

// posAt returns the i-th position of the frame being linked, px.
func (l *Linker) posAt(i int) (xPx, yPx float64) { return l.p[i].XPx, l.p[i].YPx }

// medianNN returns the median distance from each point to its nearest
// neighbour.
func medianNN(p []pos, g *grid.Grid) float64 {
	x0, y0, x1, y1 := math.Inf(1), math.Inf(1), math.Inf(-1), math.Inf(-1)
	for _, q := range p {
		x0, y0 = math.Min(x0, q.XPx), math.Min(y0, q.YPx)
		x1, y1 = math.Max(x1, q.XPx), math.Max(y1, q.YPx)
	}
	spacing := math.Sqrt(math.Max((x1-x0)*(y1-y0), 1) / float64(len(p)))
	g.Build(len(p), func(i int) (float64, float64) { return p[i].XPx, p[i].YPx }, spacing)
	d := make([]float64, 0, len(p))
	for i, q := range p {
		best := math.Inf(1)
		for r := spacing; math.IsInf(best, 1) && r < 64*spacing; r *= 2 {
			g.Near(q.XPx, q.YPx, r, func(j int) {
				if j != i {
					best = math.Min(best, math.Hypot(p[j].XPx-q.XPx, p[j].YPx-q.YPx))
				}
			})
		}
		if !math.IsInf(best, 1) {
			d = append(d, best)
		}
	}
	sort.Float64s(d)
	return d[len(d)/2]
}
