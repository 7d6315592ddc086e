// Package wallstress turns a rheometer log's torque (or its stress column)
// into the shear stress at the walls of each shear phase, finds the stress
// maximum of each start-up, and fits slip laws, the slip velocity at a wall
// against the stress there, across the phases.
//
// The conversions from torque M (N m) to the shear stress at the wall, Pa,
// are the standard ones of each tool (Macosko, Rheology: Principles,
// Measurements and Applications, 1994, chapter 5; the Couette relation
// also DIN 53019-1:2008, section 5 (from memory)):
//
//   - cone and plate, uniform in the gap: 3M / (2 pi R^3);
//   - parallel plates at the rim r = R, Weissenberg–Rabinowitsch corrected:
//     M / (2 pi R^3) (3 + d ln M / d ln rate_R), the slope fitted across
//     the phases; with fewer than two phases of different rates, the
//     apparent (Newtonian) value 2M / (pi R^3), which the report says;
//   - concentric cylinders at radius r: M / (2 pi r^2 L), L the immersed
//     length (geometry length_mm), at each cylinder;
//   - sliding plates: the force F (N) over the sheared area A, F / A
//     (geometry area_mm2).
//
// A stress column is taken as the stress at the wall as logged (for a
// Couette cell at the inner cylinder, the outer's following as (Ri/Ro)^2).
package wallstress

import (
	"fmt"
	"math"
	"slices"

	"gaptrace/calib/geometry"
	"gaptrace/calib/rheolog"
)

// Sources of the wall stress, named in summary.json.
const (
	SourceCone          = "cone-plate: 3M/(2 pi R^3) (Macosko 1994, ch. 5)"
	SourcePlateApparent = "parallel plate at the rim: apparent 2M/(pi R^3), no Weissenberg-Rabinowitsch correction (Macosko 1994, ch. 5)"
	SourcePlateWR       = "parallel plate at the rim: Weissenberg-Rabinowitsch corrected M/(2 pi R^3) (3 + d ln M/d ln rate), slope fitted across the phases (Macosko 1994, ch. 5)"
	SourceCouette       = "concentric cylinders: M/(2 pi r^2 L) at each cylinder (Macosko 1994, ch. 5; DIN 53019-1)"
	SourcePlates        = "sliding plates: force over sheared area, F/A"
	SourceColumn        = "the log's stress column, as logged"
)

const mPerMM = 1e-3

// Window is the time window of a shear phase whose stress is wanted, with
// the phase's nominal rate (1/s; for the Weissenberg–Rabinowitsch slope).
type Window struct {
	T0S, T1S float64
	RatePerS float64
}

// Stress is the mean wall stress over one window, Pa, with its standard
// uncertainty: the samples' scatter over the root of their number. For a
// Couette cell Inner and Outer are the two cylinders' and Pa is the inner
// one's; otherwise the stress is the same at both walls and Outer is NaN.
type Stress struct {
	Pa, ErrPa           float64
	OuterPa, OuterErrPa float64
	// StationaryPa and MovingPa are the stresses at the stationary and
	// the moving wall.
	StationaryPa, StationaryErrPa float64
	MovingPa, MovingErrPa         float64
	N                             int // log samples in the window
}

// Converter turns the log's torque or stress into wall stress for one
// geometry.
type Converter struct {
	Source string
	// perNM is the stress at the inner wall (or the only one) per N m of
	// torque, Pa/(N m), before a Weissenberg–Rabinowitsch factor; 0 for a
	// stress column.
	perNM float64
	// wrFactor multiplies the stress of a parallel plate (1 otherwise).
	wrFactor, wrFactorErr float64
	// outerRatio is the outer cylinder's stress over the inner's (NaN
	// outside a Couette cell).
	outerRatio float64
	innerMoves bool
	column     bool
	// Slope is the fitted d ln M / d ln rate of a parallel plate (NaN
	// otherwise), SlopeErr its standard uncertainty.
	Slope, SlopeErr float64
}

// NewConverter chooses the conversion for l and g. windows, the shear
// phases' windows, give a parallel plate's Weissenberg–Rabinowitsch slope.
// Warnings say what could not be done; a nil Converter means the log has
// no stress.
func NewConverter(l *rheolog.Log, g geometry.Geometry, windows []Window) (*Converter, []string) {
	c := &Converter{wrFactor: 1, outerRatio: math.NaN(), Slope: math.NaN(), SlopeErr: math.NaN(), innerMoves: g.Rotating != geometry.OuterRotates}
	if g.Kind == geometry.Couette {
		ri, ro := g.InnerRadiusMM, g.OuterRadiusMM
		c.outerRatio = ri * ri / (ro * ro)
	}
	switch {
	case l.StressPa != nil:
		c.column, c.Source = true, SourceColumn
		return c, nil
	case l.TorqueNM == nil:
		return nil, nil
	}
	if l.Force != (g.Kind == geometry.Plates) {
		if l.Force {
			return nil, []string{fmt.Sprintf("wall stress: the log's column %q is a force, which a %s does not measure; no wall stress", l.TorqueHeader, g.Kind)}
		}
		return nil, []string{fmt.Sprintf("wall stress: the log's column %q is a torque, which sliding plates do not have; give their force (N)", l.TorqueHeader)}
	}
	switch g.Kind {
	case geometry.ConePlate:
		r := g.RadiusMM * mPerMM
		c.perNM, c.Source = 3/(2*math.Pi*r*r*r), SourceCone
	case geometry.ParallelPlate:
		r := g.RadiusMM * mPerMM
		c.perNM = 1 / (2 * math.Pi * r * r * r)
		n, ne, ok := torqueSlope(l, windows)
		if ok {
			c.Slope, c.SlopeErr = n, ne
			c.wrFactor, c.wrFactorErr, c.Source = 3+n, ne, SourcePlateWR
		} else {
			c.wrFactor, c.wrFactorErr, c.Source = 4, 0, SourcePlateApparent
		}
	case geometry.Couette:
		if !(g.LengthMM > 0) {
			return nil, []string{"wall stress: a Couette cell's torque needs the immersed length, geometry.length_mm; no wall stress"}
		}
		ri := g.InnerRadiusMM * mPerMM
		c.perNM, c.Source = 1/(2*math.Pi*ri*ri*g.LengthMM*mPerMM), SourceCouette
	case geometry.Plates:
		if !(g.AreaMM2 > 0) {
			return nil, []string{"wall stress: sliding plates' force needs the sheared area, geometry.area_mm2; no wall stress"}
		}
		c.perNM, c.Source = 1/(g.AreaMM2*mPerMM*mPerMM), SourcePlates
	}
	return c, nil
}

// Series returns the log's wall stress at every sample, Pa (at the inner
// cylinder of a Couette cell).
func (c *Converter) Series(l *rheolog.Log) []float64 {
	out := make([]float64, len(l.TimeS))
	for i := range out {
		if c.column {
			out[i] = l.StressPa[i]
		} else {
			out[i] = l.TorqueNM[i] * c.perNM * c.wrFactor
		}
	}
	return out
}

// minWindowSamples is the fewest log samples in a window for a mean with
// an uncertainty.
const minWindowSamples = 2

// Mean returns the mean wall stress over w.
func (c *Converter) Mean(l *rheolog.Log, w Window) (Stress, bool) {
	i, j := l.Window(w.T0S, w.T1S)
	if j-i < minWindowSamples {
		return Stress{}, false
	}
	s := c.Series(l)[i:j]
	m, sd := meanSD(s)
	e := sd / math.Sqrt(float64(len(s)))
	if c.wrFactor != 0 && c.wrFactorErr > 0 {
		// The Weissenberg–Rabinowitsch factor's uncertainty, shared by
		// every sample.
		e = math.Hypot(e, m/c.wrFactor*c.wrFactorErr)
	}
	st := Stress{Pa: m, ErrPa: e, OuterPa: math.NaN(), OuterErrPa: math.NaN(), N: len(s)}
	st.StationaryPa, st.StationaryErrPa, st.MovingPa, st.MovingErrPa = m, e, m, e
	if !math.IsNaN(c.outerRatio) {
		st.OuterPa, st.OuterErrPa = m*c.outerRatio, e*c.outerRatio
		if c.innerMoves {
			st.StationaryPa, st.StationaryErrPa = st.OuterPa, st.OuterErrPa
		} else {
			st.MovingPa, st.MovingErrPa = st.OuterPa, st.OuterErrPa
		}
	}
	return st, true
}

// torqueSlope fits ln |M| against ln |rate| over the windows' mean torques
// (least squares on a line), for the Weissenberg–Rabinowitsch correction.
func torqueSlope(l *rheolog.Log, windows []Window) (n, nErr float64, ok bool) {
	var xs, ys []float64
	for _, w := range windows {
		i, j := l.Window(w.T0S, w.T1S)
		if j-i < minWindowSamples || w.RatePerS == 0 || math.IsNaN(w.RatePerS) {
			continue
		}
		m, _ := meanSD(l.TorqueNM[i:j])
		if m == 0 {
			continue
		}
		xs, ys = append(xs, math.Log(math.Abs(w.RatePerS))), append(ys, math.Log(math.Abs(m)))
	}
	if len(xs) < 2 {
		return 0, 0, false
	}
	if slices.Max(xs)-slices.Min(xs) < minLogRateSpan {
		return 0, 0, false
	}
	b, be := lineSlope(xs, ys)
	return b, be, true
}

// minLogRateSpan: rates differing by less than 5 % give no slope worth a
// correction.
const minLogRateSpan = 0.05

// lineSlope fits y = a + b x by least squares and returns b and its
// standard error (0 from two points, which the line meets exactly).
func lineSlope(xs, ys []float64) (b, be float64) {
	n := float64(len(xs))
	mx, _ := meanSD(xs)
	my, _ := meanSD(ys)
	var sxx, sxy float64
	for i := range xs {
		sxx += (xs[i] - mx) * (xs[i] - mx)
		sxy += (xs[i] - mx) * (ys[i] - my)
	}
	b = sxy / sxx
	if len(xs) > 2 {
		var rss float64
		for i := range xs {
			r := ys[i] - my - b*(xs[i]-mx)
			rss += r * r
		}
		be = math.Sqrt(rss / (n - 2) / sxx)
	}
	return b, be
}

func meanSD(v []float64) (float64, float64) {
	var m float64
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	if len(v) < 2 {
		return m, math.NaN()
	}
	var ss float64
	for _, x := range v {
		ss += (x - m) * (x - m)
	}
	return m, math.Sqrt(ss / float64(len(v)-1))
}
