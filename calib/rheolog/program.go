package rheolog

import (
	"fmt"
	"math"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// Resolution of the steps.
const (
	// zeroFrac: a rate below this fraction of the log's largest rate is
	// the tool at rest (the instrument's control noise).
	zeroFrac = 0.01
	// sameFrac: neighbouring intervals whose rates differ by less than
	// this fraction of the larger one belong to the same step.
	sameFrac = 0.05
)

// RatesPerS returns the nominal shear rate in each interval between
// samples i and i+1, 1/s, for geometry g: from the change of angle or
// strain over the interval, or the mean of the logged angular velocity or
// rate at its ends.
func (l *Log) RatesPerS(g geometry.Geometry) ([]float64, error) {
	rr := math.NaN()
	switch l.Kind {
	case AngleRad, AngleDeg, OmegaRadPS, RPM:
		rr = g.RotatingRadiusUM()
		if math.IsNaN(rr) {
			return nil, fmt.Errorf("log: a column of %s needs a rotating tool, not geometry %q", l.Kind, g.Kind)
		}
	}
	n := len(l.TimeS) - 1
	rate := make([]float64, n)
	for i := range n {
		dt := l.TimeS[i+1] - l.TimeS[i]
		a, b := l.Motion[i], l.Motion[i+1]
		switch l.Kind {
		case Rate:
			rate[i] = (a + b) / 2
		case Strain:
			rate[i] = (b - a) / dt
		case AngleRad:
			rate[i] = g.NominalRate((b - a) / dt * rr)
		case AngleDeg:
			rate[i] = g.NominalRate((b - a) * math.Pi / 180 / dt * rr)
		case OmegaRadPS:
			rate[i] = g.NominalRate((a + b) / 2 * rr)
		case RPM:
			rate[i] = g.NominalRate((a + b) / 2 * 2 * math.Pi / 60 * rr)
		}
	}
	return rate, nil
}

// Program turns the log's motion into the motion program for geometry g:
// consecutive intervals of nearly the same rate make one step, intervals
// at rest none. A step that starts or ends between two samples leaves one
// interval of an intermediate rate (its mean over the interval); the
// change is placed inside it where the two rates' travel adds up to the
// logged one, so steps are placed to a fraction of a sample for angle and
// strain columns (for angular velocity and rate columns, which give the
// value at the samples, midway between them).
func (l *Log) Program(g geometry.Geometry) (experiment.Program, error) {
	rate, err := l.RatesPerS(g)
	if err != nil {
		return nil, err
	}
	ts := l.TimeS
	var maxRate float64
	for _, r := range rate {
		maxRate = math.Max(maxRate, math.Abs(r))
	}
	if maxRate == 0 {
		return experiment.Program{}, nil
	}
	// Runs of intervals of the same rate; rest is rate 0.
	type run struct {
		i, j int     // intervals i..j-1
		rate float64 // mean over the run, 1/s
		a, b float64 // start and end, s
	}
	same := func(x, y float64) bool {
		if math.Abs(x) <= zeroFrac*maxRate && math.Abs(y) <= zeroFrac*maxRate {
			return true
		}
		return math.Abs(x-y) <= sameFrac*math.Max(math.Abs(x), math.Abs(y))
	}
	var runs []run
	for i := 0; i < len(rate); {
		j := i + 1
		for j < len(rate) && same(rate[j], rate[i]) {
			j++
		}
		var sum float64
		for k := i; k < j; k++ {
			sum += rate[k] * (ts[k+1] - ts[k])
		}
		r := run{i: i, j: j, rate: sum / (ts[j] - ts[i]), a: ts[i], b: ts[j]}
		if math.Abs(r.rate) <= zeroFrac*maxRate {
			r.rate = 0
		}
		runs = append(runs, r)
		i = j
	}
	// A run of one interval between two others, whose rate lies between
	// theirs, is the change from one to the other inside that interval.
	var keep []run
	for k := 0; k < len(runs); k++ {
		r := runs[k]
		if r.j-r.i == 1 && len(keep) > 0 && k+1 < len(runs) {
			p, q := &keep[len(keep)-1], runs[k+1]
			lo, hi := math.Min(p.rate, q.rate), math.Max(p.rate, q.rate)
			if r.rate >= lo && r.rate <= hi && p.rate != q.rate {
				dt := r.b - r.a
				tc := r.a + (r.rate-q.rate)*dt/(p.rate-q.rate)
				p.b = tc
				runs[k+1].a = tc
				continue
			}
		}
		// Edges of the log: a partial interval before the first or after
		// the last step is part of that step.
		keep = append(keep, r)
	}
	var p experiment.Program
	for _, r := range keep {
		if r.rate == 0 {
			continue
		}
		st := experiment.Step{StartS: r.a, EndS: r.b}
		// The mean rate over the step's own time, from the samples wholly
		// inside it (the run's intervals).
		var sum, dur float64
		for k := r.i; k < r.j; k++ {
			sum += rate[k] * (ts[k+1] - ts[k])
			dur += ts[k+1] - ts[k]
		}
		st.RatePerS = sum / dur
		st.WallSpeedUMPerS = g.WallSpeed(st.RatePerS)
		st.Strain = st.RatePerS * st.DurationS()
		p = append(p, st)
	}
	return p, nil
}

// Window returns the samples of the log in [t0S, t1S] (video clock): their
// indices from i to j-1.
func (l *Log) Window(t0S, t1S float64) (i, j int) {
	for i < len(l.TimeS) && l.TimeS[i] < t0S {
		i++
	}
	j = i
	for j < len(l.TimeS) && l.TimeS[j] <= t1S {
		j++
	}
	return i, j
}
