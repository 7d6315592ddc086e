// Package velocity turns tracer tracks into velocity samples: for each
// track, the displacement over a lag of L frames divided by the elapsed
// time, placed at the midpoint (in time and in gap height) of the step.
//
// The lag follows an explicit rule (see LagRule): long enough that the
// displacement stands well above the localization noise, short enough that
// the tracer stays in its layer of the gap. Positions are in um, times in s,
// velocities in um/s.
package velocity

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"

	"gaptrace/calib/robust"
	"gaptrace/track/tracks"
)

// Track is one tracer's points in frame order.
type Track struct {
	ID     int
	Points []tracks.Point
}

// Group collects the linked points by track id (unlinked points, id -1, are
// dropped) and sorts each track by frame. Tracks come out in id order.
func Group(pts []tracks.Point) []Track {
	by := map[int][]tracks.Point{}
	for _, p := range pts {
		if p.Track == tracks.Unlinked {
			continue
		}
		by[p.Track] = append(by[p.Track], p)
	}
	ids := make([]int, 0, len(by))
	for id := range by {
		ids = append(ids, id)
	}
	slices.Sort(ids)
	out := make([]Track, 0, len(ids))
	for _, id := range ids {
		p := by[id]
		slices.SortFunc(p, func(a, b tracks.Point) int { return a.Frame - b.Frame })
		out = append(out, Track{ID: id, Points: p})
	}
	return out
}

// FrameIntervalS returns the time between consecutive frames in s, the
// median over all consecutive-frame pairs of the tracks. It fails when no
// track holds two consecutive frames.
func FrameIntervalS(ts []Track) (float64, error) {
	var d []float64
	for _, t := range ts {
		d = FrameIntervals(d, t)
		if len(d) > IntervalPairs {
			break
		}
	}
	return IntervalOf(d)
}

// FrameIntervals appends to dst the times, s, between the consecutive
// frames of t.
func FrameIntervals(dst []float64, t Track) []float64 {
	for i := 1; i < len(t.Points); i++ {
		a, b := t.Points[i-1], t.Points[i]
		if b.Frame-a.Frame == 1 {
			dst = append(dst, b.TS-a.TS)
		}
	}
	return dst
}

// IntervalOf returns the frame interval, s, from the intervals d between
// consecutive frames (FrameIntervals of tracks): their median. A caller
// need pass no more than about IntervalPairs.
func IntervalOf(d []float64) (float64, error) {
	if len(d) == 0 {
		return 0, errors.New("velocity: no track holds two consecutive frames, so the frame interval is unknown")
	}
	dt := robust.Median(d)
	if !(dt > 0) {
		return 0, fmt.Errorf("velocity: frame interval %g s is not positive (t_s does not grow with frame)", dt)
	}
	return dt, nil
}

// IntervalPairs frame pairs are enough for a median frame interval.
const IntervalPairs = 10000

// NoiseUM estimates the localization noise, the standard deviation of one
// coordinate of one detection in um, from second differences of positions
// at consecutive frames: for a tracer moving at constant velocity,
// x(f+1) - 2 x(f) + x(f-1) is pure noise with variance 6 sigma^2. A robust
// scale (the median absolute deviation) keeps accelerations at phase changes
// and the odd mislink out. Both coordinates are pooled. It fails when no
// track has three consecutive frames.
func NoiseUM(ts []Track) (float64, error) {
	var d2 []float64
	for _, t := range ts {
		d2 = SecondDifferences(d2, t)
	}
	return NoiseOf(d2)
}

// SecondDifferences appends to dst the second differences, um, of t's
// positions at three consecutive frames, x then y of each triple.
func SecondDifferences(dst []float64, t Track) []float64 {
	p := t.Points
	for i := 2; i < len(p); i++ {
		if p[i].Frame-p[i-1].Frame != 1 || p[i-1].Frame-p[i-2].Frame != 1 {
			continue
		}
		dst = append(dst, p[i].XUM-2*p[i-1].XUM+p[i-2].XUM, p[i].YUM-2*p[i-1].YUM+p[i-2].YUM)
	}
	return dst
}

// NoiseOf returns the localization noise, um, from the second differences
// d2 (SecondDifferences of the tracks in id order), as NoiseUM; it may
// reorder d2.
func NoiseOf(d2 []float64) (float64, error) {
	if len(d2) == 0 {
		return 0, errors.New("velocity: no track has three consecutive frames, so the localization noise is unknown")
	}
	if k := len(d2) / maxNoiseSamples; k > 1 {
		// An even subsample: the scale is then good to about 0.3%.
		n := 0
		for i := 0; i < len(d2); i += k {
			d2[n] = d2[i]
			n++
		}
		d2 = d2[:n]
	}
	_, mad := robust.MAD(d2)
	return robust.MADToSigma * mad / math.Sqrt(6), nil
}

// maxNoiseSamples second differences are enough for the noise's scale.
const maxNoiseSamples = 100000

// LagRule chooses the lag, in frames, over which one velocity sample is
// taken. For a tracer moving at speed |v| with localization noise sigma per
// coordinate, a displacement over L frames of duration dt has noise
// sqrt(2) sigma, so
//
//	L = ceil(SNR * sqrt(2) * sigma / (|v| * dt)),
//
// clamped to [1, MaxLag]. MaxLag is the largest lag over which tracers stay
// in their layer: the rms excursion across the gap, with the noise
// removed, sqrt(<dy^2>(L) - 2 sigma^2), stays below LayerFraction of the
// layer width (see MaxLagInLayer), and no more than CapFrames.
type LagRule struct {
	// SNR is the ratio of displacement to its noise that a sample must reach.
	SNR float64
	// MaxLag is the longest lag in frames (at least 1).
	MaxLag int
}

// DefaultSNR makes one sample's speed good to 1/20 = 5% of itself:
// individual samples are averaged by the hundred per layer, so 5% per
// sample is ample, while a longer lag would cost time resolution (common
// practice).
const DefaultSNR = 20

// LayerFraction is the part of a layer's width that a tracer may wander
// across the gap during one lag: a quarter keeps the sample's midpoint
// height within its layer for all but the widest excursions (common
// practice).
const LayerFraction = 0.25

// CapFrames bounds the lag whatever the motion across the gap: tracks rarely
// last much longer in a side view, and a longer lag blurs changes in time.
const CapFrames = 64

// Lag returns the lag in frames for a tracer at speed vUMPerS, with noise
// sigmaUM per coordinate and frame interval dtS.
func (r LagRule) Lag(vUMPerS, sigmaUM, dtS float64) int {
	maxLag := max(1, r.MaxLag)
	v := math.Abs(vUMPerS)
	if !(v > 0) || sigmaUM <= 0 {
		if sigmaUM <= 0 {
			return 1
		}
		return maxLag
	}
	l := math.Ceil(r.SNR * math.Sqrt2 * sigmaUM / (v * dtS))
	if l > float64(maxLag) {
		return maxLag
	}
	return max(1, int(l))
}

// MaxLagInLayer returns the largest lag L <= CapFrames (and at least 1)
// for which the noise-free rms displacement across the gap,
// sqrt(<dy^2>(L) - 2 sigma^2), stays below LayerFraction * layerUM. Only
// points with tS in [t0S, t1S] are used.
func MaxLagInLayer(ts []Track, sigmaUM, layerUM, t0S, t1S float64) int {
	per := make([]LagSums, 0, len(ts))
	for _, t := range ts {
		per = append(per, LagSumsOf(t, t0S, t1S))
	}
	return MaxLagFrom(per, sigmaUM, layerUM)
}

// LagSums holds one track's squared excursions across the gap at each lag
// L (index L, up to CapFrames): their sum, um^2, and their number.
type LagSums struct {
	Sum [CapFrames + 1]float64
	N   [CapFrames + 1]int
}

// LagSumsOf returns the excursions across the gap of the points of t with
// tS in [t0S, t1S], at lags 2 to CapFrames.
func LagSumsOf(t Track, t0S, t1S float64) LagSums {
	var out LagSums
	p := t.Points
	for l := 2; l <= CapFrames; l++ {
		j := 0
		for i := range p {
			if p[i].TS < t0S || p[i].TS > t1S {
				continue
			}
			for j < len(p) && p[j].Frame < p[i].Frame+l {
				j++
			}
			if j < len(p) && p[j].Frame == p[i].Frame+l && p[j].TS <= t1S {
				dy := p[j].YUM - p[i].YUM
				out.Sum[l] += dy * dy
				out.N[l]++
			}
		}
	}
	return out
}

// MaxLagFrom returns MaxLagInLayer from the tracks' LagSums, in the
// tracks' order: at each lag the first tracks up to maxLagPairs pairs.
func MaxLagFrom(per []LagSums, sigmaUM, layerUM float64) int {
	limit := LayerFraction * layerUM
	best := 1
	for l := 2; l <= CapFrames; l++ {
		var s float64
		n := 0
		for i := range per {
			if n >= maxLagPairs {
				break
			}
			s += per[i].Sum[l]
			n += per[i].N[l]
		}
		if n < minPairs {
			break
		}
		if math.Sqrt(math.Max(0, s/float64(n)-2*sigmaUM*sigmaUM)) > limit {
			break
		}
		best = l
	}
	return best
}

// minPairs is the fewest point pairs for a mean square excursion, and
// maxLagPairs enough for it to about 1%.
const (
	minPairs    = 30
	maxLagPairs = 20000
)

// Sample is one velocity measurement: a tracer's displacement over Lag
// frames over the elapsed time, placed at the step's midpoint.
type Sample struct {
	Track    int
	TS       float64 // midpoint time, s
	XUM, YUM float64 // midpoint position, um
	VXUMPerS float64 // velocity along the flow, um/s
	VYUMPerS float64 // velocity across the gap, um/s
	Lag      int     // frames
}

// Samples returns the velocity samples of the tracks whose both ends lie in
// [t0S, t1S]. Each track's lag comes from rule with the track's own rough
// speed there (its net displacement over its time in the interval), at most
// half the track's span in the interval (rounded up); a sample starts at
// every point of the track that has a partner exactly Lag frames later, so
// samples of one track overlap and are correlated (treat them per track
// when estimating errors).
//
// The cap at half the span is what keeps a slow or resting tracer in a
// short interval: the rule asks for more frames than the interval holds,
// and the samples over half the span average to the difference of the
// means of the track's two halves, which for white localization noise is
// more precise than its single end-to-end step (sqrt(2L)/(L+1) against
// sqrt(2)/2 times sigma/(L dt) for a span of 2L frames).
func Samples(ts []Track, rule LagRule, sigmaUM, dtS, t0S, t1S float64) []Sample {
	var out []Sample
	for _, t := range ts {
		// Points are in frame order, so in time order: the interval's
		// points are found by bisection, which keeps many short intervals
		// (the map's windows) cheap.
		p := t.Points
		lo := sort.Search(len(p), func(i int) bool { return p[i].TS >= t0S })
		hi := sort.Search(len(p), func(i int) bool { return p[i].TS > t1S })
		if hi-lo < 2 {
			continue
		}
		p = p[lo:hi]
		first, last := p[0], p[len(p)-1]
		v := (last.XUM - first.XUM) / (last.TS - first.TS)
		// No longer than half the track's span here, so that a slow
		// tracer seen briefly still gives samples (see above).
		l := min(rule.Lag(v, sigmaUM, dtS), max(1, (last.Frame-first.Frame+1)/2))
		j := 0
		for i := range p {
			for j < len(p) && p[j].Frame < p[i].Frame+l {
				j++
			}
			if j >= len(p) {
				break
			}
			if p[j].Frame != p[i].Frame+l {
				continue
			}
			a, b := p[i], p[j]
			dt := b.TS - a.TS
			out = append(out, Sample{Track: t.ID, TS: (a.TS + b.TS) / 2,
				XUM: (a.XUM + b.XUM) / 2, YUM: (a.YUM + b.YUM) / 2,
				VXUMPerS: (b.XUM - a.XUM) / dt, VYUMPerS: (b.YUM - a.YUM) / dt, Lag: l})
		}
	}
	return out
}

// JumpSigmas is how many standard deviations of the noise of a
// frame-to-frame step a step may stray from its track's typical step before
// the track is cut there: a larger stray is a mislink or a tracer that
// wrapped around the field, not motion (common practice).
const JumpSigmas = 8

// Split cuts tracks where a frame-to-frame step departs from the track's
// median step (per frame) by more than maxChangeUM, the largest change of a
// step that the motion can explain (the moving wall's travel per frame,
// for a wall that starts or stops), plus JumpSigmas times the noise of a
// step, sqrt(2) sigmaUM. Only steps ending at or before untilS are cut (the
// recoil after a stop may be a sudden jump of its own). Pieces after a cut
// get new ids above every existing one; pieces of one point are dropped.
func Split(ts []Track, sigmaUM, maxChangeUM, untilS float64) []Track {
	next := 0
	for _, t := range ts {
		next = max(next, t.ID+1)
	}
	var out []Track
	var c Cutter
	for _, t := range ts {
		out = c.Cut(out, t, sigmaUM, maxChangeUM, untilS, func(int) int { next++; return next - 1 })
	}
	return out
}

// Cutter cuts one track at a time as Split does, reusing its buffers.
type Cutter struct{ sx, sy []float64 }

// Cut appends to dst the pieces of t that Split makes (the points are t's,
// not copied); the piece after the k-th cut (k from 1) takes the id
// idOf(k).
func (c *Cutter) Cut(dst []Track, t Track, sigmaUM, maxChangeUM, untilS float64, idOf func(k int) int) []Track {
	p := t.Points
	if len(p) < 3 {
		return append(dst, t)
	}
	c.sx, c.sy = c.sx[:0], c.sy[:0]
	for i := 1; i < len(p); i++ {
		df := float64(p[i].Frame - p[i-1].Frame)
		c.sx = append(c.sx, (p[i].XUM-p[i-1].XUM)/df)
		c.sy = append(c.sy, (p[i].YUM-p[i-1].YUM)/df)
	}
	sx, sy := c.sx, c.sy
	mx, my := robust.Median(sx), robust.Median(sy)
	lim := maxChangeUM + JumpSigmas*math.Sqrt2*sigmaUM
	id, from, k := t.ID, 0, 0
	for i := 1; i < len(p); i++ {
		if p[i].TS <= untilS && math.Hypot(sx[i-1]-mx, sy[i-1]-my) > lim {
			if i-from > 1 {
				dst = append(dst, Track{ID: id, Points: p[from:i]})
			}
			k++
			id, from = idOf(k), i
		}
	}
	if len(p)-from > 1 {
		dst = append(dst, Track{ID: id, Points: p[from:]})
	}
	return dst
}

// FastestStepUM returns the largest, over tracks of at least minStepPoints
// points, of a track's median frame-to-frame step length in um per frame:
// the travel per frame of the fastest tracers.
func FastestStepUM(ts []Track) float64 {
	best := 0.0
	var d []float64
	for _, t := range ts {
		p := t.Points
		if len(p) < minStepPoints {
			continue
		}
		d = d[:0]
		for i := 1; i < len(p); i++ {
			df := float64(p[i].Frame - p[i-1].Frame)
			d = append(d, math.Hypot(p[i].XUM-p[i-1].XUM, p[i].YUM-p[i-1].YUM)/df)
		}
		best = math.Max(best, robust.Median(d))
	}
	return best
}

// minStepPoints is the shortest track whose median step is trusted.
const minStepPoints = 5

// CommonOffsetBlocks is the number of time blocks a window is cut into to
// measure the velocity offset its tracers share: ten blocks give the
// offset's scatter to about a quarter (1/sqrt(2*9)) while keeping
// thousands of samples per block.
const CommonOffsetBlocks = 10

// CommonOffsetErr returns the standard uncertainty, in um/s, of a velocity
// offset that every tracer in the samples ss (of one window, from t0S to
// t1S) shares: residual camera motion, or a codec's or motion blur's
// shift that changes over the window. The residuals from the fitted
// profile fit(y) are cut into blocks in time; each block's median is its
// shared offset, and the scatter of the medians beyond what the tracers'
// own scatter gives (the variance of a median, (pi/2) s^2 / n for n tracks
// of spread s; e.g. Kendall & Stuart 1977, The Advanced Theory of
// Statistics vol. 1, 10.10; from memory) is the shared part, whose mean over
// the blocks has that variance over the number of blocks. 0 when the
// scatter is no more than the tracers' own; NaN with too few samples.
func CommonOffsetErr(ss []Sample, t0S, t1S float64, fit func(yUM float64) float64) float64 {
	if !(t1S > t0S) {
		return math.NaN()
	}
	blocks := make([][]float64, CommonOffsetBlocks)
	groups := make([]map[int]bool, CommonOffsetBlocks)
	for i := range groups {
		groups[i] = map[int]bool{}
	}
	for _, s := range ss {
		if s.TS < t0S || s.TS >= t1S {
			continue
		}
		r := s.VXUMPerS - fit(s.YUM)
		if math.IsNaN(r) {
			continue
		}
		k := min(int(float64(CommonOffsetBlocks)*(s.TS-t0S)/(t1S-t0S)), CommonOffsetBlocks-1)
		blocks[k] = append(blocks[k], r)
		groups[k][s.Track] = true
	}
	var meds []float64
	var within float64
	for k, b := range blocks {
		if len(b) < minBlockSamples || len(groups[k]) < minBlockTracks {
			continue
		}
		m, mad := robust.MAD(b)
		s := robust.MADToSigma * mad
		meds = append(meds, m)
		within += math.Pi / 2 * s * s / float64(len(groups[k]))
	}
	n := len(meds)
	if n < minBlocks {
		return math.NaN()
	}
	var mean, ss2 float64
	for _, m := range meds {
		mean += m / float64(n)
	}
	for _, m := range meds {
		ss2 += (m - mean) * (m - mean)
	}
	excess := ss2/float64(n-1) - within/float64(n)
	if !(excess > 0) {
		return 0
	}
	return math.Sqrt(excess / float64(n))
}

// Least data for CommonOffsetErr: blocks of at least minBlockSamples
// samples from minBlockTracks tracks, and minBlocks such blocks.
const (
	minBlockSamples = 30
	minBlockTracks  = 10
	minBlocks       = 4
)
