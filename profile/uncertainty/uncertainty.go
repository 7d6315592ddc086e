// Package uncertainty evaluates uncertainty budgets in the sense of the GUM
// (JCGM 100:2008, Evaluation of measurement data: Guide to the expression of
// uncertainty in measurement): a measurement model y = f(x) of independent
// input quantities x, each with a standard uncertainty and the budget
// component it belongs to, is propagated by the law of propagation of
// uncertainty (GUM eq. 10, sensitivity coefficients by central
// differences), and per output quantity each component's contribution is
// the root sum of squares of its inputs' contributions; the combined
// standard uncertainty is that over the components. MonteCarlo propagates
// the same inputs by sampling (JCGM 101:2008, Supplement 1), the check of
// the linearization.
package uncertainty

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// Components of the budgets gaptrace reports (the names in summary.json's
// budget objects, listed in the README).
const (
	// Statistical is the scatter between tracks: the bootstrap over whole
	// tracks and the fit's residuals.
	Statistical = "statistical"
	// WallPosition is where the wall lines lie, from the wall fit's own
	// residuals, propagated to heights.
	WallPosition = "wall_position"
	// Scale is the image scale (um per px) and the gap.
	Scale = "scale"
	// TimeBase is the frame rate and the time of the stop.
	TimeBase = "time_base"
	// SharedMotion is what every track of a frame shares: residual camera
	// jitter, and codec or blur bias, measured on the recording itself.
	SharedMotion = "shared_motion"
	// Tracking is the bias detection and linking leave in the tracers'
	// velocities and heights, evaluated (Type B, GUM 4.3) on renders with
	// known truth.
	Tracking = "tracking"
)

// Input is one input quantity of a measurement model: its best estimate,
// its standard uncertainty (in its own unit; 0 for an exact input) and the
// budget component it belongs to.
type Input struct {
	Component string
	Value     float64
	StdUnc    float64
}

// Model is a measurement model: the output quantities for the input values
// x, in the order of the inputs given to Propagate or MonteCarlo. NaN marks
// an output the model cannot give for x.
type Model func(x []float64) []float64

// Contributions is one output quantity's budget: each component's standard
// uncertainty, in the quantity's unit.
type Contributions map[string]float64

// Combined returns the combined standard uncertainty, the root sum of
// squares of the components (uncorrelated components, GUM eq. 10); NaN
// when any component is NaN (unknown), and NaN for an empty budget.
func (c Contributions) Combined() float64 {
	if len(c) == 0 {
		return math.NaN()
	}
	var s float64
	for _, u := range c {
		s += u * u
	}
	return math.Sqrt(s)
}

// Add adds a standard uncertainty u to component name, in quadrature with
// what the component holds.
func (c Contributions) Add(name string, u float64) {
	c[name] = math.Hypot(c[name], u)
}

// diffStepFraction is the step of the central differences as a fraction
// of the input's standard uncertainty: one, the GUM's own numerical
// sensitivity, Z_i = [f(x_i + u_i) - f(x_i - u_i)] / 2 (JCGM 100:2008,
// 5.1.3 note 2; from memory), which also steps over the fine grid of a
// model that refines a boundary by search.
const diffStepFraction = 1.0

// Propagate evaluates f at the inputs' values and returns the outputs and,
// for each output, the contributions of the components: |c_i| u(x_i) for
// each input i, with the sensitivity c_i = df/dx_i from a central
// difference over diffStepFraction u(x_i), summed in quadrature per
// component (GUM eq. 10 for uncorrelated inputs). An input with no
// uncertainty contributes nothing but still names its component (0).
func Propagate(f Model, in []Input) ([]float64, []Contributions, error) {
	x := make([]float64, len(in))
	for i, p := range in {
		if math.IsNaN(p.StdUnc) || p.StdUnc < 0 || math.IsInf(p.StdUnc, 0) {
			return nil, nil, fmt.Errorf("uncertainty: input %d (%s) has standard uncertainty %g", i, p.Component, p.StdUnc)
		}
		x[i] = p.Value
	}
	y := f(slices.Clone(x))
	out := make([]Contributions, len(y))
	for j := range out {
		out[j] = Contributions{}
	}
	for i, p := range in {
		for j := range y {
			out[j].Add(p.Component, 0)
		}
		if p.StdUnc == 0 {
			continue
		}
		h := diffStepFraction * p.StdUnc
		xp, xm := slices.Clone(x), slices.Clone(x)
		xp[i] += h
		xm[i] -= h
		yp, ym := f(xp), f(xm)
		for j := range y {
			c := (yp[j] - ym[j]) / (2 * h)
			out[j].Add(p.Component, math.Abs(c)*p.StdUnc)
		}
	}
	return y, out, nil
}

// MonteCarlo propagates the inputs through f by drawing each from a normal
// distribution with its value as mean and its standard uncertainty as
// standard deviation, n times (JCGM 101:2008, 7.2 and 7.6), and returns the
// mean and the standard deviation of each output over the draws that give
// it (NaN outputs left out).
func MonteCarlo(f Model, in []Input, n int, seed uint64) (mean, std []float64) {
	rng := rand.New(rand.NewPCG(seed, 0x6d63))
	var sum, sum2 []float64
	var cnt []int
	x := make([]float64, len(in))
	for range n {
		for i, p := range in {
			x[i] = p.Value + p.StdUnc*rng.NormFloat64()
		}
		y := f(slices.Clone(x))
		if sum == nil {
			sum, sum2, cnt = make([]float64, len(y)), make([]float64, len(y)), make([]int, len(y))
		}
		for j, v := range y {
			if math.IsNaN(v) {
				continue
			}
			sum[j] += v
			sum2[j] += v * v
			cnt[j]++
		}
	}
	mean, std = make([]float64, len(sum)), make([]float64, len(sum))
	for j := range sum {
		k := float64(cnt[j])
		if cnt[j] < 2 {
			mean[j], std[j] = math.NaN(), math.NaN()
			continue
		}
		mean[j] = sum[j] / k
		std[j] = math.Sqrt(math.Max(0, (sum2[j]-k*mean[j]*mean[j])/(k-1)))
	}
	return mean, std
}
