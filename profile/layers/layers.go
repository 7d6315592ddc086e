// Package layers averages a quantity measured on tracers (a velocity in
// um/s, a displacement in um) in layers across the gap: a robust mean per
// layer, its standard error from a bootstrap that resamples whole tracks
// (so that the correlation between samples of one track is respected), and
// the counts. A layer with too few samples or tracks is reported with its
// counts and a NaN value, never filled in from its neighbours.
package layers

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"gaptrace/calib/robust"
)

// Obs is one measurement: Group is the track it comes from, YUM its height
// above the stationary wall in um and Value the measured quantity.
type Obs struct {
	Group int
	YUM   float64
	Value float64
}

// Options sets up the layers.
type Options struct {
	GapUM float64 // gap, um; layers tile [0, GapUM]
	Bins  int     // number of layers
	// MinSamples and MinGroups are the fewest samples and distinct tracks
	// for a layer to get a value.
	MinSamples, MinGroups int
	// Replicates is the number of bootstrap resamplings; 0 means
	// DefaultReplicates.
	Replicates int
	Seed       uint64 // of the bootstrap's random numbers
}

// Defaults.
const (
	// DefaultBins gives layers of 2.5% of the gap: fine enough to place a
	// band boundary to a few percent, coarse enough for tens of tracks each.
	DefaultBins = 40
	// DefaultMinSamples and DefaultMinGroups: below ten samples from three
	// tracks, neither a robust mean nor a bootstrap over tracks means much
	// (common practice).
	DefaultMinSamples = 10
	DefaultMinGroups  = 3
	// DefaultReplicates bootstrap resamplings give a standard error good to
	// about 1/sqrt(2*100) = 7% (Efron & Tibshirani 1993, An Introduction to
	// the Bootstrap, ch. 6; from memory).
	DefaultReplicates = 100
)

// Bin is one layer.
type Bin struct {
	FromUM, ToUM float64 // layer edges, um
	// YUM is the mean height of the layer's samples (NaN when empty): the
	// place to plot the value, which need not be the layer's centre.
	YUM float64
	// Value is the robust mean at YUM and Err its bootstrap standard error
	// over tracks, corrected for the degrees of freedom the mean and the
	// trend take (see dofFactor), in the unit of Obs.Value; both NaN when
	// the layer has too few samples. The estimate is taken after removing the layer's own
	// least-squares trend in height, Slope (unit of Value per um), so that
	// the spread of heights inside the layer neither biases it nor
	// inflates its error.
	Value, Err float64
	Slope      float64
	N, Groups  int // samples and distinct tracks
}

// Known reports whether the layer has a value.
func (b Bin) Known() bool { return !math.IsNaN(b.Value) }

// huberIter iterations of reweighting bring the M-estimate to well below a
// hundredth of its standard error from a median start.
const huberIter = 8

// Profile returns the layers of obs. Observations outside [0, GapUM] are
// dropped.
func Profile(obs []Obs, o Options) ([]Bin, error) {
	if !(o.GapUM > 0) {
		return nil, fmt.Errorf("layers: gap %g um is not positive", o.GapUM)
	}
	if o.Bins <= 0 {
		return nil, fmt.Errorf("layers: %d layers requested", o.Bins)
	}
	if o.Replicates <= 0 {
		o.Replicates = DefaultReplicates
	}
	w := o.GapUM / float64(o.Bins)
	per := make([][]Obs, o.Bins)
	for _, ob := range obs {
		if !(ob.YUM >= 0 && ob.YUM <= o.GapUM) || math.IsNaN(ob.Value) {
			continue
		}
		k := min(int(ob.YUM/w), o.Bins-1)
		per[k] = append(per[k], ob)
	}
	rng := rand.New(rand.NewPCG(o.Seed, 0x6c61796572))
	out := make([]Bin, o.Bins)
	var est estimator
	for k := range out {
		out[k] = est.bin(per[k], o, rng)
		out[k].FromUM, out[k].ToUM = float64(k)*w, float64(k+1)*w
	}
	return out, nil
}

// estimator holds buffers reused across layers.
type estimator struct {
	vals, wts, scratch []float64
	start              []int // per group, first index in vals
	mult               []float64
	psi, dpsi          []float64 // per group, sums of psi and psi'

}

func (e *estimator) bin(obs []Obs, o Options, rng *rand.Rand) Bin {
	b := Bin{N: len(obs), YUM: math.NaN(), Value: math.NaN(), Err: math.NaN()}
	if len(obs) == 0 {
		return b
	}
	slices.SortFunc(obs, func(a, c Obs) int { return a.Group - c.Group })
	e.vals, e.start = e.vals[:0], e.start[:0]
	var ySum float64
	for i, ob := range obs {
		if i == 0 || ob.Group != obs[i-1].Group {
			e.start = append(e.start, i)
		}
		e.vals = append(e.vals, ob.Value)
		ySum += ob.YUM
	}
	b.YUM = ySum / float64(len(obs))
	b.Groups = len(e.start)
	// Remove the layer's own linear trend in y, so that the value belongs
	// to YUM and its error does not count the spread of heights within
	// the layer as noise.
	var syy, syv, sv float64
	for _, ob := range obs {
		sv += ob.Value
	}
	mv := sv / float64(len(obs))
	for _, ob := range obs {
		dy := ob.YUM - b.YUM
		syy += dy * dy
		syv += dy * (ob.Value - mv)
	}
	if syy > 0 {
		b.Slope = syv / syy
		for i, ob := range obs {
			e.vals[i] -= b.Slope * (ob.YUM - b.YUM)
		}
	}
	if b.N < max(1, o.MinSamples) || b.Groups < max(1, o.MinGroups) {
		return b
	}
	e.start = append(e.start, len(obs))
	ng := b.Groups
	e.wts = slices.Grow(e.wts[:0], len(obs))[:len(obs)]
	for i := range e.wts {
		e.wts[i] = 1
	}
	scale := robust.MADToSigma * e.weightedMAD()
	b.Value = e.huber(scale, e.weightedMedian(e.vals))
	// Fast bootstrap of the M-estimate (Salibian-Barrera & Zamar 2002,
	// Ann. Statist. 30:556; from memory): each replicate takes one Newton step from the
	// full-sample estimate, mu* = mu + sum psi(r) / sum psi'(r) over the
	// resampled tracks, so per-track sums of psi and psi' are all it needs.
	e.psi, e.dpsi = slices.Grow(e.psi[:0], ng)[:ng], slices.Grow(e.dpsi[:0], ng)[:ng]
	c := robust.HuberK * scale
	for g := range ng {
		var p, d float64
		for i := e.start[g]; i < e.start[g+1]; i++ {
			r := e.vals[i] - b.Value
			switch {
			case !(scale > 0):
				d++
			case r > c:
				p += c
			case r < -c:
				p -= c
			default:
				p += r
				d++
			}
		}
		e.psi[g], e.dpsi[g] = p, d
	}
	e.mult = slices.Grow(e.mult[:0], ng)[:ng]
	var s, s2 float64
	for range o.Replicates {
		clear(e.mult)
		for range ng {
			e.mult[rng.IntN(ng)]++
		}
		var p, d float64
		for g, m := range e.mult {
			p += m * e.psi[g]
			d += m * e.dpsi[g]
		}
		v := b.Value
		if d > 0 {
			v += p / d
		}
		s += v
		s2 += v * v
	}
	r := float64(o.Replicates)
	m := s / r
	b.Err = math.Sqrt(math.Max(0, s2/r-m*m) * r / math.Max(1, r-1) * dofFactor(ng, syy > 0))
	return b
}

// dofFactor corrects the bootstrap variance over ng tracks for the degrees
// of freedom its residuals lack: the bootstrap of a mean of n independent
// values gives RSS/n^2, the unbiased variance is RSS/(n(n-1)), and after the
// layer's own trend was fitted RSS/(n(n-2)) (the residual variance of a
// straight-line fit has n-2 degrees of freedom; any regression text, e.g.
// Draper & Smith 1998, Applied Regression Analysis, ch. 1; from memory).
// It matters in layers of a few tracks, where without it the error comes
// out a factor sqrt(3) too small for three tracks.
func dofFactor(ng int, trend bool) float64 {
	lost := 1
	if trend {
		lost = 2
	}
	if ng <= lost {
		return 1
	}
	return float64(ng) / float64(ng-lost)
}

// weightedMAD returns the median absolute deviation of vals from their
// median, both weighted by wts.
func (e *estimator) weightedMAD() float64 {
	m := e.weightedMedian(e.vals)
	e.scratch = slices.Grow(e.scratch[:0], len(e.vals))[:len(e.vals)]
	for i, v := range e.vals {
		e.scratch[i] = math.Abs(v - m)
	}
	return e.weightedMedian(e.scratch)
}

// weightedMedian returns the weighted median of v with weights e.wts.
func (e *estimator) weightedMedian(v []float64) float64 {
	idx := make([]int, 0, len(v))
	var tot float64
	for i := range v {
		if e.wts[i] > 0 {
			idx = append(idx, i)
			tot += e.wts[i]
		}
	}
	slices.SortFunc(idx, func(a, b int) int {
		switch {
		case v[a] < v[b]:
			return -1
		case v[a] > v[b]:
			return 1
		}
		return 0
	})
	var c float64
	for _, i := range idx {
		c += e.wts[i]
		if c >= tot/2 {
			return v[i]
		}
	}
	return math.NaN()
}

// huber returns the Huber M-estimate of location of e.vals with weights
// e.wts and the fixed scale: the iteratively reweighted mean, started at
// mu (the median of the full layer). A zero scale (all values equal) gives
// the start.
func (e *estimator) huber(scale, mu float64) float64 {
	if !(scale > 0) {
		return mu
	}
	c := robust.HuberK * scale
	for range huberIter {
		var sw, swx float64
		for i, v := range e.vals {
			w := e.wts[i]
			if w == 0 {
				continue
			}
			if d := math.Abs(v - mu); d > c {
				w *= c / d
			}
			sw += w
			swx += w * v
		}
		mu = swx / sw
	}
	return mu
}
