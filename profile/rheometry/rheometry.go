// Package rheometry splits the imposed motion of one shear phase into wall
// slip and bulk shear: from a velocity profile across the gap it finds the
// bulk shear rate, the fluid's speed at each wall (by extrapolating the fit
// to the wall line), the slip velocities, the Navier slip lengths, the slip
// fraction, and the bands of distinct shear rate, all with standard errors,
// and gives the verdict of the contract (homogeneous, wall_slip, banded,
// wall_slip+banded).
//
// The fit runs in the geometry's Newtonian coordinate u = H v_N(y) / V,
// where v_N is the exact no-slip Newtonian profile (geometry.Reference): u = y
// between plates, and for a Couette cell the curvature of the
// concentric-cylinder profile is taken out, so a Newtonian sample comes out
// as one band. Band rates are slopes dv/du in 1/s (the local shear rate for
// plates; for a Couette cell the rate relative to the Newtonian shape, whose
// mean over the gap is the mean rate).
//
// Heights are in um above the stationary wall, speeds in um/s, rates in 1/s.
package rheometry

import (
	"fmt"
	"math"

	"gaptrace/calib/geometry"
	"gaptrace/profile/bands"
	"gaptrace/profile/layers"
)

// SlipSigma is how many standard errors a slip velocity must exceed to be
// called wall slip (common practice).
const SlipSigma = 3

// MinSlipFraction is the least slip velocity, as a fraction of the wall
// speed, called wall slip: an error of 1% of the gap in placing a wall line
// shifts the extrapolated fluid speed by 1% of the wall speed, so apparent
// slip below 2% cannot be told from a calibration error.
const MinSlipFraction = 0.02

// Verdicts of a shear phase, as summary.json writes them.
const (
	Homogeneous    = "homogeneous"
	WallSlip       = "wall_slip"
	Banded         = "banded"
	WallSlipBanded = "wall_slip+banded"
	// Inconclusive is the verdict of results that contradict themselves or
	// the physics (the plausibility checks of package profile).
	Inconclusive = "inconclusive"
)

// VerdictOf returns the verdict of a shear phase with or without
// significant wall slip and more than one band.
func VerdictOf(wallSlip, banded bool) string {
	switch {
	case wallSlip && banded:
		return WallSlipBanded
	case wallSlip:
		return WallSlip
	case banded:
		return Banded
	}
	return Homogeneous
}

// Band is one layer of uniform local shear rate, from FromUM to ToUM above
// the stationary wall (um), with its rate and the standard errors.
type Band struct {
	FromUM, ToUM          float64
	RatePerS, RateErrPerS float64
	// ToErrUM is the standard error of the boundary ToUM, um; NaN for the
	// top band, which ends at the moving wall.
	ToErrUM float64
}

// Decomposition is the rheometric decomposition of one velocity profile.
type Decomposition struct {
	GapUM           float64
	WallSpeedUMPerS float64 // signed: positive along +x
	// Fluid speed extrapolated to each wall line, um/s.
	FluidStationaryUMPerS, FluidStationaryErrUMPerS float64
	FluidMovingUMPerS, FluidMovingErrUMPerS         float64
	// Slip velocities per the contract: the fluid's velocity at the
	// stationary wall, and the wall's velocity minus the fluid's at the
	// moving wall, both along +x; positive when the fluid lags the wall that
	// drags it in a forward phase, negative in a reversed one (wall speed
	// below zero).
	SlipStationaryUMPerS, SlipStationaryErrUMPerS float64
	SlipMovingUMPerS, SlipMovingErrUMPerS         float64
	// BulkRatePerS is the mean rate of the sample, (v(H) - v(0)) / H from
	// the fit, signed like the wall speed.
	BulkRatePerS, BulkRateErrPerS float64
	// Navier slip lengths b = v_s / (shear rate of the fluid at the
	// wall), um: the rate is that of the band touching the wall (times
	// du/dy there in a Couette cell), not the mean rate, so that a slow
	// band by a wall gives the long slip length it has. Positive when the
	// fluid lags, in either direction.
	SlipLengthStationaryUM, SlipLengthStationaryErrUM float64
	SlipLengthMovingUM, SlipLengthMovingErrUM         float64
	// SlipFraction is (V - bulk rate * H) / V.
	SlipFraction, SlipFractionErr float64
	WallSlip                      bool
	// Bands from the stationary wall up, in y (um); one band means none.
	Bands   []Band
	Banded  bool
	Verdict string
	// Model is the chosen fit in the Newtonian coordinate u; Selection
	// holds every model tried.
	Model     *bands.Model
	Selection *bands.Selection
	geom      geometry.Geometry
	criteria  *bands.Criteria
}

// Options tunes the decomposition; the zero value means the defaults.
type Options struct {
	// Criteria for accepting bands; zero means bands.DefaultCriteria(gap).
	Criteria *bands.Criteria
	// bands, when positive, fits that many bands instead of choosing
	// (the budget's re-evaluations keep the chosen model).
	bands int
}

// Decompose decomposes the profile bins (velocities in um/s) of a phase in
// which the moving wall travels at wallSpeedUMPerS, in geometry g. Layers
// without a value are left out of the fit. A NaN wall speed means unknown
// (a phase found in the video only): what needs it is then NaN.
func Decompose(bins []layers.Bin, g geometry.Geometry, wallSpeedUMPerS float64, o Options) (*Decomposition, error) {
	h := g.Gap()
	if !(h > 0) {
		return nil, fmt.Errorf("rheometry: gap %g um is not positive", h)
	}
	if wallSpeedUMPerS == 0 {
		return nil, fmt.Errorf("rheometry: wall speed %g um/s; a shear phase needs a moving wall", wallSpeedUMPerS)
	}
	var pts []bands.Point
	for _, b := range bins {
		if b.Known() && b.Err > 0 {
			// The layer's value is the mean over its tracers, spread across
			// its width around their mean height: the fit takes the model's
			// mean over that width (bands.Point.Width), so that a layer
			// across a band boundary does not move it.
			w := b.ToUM - b.FromUM
			p := bands.Point{U: newtonianU(g, b.YUM), V: b.Value, Err: b.Err}
			if w > 0 {
				p.Width = newtonianU(g, b.YUM+w/2) - newtonianU(g, b.YUM-w/2)
			}
			pts = append(pts, p)
		}
	}
	c := bands.DefaultCriteria(h)
	if o.Criteria != nil {
		c = *o.Criteria
	}
	var sel *bands.Selection
	var err error
	if o.bands > 0 {
		minW := c.MinWidthUM
		if o.bands == 1 {
			minW = 0
		}
		var m *bands.Model
		if m, err = bands.Fit(pts, o.bands, h, minW); err == nil {
			sel = &bands.Selection{Best: m}
		}
	} else {
		sel, err = bands.Select(pts, h, c)
	}
	if err != nil {
		return nil, fmt.Errorf("rheometry: %w", err)
	}
	m := sel.Best
	d := &Decomposition{GapUM: h, WallSpeedUMPerS: wallSpeedUMPerS, Model: m, Selection: sel, geom: g, criteria: &c}
	v := wallSpeedUMPerS
	d.FluidStationaryUMPerS, d.FluidStationaryErrUMPerS = m.AtErr(0)
	d.FluidMovingUMPerS, d.FluidMovingErrUMPerS = m.AtErr(h)
	d.SlipStationaryUMPerS, d.SlipStationaryErrUMPerS = d.FluidStationaryUMPerS, d.FluidStationaryErrUMPerS
	d.SlipMovingUMPerS, d.SlipMovingErrUMPerS = v-d.FluidMovingUMPerS, d.FluidMovingErrUMPerS
	dv := d.FluidMovingUMPerS - d.FluidStationaryUMPerS
	dvErr := math.Sqrt(math.Max(0, m.Cov(0, 0)+m.Cov(h, h)-2*m.Cov(0, h)))
	d.BulkRatePerS, d.BulkRateErrPerS = dv/h, dvErr/h
	d.SlipFraction, d.SlipFractionErr = (v-dv)/v, dvErr/math.Abs(v)
	d.SlipLengthStationaryUM, d.SlipLengthStationaryErrUM = slipLength(m, g, 0, 0, d.SlipStationaryUMPerS, d.SlipStationaryErrUMPerS, 1)
	d.SlipLengthMovingUM, d.SlipLengthMovingErrUM = slipLength(m, g, h, len(m.Rates)-1, d.SlipMovingUMPerS, d.SlipMovingErrUMPerS, -1)
	if math.IsNaN(v) {
		// Unknown wall speed: the moving wall's slip and the slip fraction
		// stay unknown; the stationary wall's slip is judged against the
		// fluid's speed at the moving wall instead.
		d.SlipMovingUMPerS, d.SlipMovingErrUMPerS = math.NaN(), math.NaN()
		d.SlipLengthMovingUM, d.SlipLengthMovingErrUM = math.NaN(), math.NaN()
		d.SlipFraction, d.SlipFractionErr = math.NaN(), math.NaN()
		v = d.FluidMovingUMPerS
	}
	d.WallSlip = significant(d.SlipStationaryUMPerS, d.SlipStationaryErrUMPerS, v) ||
		(!math.IsNaN(d.SlipMovingUMPerS) && significant(d.SlipMovingUMPerS, d.SlipMovingErrUMPerS, v))
	edges := m.Edges()
	for j, r := range m.Rates {
		b := Band{FromUM: yOfU(g, edges[j]), ToUM: yOfU(g, edges[j+1]),
			RatePerS: r, RateErrPerS: m.RateErrs[j], ToErrUM: math.NaN()}
		if j < len(m.Bounds) {
			b.ToErrUM = m.BoundErrs[j] * dydu(g, m.Bounds[j])
		}
		d.Bands = append(d.Bands, b)
	}
	d.Banded = len(m.Rates) > 1
	d.Verdict = VerdictOf(d.WallSlip, d.Banded)
	return d, nil
}

// significant reports whether slip s (um/s) with error e is wall slip at
// wall speed v.
func significant(s, e, v float64) bool {
	return math.Abs(s) > SlipSigma*e && math.Abs(s) > MinSlipFraction*math.Abs(v)
}

// slipLength returns the Navier slip length b = s / rate at the wall at u
// (0 or H) and its first-order error: s is the slip velocity there with
// error se, the rate the fitted profile's shear rate at the wall (see
// wallRate), from band k next to the wall. The slip is sign times the
// fluid's velocity at the wall plus a constant (the wall speed); its
// covariances with the rate come from the fit's.
func slipLength(m *bands.Model, g geometry.Geometry, u float64, k int, s, se, sign float64) (float64, float64) {
	if math.IsNaN(s) {
		return math.NaN(), math.NaN()
	}
	vw := m.At(u)
	alpha, beta := wallRate(g, u)
	// rate = alpha vw + beta' R with beta' = beta - alpha u (the band's
	// velocity at u = 0 is vw - R u).
	bp := beta - alpha*u
	r := alpha*vw + bp*m.Rates[k]
	if r == 0 {
		return math.NaN(), math.NaN()
	}
	b := s / r
	vv, vr, rr := m.Cov(u, u), m.CovRate(u, k), m.RateErrs[k]*m.RateErrs[k]
	a := sign - b*alpha // db = (a dvw - b bp dR) / r
	return b, math.Sqrt(math.Max(0, a*a*vv+b*b*bp*bp*rr-2*a*b*bp*vr)) / math.Abs(r)
}

// wallRate returns alpha and beta such that the shear rate at the wall at
// u (0 or H) of a profile v = c + R u in the Newtonian coordinate is
// alpha c + beta R, signed like dv/dy. Between plates (and for cones and
// parallel plates at the rim) it is dv/dy = R. In a Couette cell the shear
// rate is r d(v/r)/dr (Bird, Stewart & Lightfoot 2002, Transport
// Phenomena, table B.1; from memory), taken along y: with u = H A (r/Rs -
// Rs/r), A = 1 / (Rm/Rs - Rs/Rm), for the stationary and moving radii Rs
// and Rm, it is -c s/r + R H A 2 Rs s / r^2 at the wall's radius r, where
// s = dr/dy is +1 when the inner cylinder stands still and -1 otherwise.
func wallRate(g geometry.Geometry, u float64) (alpha, beta float64) {
	if g.Kind != geometry.Couette {
		return 0, 1
	}
	rm := g.RotatingRadiusUM()
	in, out := g.InnerRadiusMM*umPerMM, g.OuterRadiusMM*umPerMM
	rs, s := in, 1.0
	if math.Abs(rm-in) < math.Abs(rm-out) {
		rs, s = out, -1
	}
	r := rs
	if u > 0 {
		r = rm
	}
	a := 1 / (rm/rs - rs/rm)
	return -s / r, g.Gap() * a * 2 * rs * s / (r * r)
}

// umPerMM converts the geometry's radii in mm to um.
const umPerMM = 1000

// FitAt returns the fitted velocity at height yUM and its standard error,
// in um/s.
func (d *Decomposition) FitAt(yUM float64) (v, err float64) {
	return d.Model.AtErr(newtonianU(d.geom, yUM))
}

// NewtonianU maps a height y in um to the Newtonian coordinate u of g in
// um: u = H v_N(y) / V, which is y between plates.
func NewtonianU(g geometry.Geometry, yUM float64) float64 { return newtonianU(g, yUM) }

func newtonianU(g geometry.Geometry, y float64) float64 {
	if g.Kind != geometry.Couette {
		return y
	}
	return g.Gap() * g.Reference(y, 1)
}

// uTol is the bisection tolerance of yOfU, far below any measured height.
const uTol = 1e-9

// yOfU inverts newtonianU (monotonic on [0, H]) by bisection.
func yOfU(g geometry.Geometry, u float64) float64 {
	if g.Kind != geometry.Couette {
		return u
	}
	lo, hi := 0.0, g.Gap()
	for hi-lo > uTol*g.Gap() {
		mid := (lo + hi) / 2
		if newtonianU(g, mid) < u {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

// dydu returns dy/du at u, the factor turning an error in u into one in y.
func dydu(g geometry.Geometry, u float64) float64 {
	if g.Kind != geometry.Couette {
		return 1
	}
	y, h := yOfU(g, u), derivStepFraction*g.Gap()
	return 2 * h / (newtonianU(g, y+h) - newtonianU(g, y-h))
}

// derivStepFraction is the step, as a fraction of the gap, of the central
// difference for du/dy: the Newtonian profile's curvature makes its error
// of order 1e-12 of the gap.
const derivStepFraction = 1e-6
