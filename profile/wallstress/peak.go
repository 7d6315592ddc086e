package wallstress

import (
	"math"
	"slices"

	"gaptrace/calib/rheolog"
	"gaptrace/calib/robust"
)

// Peak is the stress maximum of one start-up phase. AfterStartS is the
// time of the maximum in s after the phase's start (the start of the shear
// phase, as in the phases list), Strain the nominal strain imposed since
// then, |rate| x AfterStartS, and Pa the stress there.
type Peak struct {
	AfterStartS, Strain, Pa float64
}

// Peak detection.
const (
	// peakSignificance: the maximum must stand this many noise standard
	// deviations above both the stress at the phase's start and its mean
	// over the phase's last samples, or it is a rise without an overshoot.
	peakSignificance = 3.0
	// peakEdgeSamples: a maximum this close to either end of the phase is
	// no maximum inside it.
	peakEdgeSamples = 2
	// tailSamples: the stress at the phase's end is the mean of its last
	// samples, so that one noisy sample does not make or hide a fall.
	tailSamples = 3
	// peakFitDrop: the parabola through the maximum is fitted to the
	// samples around it within this fraction of the maximum below it, and
	// at least peakFitNoise noise deviations, so that the noise of single
	// samples does not place it.
	peakFitDrop  = 0.01
	peakFitNoise = 5.0
)

// FindPeak returns the stress maximum of the phase from startS to endS
// (video clock) at nominal rate ratePerS, from the wall stress series
// stress at the log's samples; ok is false when the stress does not
// overshoot inside the phase. The maximum is placed by a least-squares
// parabola through the samples near the largest one.
func FindPeak(l *rheolog.Log, stress []float64, startS, endS, ratePerS float64) (Peak, bool) {
	i, j := l.Window(startS, endS)
	n := j - i
	if n < 2*peakEdgeSamples+3 {
		return Peak{}, false
	}
	ts, s := l.TimeS[i:j], slices.Clone(stress[i:j])
	// Work on the stress in the sense of the shear.
	var sum float64
	for _, v := range s {
		sum += v
	}
	if sum < 0 {
		for k := range s {
			s[k] = -s[k]
		}
	}
	noise := noiseSD(s)
	k := 0
	for m := range s {
		if s[m] > s[k] {
			k = m
		}
	}
	if k < peakEdgeSamples || k >= n-peakEdgeSamples {
		return Peak{}, false
	}
	tail, _ := meanSD(s[n-tailSamples:])
	if s[k]-tail < peakSignificance*noise || s[k]-s[0] < peakSignificance*noise {
		return Peak{}, false
	}
	drop := math.Max(peakFitDrop*math.Abs(s[k]), peakFitNoise*noise)
	a, b := k, k
	for a > 0 && s[a-1] >= s[k]-drop {
		a--
	}
	for b < n-1 && s[b+1] >= s[k]-drop {
		b++
	}
	a, b = min(a, k-1), max(b, k+1)
	tp := ts[k]
	if c2, c1, _, ok := parabola(ts[a:b+1], s[a:b+1], ts[k]); ok && c2 < 0 {
		if v := ts[k] - c1/(2*c2); v >= ts[a] && v <= ts[b] {
			tp = v
		}
	}
	pk := Peak{AfterStartS: tp - startS, Pa: s[k]}
	pk.Strain = math.Abs(ratePerS) * pk.AfterStartS
	if sum < 0 {
		pk.Pa = -pk.Pa
	}
	return pk, true
}

// parabola fits y = c2 (x-x0)^2 + c1 (x-x0) + c0 by least squares.
func parabola(xs, ys []float64, x0 float64) (c2, c1, c0 float64, ok bool) {
	if len(xs) < 3 {
		return 0, 0, 0, false
	}
	var s [5]float64
	var t [3]float64
	for i := range xs {
		x := xs[i] - x0
		p := 1.0
		for m := 0; m < 5; m++ {
			s[m] += p
			if m < 3 {
				t[m] += p * ys[i]
			}
			p *= x
		}
	}
	// Normal equations [[s4 s3 s2] [s3 s2 s1] [s2 s1 s0]] [c2 c1 c0] = [t2 t1 t0].
	m := [3][4]float64{{s[4], s[3], s[2], t[2]}, {s[3], s[2], s[1], t[1]}, {s[2], s[1], s[0], t[0]}}
	for c := 0; c < 3; c++ {
		p := c
		for r := c + 1; r < 3; r++ {
			if math.Abs(m[r][c]) > math.Abs(m[p][c]) {
				p = r
			}
		}
		m[c], m[p] = m[p], m[c]
		if m[c][c] == 0 {
			return 0, 0, 0, false
		}
		for r := 0; r < 3; r++ {
			if r == c {
				continue
			}
			f := m[r][c] / m[c][c]
			for q := c; q < 4; q++ {
				m[r][q] -= f * m[c][q]
			}
		}
	}
	return m[0][3] / m[0][0], m[1][3] / m[1][1], m[2][3] / m[2][2], true
}

// noiseSD estimates the stress noise's standard deviation from the second
// differences of neighbouring samples, s[k+1] - 2 s[k] + s[k-1], which a
// smooth stress hardly changes, robustly by their median absolute
// deviation; white noise of sd e gives them the sd e sqrt(6).
func noiseSD(s []float64) float64 {
	if len(s) < 4 {
		return 0
	}
	d := make([]float64, len(s)-2)
	for k := range d {
		d[k] = s[k+2] - 2*s[k+1] + s[k]
	}
	_, mad := robust.MAD(d)
	return robust.MADToSigma * mad / math.Sqrt(6)
}
