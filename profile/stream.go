package profile

import (
	"cmp"
	"container/heap"
	"context"
	"math"
	"slices"

	"gaptrace/profile/cessation"
	"gaptrace/profile/layers"
	"gaptrace/profile/velocity"
	"gaptrace/track/tracks"
)

// Analyze reads its tracks in passes over the Source and keeps, in each,
// only what is bounded by the tracers in view, the layers and the windows,
// never by the number of frames (issue 13):
//
//   - the recording-wide statistics (frame interval, localization noise,
//     the lag's reach across the gap) come from a reservoir of at most
//     StatTracks tracks, each thinned evenly to StatPerTrack values;
//   - each layer of a window keeps the samples of the tracks of smallest
//     hash, each thinned evenly in time to PerTrack samples, up to
//     ProfileLayerSamples; the map's windows share MapBudget samples and
//     the time-resolved ones TimeBudget (layerBudget);
//   - the time after the stop keeps every frame up to AfterDenseFrames,
//     then a grid of AfterGridFrames frames and FinalGridFrames in the
//     final part, the frames of the log-spaced profiles and the ends of
//     every track (for joining broken tracks); the rest before the shear
//     keeps RestDenseFrames, then a grid of RestGridFrames.
//
// Reservoirs take the tracks with the smallest hash of their id (seeded,
// fixed), so what is kept, and so every number, does not depend on the
// order in which the Source hands out the tracks; what is kept is sorted
// by track before use.
const (
	// StatTracks tracks of StatPerTrack values each give the median frame
	// interval from 32 768 intervals (velocity.IntervalPairs, 10 000, are
	// enough) and the noise's MAD from 65 536 second differences, good to
	// about 0.4 % (the MAD's relative standard error, about 1.17/sqrt(n)
	// for normal data; Rousseeuw & Croux 1993, J. Am. Stat. Assoc.
	// 88:1273, from memory); the lag's reach across the gap comes from the
	// same number of tracks.
	StatTracks   = 1024
	StatPerTrack = 32
	// PerTrack samples at most of one track in one layer of a window,
	// evenly spaced in time. The samples of one track at consecutive
	// starts share no point, so that they are nearly independent in their
	// localization noise and thinning them costs precision: on the demo
	// scenario a cap of 64 raised the bulk rate's statistical error by
	// 36 %, one of 128 left it unchanged.
	PerTrack = 128
	// ProfileLayerSamples samples at most per layer of a profile window
	// (a whole shear phase, its steady part, a user's window): 256 tracks
	// of PerTrack samples, 0.8 MB per layer.
	ProfileLayerSamples = 256 * PerTrack
	// The windows of the space-time map share MapBudget samples (10 MB:
	// 256 per layer of the 40 default windows of 40 layers), and the
	// time-resolved windows TimeBudget (96 MB), among their layers; a
	// layer holds at least MinLayerSamples. Their errors only weight a fit
	// or test a departure at 3 standard errors, and the bootstrap errors
	// of a thinned window stay those of what it kept.
	MapBudget       = DefaultMapWindows * layers.DefaultBins * 256
	TimeBudget      = 1 << 22
	MinLayerSamples = 16 * layers.DefaultMinGroups
	// After the stop: every frame for AfterDenseFrames frames (4 s at 100
	// frames/s: where the onset of a motion, the shared displacement and
	// the first profiles are measured frame by frame), then grids.
	AfterDenseFrames = 400
	AfterGridFrames  = 200
	FinalGridFrames  = 100
	RestDenseFrames  = 200
	RestGridFrames   = 200
)

// layerBudget returns the samples each layer of n windows of bins layers
// keeps from a budget of total samples.
func layerBudget(total, n, bins int) int {
	return max(MinLayerSamples, total/(max(1, n)*bins))
}

// hashSalt seeds the reservoirs' hash of track ids.
const hashSalt = 0x70726f66696c6573

// trackHash is the key of track id in the reservoirs (splitmix64).
func trackHash(id int) uint64 {
	z := uint64(id) ^ hashSalt
	z += 0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// thin returns at most n of s, evenly spaced (the first and the last
// kept), in place.
func thin[T any](s []T, n int) []T {
	m := len(s)
	if m <= n {
		return s
	}
	if n == 1 {
		return s[:1]
	}
	for i := range n {
		s[i] = s[int(math.Round(float64(i)*float64(m-1)/float64(n-1)))]
	}
	return s[:n]
}

// entry is one track's part of a reservoir.
type entry[T any] struct {
	key uint64
	id  int
	v   T
}

// reservoir keeps the k tracks of smallest (hash, id): a max-heap on them.
type reservoir[T any] struct {
	k  int
	es []entry[T]
}

func (r *reservoir[T]) Len() int { return len(r.es) }
func (r *reservoir[T]) Less(i, j int) bool {
	a, b := r.es[i], r.es[j]
	return a.key > b.key || (a.key == b.key && a.id > b.id)
}
func (r *reservoir[T]) Swap(i, j int) { r.es[i], r.es[j] = r.es[j], r.es[i] }
func (r *reservoir[T]) Push(x any)    { r.es = append(r.es, x.(entry[T])) }
func (r *reservoir[T]) Pop() any {
	e := r.es[len(r.es)-1]
	r.es = r.es[:len(r.es)-1]
	return e
}

// wants reports whether the track id would be kept.
func (r *reservoir[T]) wants(id int) bool {
	if len(r.es) < r.k {
		return true
	}
	top, key := r.es[0], trackHash(id)
	return key < top.key || (key == top.key && id < top.id)
}

// offer keeps v for track id if it is among the k smallest.
func (r *reservoir[T]) offer(id int, v T) {
	if !r.wants(id) {
		return
	}
	e := entry[T]{key: trackHash(id), id: id, v: v}
	if len(r.es) < r.k {
		heap.Push(r, e)
		return
	}
	r.es[0] = e
	heap.Fix(r, 0)
}

// byTrack returns the kept values in the order of their tracks (less).
func (r *reservoir[T]) byTrack(less func(a, b int) int) []entry[T] {
	out := slices.Clone(r.es)
	slices.SortFunc(out, func(a, b entry[T]) int { return less(a.id, b.id) })
	return out
}

// pieceIDs numbers the pieces that velocity's Cutter makes of a track
// without knowing the other tracks: piece k of track id is k*stride + id,
// for a stride above every id, so that the numbers do not depend on the
// order of the tracks.
type pieceIDs struct{ stride int }

func (p pieceIDs) of(id, k int) int { return k*p.stride + id }

// order compares two piece ids as Split orders its pieces: by the track
// they come from, then in time.
func (p pieceIDs) order(a, b int) int {
	return cmp.Or(cmp.Compare(a%p.stride, b%p.stride), cmp.Compare(a/p.stride, b/p.stride))
}

// each calls fn for every linked track of src, in frame order, checking
// ctx before each; unlinked points go to loose (when not nil).
func each(ctx context.Context, src tracks.Source, fn func(velocity.Track) error, loose func(tracks.Point)) error {
	if err := ctx.Err(); err != nil {
		return err
	}
	var buf []tracks.Point
	return src.Each(func(t []tracks.Point) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		if len(t) == 0 {
			return nil
		}
		if t[0].Track == tracks.Unlinked {
			if loose != nil {
				for _, p := range t {
					loose(p)
				}
			}
			return nil
		}
		if !slices.IsSortedFunc(t, func(a, b tracks.Point) int { return a.Frame - b.Frame }) {
			buf = append(buf[:0], t...)
			slices.SortFunc(buf, func(a, b tracks.Point) int { return a.Frame - b.Frame })
			t = buf
		}
		return fn(velocity.Track{ID: t[0].Track, Points: t})
	})
}

// recordingStats are the first pass's findings.
type recordingStats struct {
	t0S, t1S      float64
	maxID         int
	tracks        int
	frameInterval reservoir[[]float64]
	secondDiffs   reservoir[[]float64]
	fastestStepUM float64
}

// firstPass reads the time span, the ids, the tracks' frame intervals and
// second differences (a reservoir) and the fastest tracer's step.
func firstPass(ctx context.Context, src tracks.Source) (*recordingStats, error) {
	s := &recordingStats{t0S: math.Inf(1), t1S: math.Inf(-1),
		frameInterval: reservoir[[]float64]{k: StatTracks}, secondDiffs: reservoir[[]float64]{k: StatTracks}}
	span := func(p tracks.Point) { s.t0S, s.t1S = math.Min(s.t0S, p.TS), math.Max(s.t1S, p.TS) }
	var fi, d2 []float64
	err := each(ctx, src, func(t velocity.Track) error {
		span(t.Points[0])
		span(t.Points[len(t.Points)-1])
		s.maxID = max(s.maxID, t.ID)
		s.tracks++
		s.fastestStepUM = math.Max(s.fastestStepUM, velocity.FastestStepUM([]velocity.Track{t}))
		if s.frameInterval.wants(t.ID) {
			fi = thin(velocity.FrameIntervals(fi[:0], t), StatPerTrack)
			d2 = velocity.SecondDifferences(d2[:0], t)
			// Thinned by triple, keeping x and y of each together.
			d2 = thinPairs(d2, StatPerTrack)
			s.frameInterval.offer(t.ID, slices.Clone(fi))
			s.secondDiffs.offer(t.ID, slices.Clone(d2))
		}
		return nil
	}, span)
	return s, err
}

// thinPairs thins the (x, y) pairs of d to at most n pairs, evenly.
func thinPairs(d []float64, n int) []float64 {
	m := len(d) / 2
	if m <= n {
		return d
	}
	for i := range n {
		k := int(math.Round(float64(i) * float64(m-1) / float64(n-1)))
		d[2*i], d[2*i+1] = d[2*k], d[2*k+1]
	}
	return d[:2*n]
}

// intervalAndNoise returns the frame interval, s, and the localization
// noise, um, from the first pass's reservoirs, read in id order as
// velocity.FrameIntervalS and NoiseUM read all tracks.
func (s *recordingStats) intervalAndNoise() (dtS, sigmaUM float64, err error) {
	var d []float64
	for _, e := range s.frameInterval.byTrack(cmp.Compare[int]) {
		if len(d) > velocity.IntervalPairs {
			break
		}
		d = append(d, e.v...)
	}
	if dtS, err = velocity.IntervalOf(d); err != nil {
		return 0, 0, err
	}
	d = d[:0]
	for _, e := range s.secondDiffs.byTrack(cmp.Compare[int]) {
		d = append(d, e.v...)
	}
	sigmaUM, err = velocity.NoiseOf(d)
	return dtS, sigmaUM, err
}

// sample is a velocity sample as a window keeps it.
// Besides its time it keeps its height, velocity and position in 32 bits
// (to 2.4e-4 um, or um/s, at 2000, far below any sample's noise) and
// its lag in frames, the last two for the shift the tracks share
// (velocity.CommonOffsetErr): 24 bytes a sample.
type sample struct {
	tS                 float64
	yUM, vxUMPerS, xUM float32
	lag                int32
}

// windowAcc gathers the samples of one window: per layer, the samples of
// the tracks of smallest hash (each thinned evenly in time), as many as
// the layer's budget allows, and the number of samples seen before
// thinning.
type windowAcc struct {
	w      Window
	gapUM  float64
	layers []layerKeep
	seen   []int       // samples per layer, all of them
	buf    *[][]sample // one track's samples per layer, shared by all windows
	per    int         // samples kept per track and layer
}

// newWindowAcc returns the samples of window w, across a gap of gapUM in
// bins layers, keeping at most limit samples in each layer; buf is the
// scratch space of the windows filled one after the other.
func newWindowAcc(w Window, gapUM float64, bins, limit int, buf *[][]sample) *windowAcc {
	if len(*buf) < bins {
		*buf = make([][]sample, bins)
	}
	a := &windowAcc{w: w, gapUM: gapUM, layers: make([]layerKeep, bins), seen: make([]int, bins), buf: buf,
		per: max(1, min(PerTrack, limit/layers.DefaultMinGroups))}
	for k := range a.layers {
		a.layers[k].limit = limit
	}
	return a
}

// layerKeep keeps the samples of the tracks of smallest (hash, id) whose
// samples together stay within limit: whatever the order in which the
// tracks come, the longest such run of tracks in hash order.
type layerKeep struct {
	r            reservoir[[]sample] // a max-heap; its k is not used
	limit, total int
	cut          bool // a track was let go: those from (cutKey, cutID) on are
	cutKey       uint64
	cutID        int
}

func (l *layerKeep) wants(id int) bool {
	key := trackHash(id)
	return !l.cut || key < l.cutKey || (key == l.cutKey && id < l.cutID)
}

func (l *layerKeep) offer(id int, v []sample) {
	if !l.wants(id) {
		return
	}
	heap.Push(&l.r, entry[[]sample]{key: trackHash(id), id: id, v: v})
	l.total += len(v)
	for l.total > l.limit {
		e := heap.Pop(&l.r).(entry[[]sample])
		l.total -= len(e.v)
		l.cut, l.cutKey, l.cutID = true, e.key, e.id
	}
}

// add offers the samples ss of track id (in time order) whose midpoints
// lie in the window; samples outside the gap, which no layer takes, are
// left out, as layers.Profile leaves them out.
func (a *windowAcc) add(id int, ss []velocity.Sample) {
	w := a.gapUM / float64(len(a.layers))
	buf := (*a.buf)[:len(a.layers)]
	for k := range buf {
		buf[k] = buf[k][:0]
	}
	for _, s := range ss {
		if s.TS < a.w.T0S || s.TS >= a.w.T1S || !(s.YUM >= 0 && s.YUM <= a.gapUM) || math.IsNaN(s.VXUMPerS) {
			continue
		}
		k := min(int(s.YUM/w), len(a.layers)-1)
		a.seen[k]++
		buf[k] = append(buf[k], sample{tS: s.TS, yUM: float32(s.YUM), vxUMPerS: float32(s.VXUMPerS), xUM: float32(s.XUM), lag: int32(s.Lag)})
	}
	for k, b := range buf {
		if len(b) > 0 && a.layers[k].wants(id) {
			a.layers[k].offer(id, slices.Clone(thin(b, a.per)))
		}
	}
}

// samples returns the kept samples, sorted by time and track.
func (a *windowAcc) samples() []velocity.Sample {
	n := 0
	for k := range a.layers {
		n += a.layers[k].total
	}
	out := make([]velocity.Sample, 0, n)
	for k := range a.layers {
		for _, e := range a.layers[k].r.es {
			for _, s := range e.v {
				out = append(out, velocity.Sample{Track: e.id, TS: s.tS, XUM: float64(s.xUM), YUM: float64(s.yUM), VXUMPerS: float64(s.vxUMPerS), Lag: int(s.lag)})
			}
		}
	}
	slices.SortFunc(out, func(a, b velocity.Sample) int {
		return cmp.Or(cmp.Compare(a.TS, b.TS), cmp.Compare(a.Track, b.Track), cmp.Compare(a.YUM, b.YUM))
	})
	return out
}

// perSecond returns the samples per second in each layer, all of them.
func (a *windowAcc) perSecond() []float64 {
	out := make([]float64, len(a.seen))
	for k, n := range a.seen {
		out[k] = float64(n) / (a.w.T1S - a.w.T0S)
	}
	return out
}

// spanWindows returns the range [lo, hi) of ws (consecutive, in time
// order) that overlap [t0S, t1S].
func spanWindows(ws []*windowAcc, t0S, t1S float64) (lo, hi int) {
	lo, _ = slices.BinarySearchFunc(ws, t0S, func(a *windowAcc, t float64) int {
		if a.w.T1S <= t {
			return -1
		}
		return 1
	})
	hi = lo
	for hi < len(ws) && ws[hi].w.T0S <= t1S {
		hi++
	}
	return lo, hi
}

// afterKeep chooses the points of a track that the analysis after the
// stop reads (cessation.Analyze), so that what it keeps is bounded by the
// tracers in view: see AfterDenseFrames.
type afterKeep struct {
	stopS, endS, dtS float64
	restS            [2]float64
	logS             []float64 // the profiles' times after the stop
	midStride        int       // frames between grid frames after the dense part
	finalFromS       float64   // start of the final part
	finalStride      int
	restStride       int
	kept             []velocity.Track
	pointsKept       int
}

func newAfterKeep(stopS, endS, dtS float64, restS [2]float64) *afterKeep {
	k := &afterKeep{stopS: stopS, endS: endS, dtS: dtS, restS: restS,
		logS: cessation.LogTimes(dtS, endS-stopS, cessation.DefaultTimes)}
	k.finalFromS = endS - cessation.FinalFraction*(endS-stopS)
	frames := func(s float64) int { return int(math.Round(s / dtS)) }
	k.midStride = max(1, (frames(k.finalFromS-stopS)-AfterDenseFrames+AfterGridFrames-1)/AfterGridFrames)
	k.finalStride = max(1, (frames(endS-k.finalFromS)+FinalGridFrames-1)/FinalGridFrames)
	k.restStride = max(1, (frames(restS[1]-restS[0])-RestDenseFrames+RestGridFrames-1)/RestGridFrames)
	return k
}

// keeps reports whether the analysis after the stop reads point p.
func (k *afterKeep) keeps(p tracks.Point) bool {
	half := k.dtS / 2
	switch {
	case p.TS >= k.restS[0] && p.TS <= k.restS[1]:
		f := int(math.Round((p.TS - k.restS[0]) / k.dtS))
		if f < RestDenseFrames || (f-RestDenseFrames)%k.restStride == 0 {
			return true
		}
	case p.TS > k.endS+half:
		return false
	}
	if p.TS < k.stopS-cessation.ReachBeforeStopS(k.dtS) {
		return false
	}
	f := int(math.Round((p.TS - k.stopS) / k.dtS))
	switch {
	case f <= AfterDenseFrames:
		return true
	case p.TS >= k.finalFromS:
		g := int(math.Round((p.TS - k.finalFromS) / k.dtS))
		if g%k.finalStride == 0 {
			return true
		}
	case (f-AfterDenseFrames)%k.midStride == 0:
		return true
	}
	i, _ := slices.BinarySearch(k.logS, p.TS-k.stopS-half)
	return i < len(k.logS) && k.logS[i] <= p.TS-k.stopS+half
}

// add keeps the points of piece t that the analysis after the stop reads,
// and the first point and the last cessation.StitchPoints points of its
// part after the stop (the joining of broken tracks reads them): the one
// part of what it keeps that grows with the number of tracks, 480 bytes
// for each track that ends after the stop.
func (k *afterKeep) add(t velocity.Track) {
	p := t.Points
	if p[len(p)-1].TS < k.stopS-cessation.ReachBeforeStopS(k.dtS) && !(p[0].TS <= k.restS[1] && p[len(p)-1].TS >= k.restS[0]) {
		return
	}
	after := 0
	for after < len(p) && p[after].TS <= k.stopS+k.dtS/2 {
		after++
	}
	keep := func(i int) bool {
		return (i >= after && (i == after || len(p)-i <= cessation.StitchPoints)) || k.keeps(p[i])
	}
	n := 0
	for i := range p {
		if keep(i) {
			n++
		}
	}
	out := make([]tracks.Point, 0, n)
	for i := range p {
		if keep(i) {
			out = append(out, p[i])
		}
	}
	if len(out) > 0 {
		k.kept = append(k.kept, velocity.Track{ID: t.ID, Points: out})
		k.pointsKept += len(out)
	}
}

// grouped is a tracks.Slice grouped once into its tracks, in the Slice's
// order, so that the passes over it do not sort it again each time.
type grouped struct {
	pts  []tracks.Point
	ends []int // the end of each track in pts
}

// groupSlice returns src grouped once when it is a tracks.Slice, which is
// in memory anyway, and src itself otherwise.
func groupSlice(src tracks.Source) (tracks.Source, error) {
	s, ok := src.(tracks.Slice)
	if !ok {
		return src, nil
	}
	g := &grouped{pts: make([]tracks.Point, 0, len(s))}
	err := s.Each(func(t []tracks.Point) error {
		g.pts = append(g.pts, t...)
		g.ends = append(g.ends, len(g.pts))
		return nil
	})
	return g, err
}

// Each implements tracks.Source.
func (g *grouped) Each(fn func([]tracks.Point) error) error {
	from := 0
	for _, e := range g.ends {
		if err := fn(g.pts[from:e:e]); err != nil {
			return err
		}
		from = e
	}
	return nil
}
