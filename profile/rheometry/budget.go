package rheometry

import (
	"fmt"
	"math"

	"gaptrace/calib/geometry"
	"gaptrace/profile/layers"
	"gaptrace/profile/uncertainty"
)

// Shared holds the standard uncertainties of what every track of a profile
// shares: the calibration, the time base and the camera's common motion.
// A zero field is an exact input.
type Shared struct {
	// StationaryWallUM and MovingWallUM are the standard uncertainties of
	// the wall lines' heights, um (the wall fit's, times the scale).
	StationaryWallUM, MovingWallUM float64
	// GapScale is true when the scale is the gap over the detected wall
	// distance: the walls then set the scale, and ScaleRel is not used.
	GapScale bool
	// ScaleRel is the relative standard uncertainty of a scale given by the
	// experiment file or a target.
	ScaleRel float64
	// GapUM is the standard uncertainty of the gap.
	GapUM float64
	// FrameRateRel is the relative standard uncertainty of the frame rate.
	FrameRateRel float64
	// VelocityRel is the relative standard uncertainty of the tracked
	// velocities themselves (a Type B evaluation of detection and linking;
	// see profile.TrackingVelocityRel).
	VelocityRel float64
	// CommonUMPerS is the standard uncertainty of a velocity offset that
	// every tracer of the profile shares (residual camera motion, codec or
	// blur bias), um/s.
	CommonUMPerS float64
}

// Quantities of the budget, named as the summary's fields; a band's are
// BandRate(k) and BandTo(k).
const (
	QBulkRate             = "bulk_rate_per_s"
	QSlipStationary       = "slip_stationary_um_per_s"
	QSlipMoving           = "slip_moving_um_per_s"
	QSlipLengthStationary = "slip_length_stationary_um"
	QSlipLengthMoving     = "slip_length_moving_um"
	QSlipFraction         = "slip_fraction"
)

// BandRate and BandTo name the rate and the upper boundary of band k (from
// 0) in a budget.
func BandRate(k int) string { return fmt.Sprintf("bands[%d].rate_per_s", k) }

// BandTo names the upper boundary of band k (from 0) in a budget.
func BandTo(k int) string { return fmt.Sprintf("bands[%d].to_um", k) }

// inputs of the measurement model, in order.
const (
	inStationary = iota // height of the true stationary wall in measured coordinates, um
	inMoving            // offset of the true moving wall from the measured one, um (gap scale)
	inScale             // relative error of the scale (given scale)
	inGap               // relative error of the gap
	inRate              // relative error of the frame rate
	inCommon            // common velocity offset, um/s
	inVelocity          // relative error of the tracked velocities
	nInputs
)

// Budget evaluates the uncertainty budget of d, decomposed from bins, with
// the shared errors sh: per quantity (the summary's field names), the
// statistical part (the fit's errors from the bootstrap over tracks) and
// each shared component propagated through the decomposition by the law of
// propagation (GUM eq. 10): the layers are moved and rescaled as an error
// of each input would move them, and the same number of bands refitted.
// The measurement model: with a true stationary wall at a and a true
// moving wall at H + m in measured heights, a true scale (1 + e) times the
// one used, a true gap H (1 + g) and a true frame rate (1 + f) times the
// one used, and true velocities (1 + t) times the tracked ones, the true height of a layer is k (y - a), with k = H (1 + g) /
// (H + m - a) for a scale from the gap and k = 1 + e otherwise, and its
// true velocity k (1 + f) (v - c) for a shared offset c.
func (d *Decomposition) Budget(bins []layers.Bin, sh Shared) (map[string]uncertainty.Contributions, error) {
	names := d.quantities()
	in := make([]uncertainty.Input, nInputs)
	in[inStationary] = uncertainty.Input{Component: uncertainty.WallPosition, StdUnc: sh.StationaryWallUM}
	in[inMoving] = uncertainty.Input{Component: uncertainty.WallPosition}
	in[inScale] = uncertainty.Input{Component: uncertainty.Scale}
	if sh.GapScale {
		in[inMoving].StdUnc = sh.MovingWallUM
	} else {
		in[inScale].StdUnc = sh.ScaleRel
	}
	if d.gapAdjustable() && d.GapUM > 0 {
		in[inGap] = uncertainty.Input{Component: uncertainty.Scale, StdUnc: sh.GapUM / d.GapUM}
	} else {
		in[inGap] = uncertainty.Input{Component: uncertainty.Scale}
	}
	in[inRate] = uncertainty.Input{Component: uncertainty.TimeBase, StdUnc: sh.FrameRateRel}
	in[inCommon] = uncertainty.Input{Component: uncertainty.SharedMotion, StdUnc: sh.CommonUMPerS}
	in[inVelocity] = uncertainty.Input{Component: uncertainty.Tracking, StdUnc: sh.VelocityRel}
	var failed error
	f := func(x []float64) []float64 {
		y, err := d.perturbed(bins, x, sh.GapScale, names)
		if err != nil && failed == nil {
			failed = err
		}
		return y
	}
	_, contrib, err := uncertainty.Propagate(f, in)
	if err != nil {
		return nil, err
	}
	if failed != nil {
		return nil, fmt.Errorf("rheometry: budget: %w", failed)
	}
	stat := d.statistical()
	out := make(map[string]uncertainty.Contributions, len(names))
	for j, q := range names {
		c := contrib[j]
		c[uncertainty.Statistical] = stat[q]
		out[q] = c
	}
	return out, nil
}

// BudgetModel returns the measurement model of Budget and its inputs, for
// checking the law of propagation against a Monte Carlo propagation
// (uncertainty.MonteCarlo): outputs in the order of the returned names.
func (d *Decomposition) BudgetModel(bins []layers.Bin, sh Shared) (uncertainty.Model, []uncertainty.Input, []string) {
	names := d.quantities()
	in := []uncertainty.Input{
		inStationary: {Component: uncertainty.WallPosition, StdUnc: sh.StationaryWallUM},
		inMoving:     {Component: uncertainty.WallPosition},
		inScale:      {Component: uncertainty.Scale},
		inGap:        {Component: uncertainty.Scale},
		inRate:       {Component: uncertainty.TimeBase, StdUnc: sh.FrameRateRel},
		inCommon:     {Component: uncertainty.SharedMotion, StdUnc: sh.CommonUMPerS},
		inVelocity:   {Component: uncertainty.Tracking, StdUnc: sh.VelocityRel},
	}
	if sh.GapScale {
		in[inMoving].StdUnc = sh.MovingWallUM
	} else {
		in[inScale].StdUnc = sh.ScaleRel
	}
	if d.gapAdjustable() && d.GapUM > 0 {
		in[inGap].StdUnc = sh.GapUM / d.GapUM
	}
	return func(x []float64) []float64 {
		y, _ := d.perturbed(bins, x, sh.GapScale, names)
		return y
	}, in, names
}

// quantities lists the budget's quantities for d.
func (d *Decomposition) quantities() []string {
	q := []string{QBulkRate, QSlipStationary, QSlipMoving, QSlipLengthStationary, QSlipLengthMoving, QSlipFraction}
	for k := range d.Bands {
		q = append(q, BandRate(k))
		if k < len(d.Bands)-1 {
			q = append(q, BandTo(k))
		}
	}
	return q
}

// values returns d's values of the quantities names.
func (d *Decomposition) values(names []string) []float64 {
	v := map[string]float64{QBulkRate: d.BulkRatePerS, QSlipStationary: d.SlipStationaryUMPerS, QSlipMoving: d.SlipMovingUMPerS,
		QSlipLengthStationary: d.SlipLengthStationaryUM, QSlipLengthMoving: d.SlipLengthMovingUM, QSlipFraction: d.SlipFraction}
	for k, b := range d.Bands {
		v[BandRate(k)] = b.RatePerS
		v[BandTo(k)] = b.ToUM
	}
	out := make([]float64, len(names))
	for i, n := range names {
		x, ok := v[n]
		if !ok {
			x = math.NaN()
		}
		out[i] = x
	}
	return out
}

// statistical returns the fit's own standard errors of the quantities.
func (d *Decomposition) statistical() map[string]float64 {
	v := map[string]float64{QBulkRate: d.BulkRateErrPerS, QSlipStationary: d.SlipStationaryErrUMPerS, QSlipMoving: d.SlipMovingErrUMPerS,
		QSlipLengthStationary: d.SlipLengthStationaryErrUM, QSlipLengthMoving: d.SlipLengthMovingErrUM, QSlipFraction: d.SlipFractionErr}
	for k, b := range d.Bands {
		v[BandRate(k)] = b.RateErrPerS
		v[BandTo(k)] = b.ToErrUM
	}
	return v
}

// gapAdjustable reports whether the geometry's gap is a free length (plates
// and parallel plates), which an error of the gap changes; in a cone-plate
// or a Couette cell it follows from radii and angles.
func (d *Decomposition) gapAdjustable() bool {
	return d.geom.Kind == geometry.Plates || d.geom.Kind == geometry.ParallelPlate
}

// perturbed decomposes bins again as the inputs x would move them and
// returns the quantities names.
func (d *Decomposition) perturbed(bins []layers.Bin, x []float64, gapScale bool, names []string) ([]float64, error) {
	a, m, e, g, f, c := x[inStationary], x[inMoving], x[inScale], x[inGap], x[inRate], x[inCommon]
	f = (1+f)*(1+x[inVelocity]) - 1
	h := d.GapUM
	geom := d.geom
	ht := h
	if d.gapAdjustable() {
		ht = h * (1 + g)
		geom.GapUM = ht
	}
	k := 1 + e
	if gapScale {
		k = ht / (h + m - a)
	}
	nb := make([]layers.Bin, len(bins))
	for i, b := range bins {
		b.YUM = k * (b.YUM - a)
		b.FromUM, b.ToUM = k*(b.FromUM-a), k*(b.ToUM-a)
		b.Value = k * (1 + f) * (b.Value - c)
		b.Err *= k * (1 + f)
		nb[i] = b
	}
	p, err := Decompose(nb, geom, d.WallSpeedUMPerS, Options{bands: len(d.Model.Rates), Criteria: d.criteria})
	if err != nil {
		nan := make([]float64, len(names))
		for i := range nan {
			nan[i] = math.NaN()
		}
		return nan, err
	}
	return p.values(names), nil
}

// ApplyBudget sets the error fields of d to the combined standard
// uncertainties of budget b and decides wall slip again with them (the
// contract's rule: SlipSigma combined standard uncertainties and
// MinSlipFraction of the wall speed).
func (d *Decomposition) ApplyBudget(b map[string]uncertainty.Contributions) {
	set := func(q string, dst *float64) {
		if c, ok := b[q]; ok {
			if u := c.Combined(); !math.IsNaN(u) {
				*dst = u
			}
		}
	}
	set(QBulkRate, &d.BulkRateErrPerS)
	set(QSlipStationary, &d.SlipStationaryErrUMPerS)
	set(QSlipMoving, &d.SlipMovingErrUMPerS)
	set(QSlipLengthStationary, &d.SlipLengthStationaryErrUM)
	set(QSlipLengthMoving, &d.SlipLengthMovingErrUM)
	set(QSlipFraction, &d.SlipFractionErr)
	for k := range d.Bands {
		set(BandRate(k), &d.Bands[k].RateErrPerS)
		if k < len(d.Bands)-1 {
			set(BandTo(k), &d.Bands[k].ToErrUM)
		}
	}
	v := d.WallSpeedUMPerS
	if math.IsNaN(v) {
		v = d.FluidMovingUMPerS
	}
	d.WallSlip = significant(d.SlipStationaryUMPerS, d.SlipStationaryErrUMPerS, v) ||
		(!math.IsNaN(d.SlipMovingUMPerS) && significant(d.SlipMovingUMPerS, d.SlipMovingErrUMPerS, v))
	d.Verdict = VerdictOf(d.WallSlip, d.Banded)
}
