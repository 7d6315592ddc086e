// Package robust holds the robust statistics shared by every stage: the
// median, the median absolute deviation (MAD) and its scale to a normal
// standard deviation, and the selection of order statistics in place that
// they rest on.
//
// Empty input has one rule: Median and MAD return NaN. Neither changes the
// order of its caller's slice; SelectKth, which reorders its argument on
// purpose, says so.
package robust

import (
	"math"
	"slices"
)

// MADToSigma turns a median absolute deviation into the standard deviation
// of a normal distribution: 1 / Φ⁻¹(3/4) = 1.4826 (Rousseeuw & Croux 1993,
// J. Amer. Statist. Assoc. 88:1273, the constant b of their MAD). The test
// checks it against gonum's normal quantile.
const MADToSigma = 1.4826

// HuberK is the tuning constant of Huber's M-estimator, in robust standard
// deviations: residuals beyond it are down-weighted, for 95 % efficiency
// at the normal distribution (Huber 1981, Robust Statistics; from memory).
const HuberK = 1.345

// smallN is the length up to which Median works on a copy on the stack.
const smallN = 64

// Median returns the median of v: its middle value, or the mean of the two
// middle values for an even count; NaN for an empty v. v is left as it is.
// NaN values in v give an undefined result.
func Median(v []float64) float64 {
	n := len(v)
	if n == 0 {
		return math.NaN()
	}
	var a [smallN]float64
	var s []float64
	if n <= smallN {
		s = a[:n]
	} else {
		s = make([]float64, n)
	}
	copy(s, v)
	hi := SelectKth(s, n/2)
	if n%2 == 1 {
		return hi
	}
	// The lower middle value is the largest of those left of n/2.
	return (slices.Max(s[:n/2]) + hi) / 2
}

// MAD returns the median of v and its median absolute deviation, the
// median of |v - median|; both NaN for an empty v. Multiply the deviation by
// MADToSigma for a normal standard deviation. v is left as it is.
func MAD(v []float64) (median, mad float64) {
	median = Median(v)
	if len(v) == 0 {
		return median, math.NaN()
	}
	d := make([]float64, len(v))
	for i, x := range v {
		d[i] = math.Abs(x - median)
	}
	return median, Median(d)
}
