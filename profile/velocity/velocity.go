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

// CommonOffsetErr returns the standard uncertainty, in um/s, of a velocity
// offset that every tracer in the samples ss (of one window, from t0S to
// t1S, frames dtS apart) shares: residual camera motion, or a codec's or
// motion blur's shift, that the tracks still carry. Such a shift J(f) of
// frame f enters every sample as (J(b) - J(a)) / (L dt) for its ends a and
// b, L frames apart, so the window's mean velocity carries sum_f a_f J(f),
// with a_f from the samples' ends. A constant or linear part of J over the
// window cannot be told from the flow, so J is measured where it can be:
// each sample's ends as positions less the fitted profile's motion
// fit(y) t, less each track's mean, and the median over the tracks of a
// frame is that frame's J. Its variance beyond what the tracers' own
// scatter gives (the variance of a median, (pi/2) s^2 / n for n tracks of
// spread s; e.g. Kendall & Stuart 1977, The Advanced Theory of Statistics
// vol. 1, 10.10; from memory) and its correlation from one frame to the
// next, rho, give a stationary J with covariance var rho^|k| at k frames,
// which the law of propagation with correlated inputs (GUM, JCGM
// 100:2008, eq. 13) carries to the mean velocity: u^2 = sum_f sum_g a_f a_g
// var rho^|f-g|. A shift that lasts the whole lag of the samples (a slow
// wander of the camera correction over tens of frames) then counts in
// full, which the scatter of the window's parts in time misses. 0 when J
// is no more than the tracers' own scatter; NaN with too few frames or
// tracks.
func CommonOffsetErr(ss []Sample, t0S, t1S, dtS float64, fit func(yUM float64) float64) float64 {
	sh, ok := MeasureShift(ss, t0S, t1S, dtS, fit)
	if !ok {
		return math.NaN()
	}
	return sh.OffsetErr(ss, t0S, t1S, dtS)
}

// Shift is the shift that every track of a frame shares, as a stationary
// sequence: its variance, um^2, and its correlation from one frame to the
// next (see CommonOffsetErr).
type Shift struct{ VarUM2, Rho float64 }

// MeasureShift measures the shift the tracks of the samples ss (of one
// window, from t0S to t1S, frames dtS apart) share, as CommonOffsetErr
// does; false with too few frames or tracks.
func MeasureShift(ss []Sample, t0S, t1S, dtS float64, fit func(yUM float64) float64) (Shift, bool) {
	if !(t1S > t0S) || !(dtS > 0) {
		return Shift{}, false
	}
	// The frames run from the earliest sample's start to the latest's
	// end: a sample is in the window by its midpoint.
	lo, hi := t0S, t1S
	for _, s := range ss {
		h := float64(s.Lag) * dtS / 2
		lo, hi = math.Min(lo, s.TS-h), math.Max(hi, s.TS+h)
	}
	nf := int(math.Round((hi-lo)/dtS)) + 1
	frameOf := func(t float64) int { return int(math.Round((t - lo) / dtS)) }
	type end struct {
		f int
		r float64
	}
	byTrack := map[int][]end{}
	n := 0
	for _, s := range ss {
		if s.TS < t0S || s.TS >= t1S {
			continue
		}
		v := fit(s.YUM)
		h := float64(s.Lag) * dtS / 2
		fa, fb := frameOf(s.TS-h), frameOf(s.TS+h)
		if math.IsNaN(v) || !(h > 0) || fa < 0 || fb >= nf || fa == fb {
			continue
		}
		// The ends' positions less the profile's motion since t0S.
		ra := s.XUM - s.VXUMPerS*h - v*(s.TS-h-t0S)
		rb := s.XUM + s.VXUMPerS*h - v*(s.TS+h-t0S)
		byTrack[s.Track] = append(byTrack[s.Track], end{fa, ra}, end{fb, rb})
		n++
	}
	if n == 0 {
		return Shift{}, false
	}
	perFrame := make([][]float64, nf)
	seen := map[int]bool{}
	for _, es := range byTrack {
		clear(seen)
		var sum float64
		k := 0
		for _, e := range es {
			if !seen[e.f] {
				seen[e.f] = true
				sum += e.r
				k++
			}
		}
		if k < minShiftTrackFrames {
			continue
		}
		clear(seen)
		for _, e := range es {
			if !seen[e.f] {
				seen[e.f] = true
				perFrame[e.f] = append(perFrame[e.f], e.r-sum/float64(k))
			}
		}
	}
	j := make([]float64, nf)
	known := make([]bool, nf)
	var mean, own float64
	m := 0
	for f, d := range perFrame {
		if len(d) < minShiftTracks {
			continue
		}
		med, mad := robust.MAD(d)
		sd := robust.MADToSigma * mad
		j[f], known[f] = med, true
		mean += med
		own += math.Pi / 2 * sd * sd / float64(len(d))
		m++
	}
	if m < minShiftFrames {
		return Shift{}, false
	}
	mean /= float64(m)
	var ss2, c1 float64
	pairs := 0
	for f := range j {
		if !known[f] {
			continue
		}
		ss2 += (j[f] - mean) * (j[f] - mean)
		if f+1 < nf && known[f+1] {
			c1 += (j[f] - mean) * (j[f+1] - mean)
			pairs++
		}
	}
	variance := ss2/float64(m-1) - own/float64(m)
	if !(variance > 0) {
		return Shift{}, true
	}
	// The localization noise is independent from frame to frame, so the
	// covariance at one frame is J's alone.
	rho := 0.0
	if pairs > 0 {
		rho = math.Max(0, math.Min(maxShiftRho, c1/float64(pairs)/variance))
	}
	return Shift{VarUM2: variance, Rho: rho}, true
}

// OffsetErr returns the standard uncertainty, um/s, that the shift sh
// gives the mean velocity of the samples ss of the window from t0S to t1S,
// frames dtS apart: u^2 = sum_f sum_g a_f a_g var rho^|f-g| over the
// samples' ends (CommonOffsetErr); NaN without samples.
func (sh Shift) OffsetErr(ss []Sample, t0S, t1S, dtS float64) float64 {
	if !(t1S > t0S) || !(dtS > 0) {
		return math.NaN()
	}
	lo, hi := t0S, t1S
	for _, s := range ss {
		h := float64(s.Lag) * dtS / 2
		lo, hi = math.Min(lo, s.TS-h), math.Max(hi, s.TS+h)
	}
	nf := int(math.Round((hi-lo)/dtS)) + 1
	a := make([]float64, nf)
	n := 0
	for _, s := range ss {
		h := float64(s.Lag) * dtS / 2
		fa, fb := int(math.Round((s.TS-h-lo)/dtS)), int(math.Round((s.TS+h-lo)/dtS))
		if s.TS < t0S || s.TS >= t1S || !(h > 0) || fa < 0 || fb >= nf || fa == fb {
			continue
		}
		a[fb] += 1 / (2 * h)
		a[fa] -= 1 / (2 * h)
		n++
	}
	if n == 0 {
		return math.NaN()
	}
	rho, variance := sh.Rho, sh.VarUM2
	reach := nf
	if rho > 0 {
		reach = min(nf, int(math.Ceil(math.Log(shiftRhoCutoff)/math.Log(rho))))
	} else {
		reach = 0
	}
	var u2 float64
	for f, af := range a {
		if af == 0 {
			continue
		}
		s := af
		c := 1.0
		for k := 1; k <= reach && f+k < nf; k++ {
			c *= rho
			s += 2 * a[f+k] * c
		}
		u2 += af * s
	}
	u2 *= variance / (float64(n) * float64(n))
	return math.Sqrt(math.Max(0, u2))
}

// Settings of CommonOffsetErr.
const (
	// minShiftTrackFrames is the fewest frames a track must give to take
	// part in measuring the shared shift: its mean, which is taken off,
	// must not follow the shift itself.
	minShiftTrackFrames = 10
	// minShiftTracks and minShiftFrames: a frame's shift is the median of
	// at least ten tracks, and at least ten frames measure the variance
	// and the correlation (common practice).
	minShiftTracks = 10
	minShiftFrames = 10
	// maxShiftRho bounds the measured correlation from frame to frame,
	// below 1, where the stationary model would stand for a drift that
	// never ends.
	maxShiftRho = 0.98
	// shiftRhoCutoff is the correlation below which the sum over frame
	// pairs stops: what it leaves out is less than a thousandth.
	shiftRhoCutoff = 1e-3
)
