package report

import (
	"cmp"
	"math"
	"slices"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
	"gaptrace/profile"
	"gaptrace/profile/cessation"
	"gaptrace/profile/layers"
	"gaptrace/profile/phases"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
)

// afterStopCurves is the number of times after the stop drawn in the
// displacement figure: enough to show the growth, few enough to tell apart.
const afterStopCurves = 5

// noSlipPoints is the number of points of a curved (Couette) no-slip
// reference profile.
const noSlipPoints = 41

// FromAnalysis returns the report data of a run from its summary, its
// experiment file (may be nil) and the profile stage's result: the velocity
// profile of each shear phase, the space-time maps of velocity and local
// rate, the slip series and the displacement after the stop. The caller
// adds what other stages know (Overlay, Detection, ExperimentYAML).
func FromAnalysis(s *summary.Summary, e *experiment.Experiment, r *profile.Result) *Data {
	d := &Data{Summary: s, Experiment: e}
	if s == nil || r == nil {
		return d
	}
	gapUM := math.NaN()
	switch {
	case s.Calibration != nil:
		gapUM = s.Calibration.GapUM
	case e != nil:
		gapUM = e.Geometry.Gap()
	}
	bounds := phaseBoundaries(s.Phases)
	axis := gapAxis(e)

	for i := range s.ShearPhases {
		var pp *figure.PhaseProfile
		if i < len(r.Shear) {
			pp = phaseProfile(&r.Shear[i], &s.ShearPhases[i], gapUM, e)
			if pp != nil {
				pp.Axis = axis
			}
		}
		d.Profiles = append(d.Profiles, pp)
	}

	if m := r.Map; len(m.TS) >= 2 && len(m.YUM) >= 2 {
		d.SpaceTime = &figure.SpaceTime{TS: m.TS, YUM: m.YUM, Values: m.VUMPerS, Quantity: figure.LocalVelocity,
			GapUM: gapUM, PhaseBoundariesS: bounds, Axis: axis}
		d.RateMap = &figure.SpaceTime{TS: m.TS, YUM: m.YUM, Values: m.RatePerS, Quantity: figure.LocalRate,
			GapUM: gapUM, PhaseBoundariesS: bounds, Axis: axis}
	}

	slip := &figure.SlipSeries{PhaseBoundariesS: bounds}
	for _, sh := range r.Shear {
		for _, q := range sh.Series {
			slip.Points = append(slip.Points, figure.SlipPoint{TS: q.TS,
				SlipStationaryUMPerS: q.SlipStationaryUMPerS, SlipStationaryErrUMPerS: q.SlipStationaryErrUMPerS,
				SlipMovingUMPerS: q.SlipMovingUMPerS, SlipMovingErrUMPerS: q.SlipMovingErrUMPerS,
				BulkRatePerS: q.BulkRatePerS, BulkRateErrPerS: q.BulkRateErrPerS})
		}
	}
	if e != nil {
		for _, st := range e.Program() {
			slip.Nominal = append(slip.Nominal, figure.RateStep{StartS: st.StartS, EndS: st.EndS, RatePerS: st.RatePerS})
		}
	} else {
		for _, sp := range s.ShearPhases {
			slip.Nominal = append(slip.Nominal, figure.RateStep{StartS: sp.StartS, EndS: sp.EndS, RatePerS: num(sp.NominalRatePerS)})
		}
	}
	if len(slip.Points) > 0 {
		slices.SortFunc(slip.Points, func(a, b figure.SlipPoint) int { return cmp.Compare(a.TS, b.TS) })
		d.Slip = slip
	}

	for i, sp := range s.ShearPhases {
		if su := startUp(i+1, &sp, gapUM); su != nil {
			su.Axis = axis
			d.StartUps = append(d.StartUps, su)
		}
	}

	if c := r.Cessation; c != nil && s.AfterStop != nil {
		d.AfterStop = afterStop(c, s.AfterStop, gapUM)
		if d.AfterStop != nil {
			d.AfterStop.Axis = axis
		}
	}
	return d
}

// startUp returns the start-up figure's data of shear phase n from its
// time-resolved windows (nil without them).
func startUp(n int, sp *summary.ShearPhase, gapUM float64) *figure.StartUp {
	if len(sp.InTime) == 0 {
		return nil
	}
	su := &figure.StartUp{Phase: n, WindowS: num(sp.InTimeWindowS), NominalRatePerS: num(sp.NominalRatePerS), GapUM: gapUM,
		OnsetS: num(sp.InhomogeneityOnsetS), OnsetErrS: num(sp.InhomogeneityOnsetErrS), StressPeakS: num(sp.StressPeakS)}
	for _, w := range sp.InTime {
		q := figure.StartUpWindow{AfterStartS: (w.TStartS+w.TEndS)/2 - sp.StartS,
			BoundaryUM: math.NaN(), BoundaryErrUM: math.NaN(),
			LowerRatePerS: num(w.BulkRatePerS), LowerRateErrPerS: num(w.BulkRateErrPerS),
			UpperRatePerS: num(w.BulkRatePerS), UpperRateErrPerS: num(w.BulkRateErrPerS)}
		if len(w.Bands) > 1 {
			a, b := w.Bands[0], w.Bands[len(w.Bands)-1]
			q.BoundaryUM, q.BoundaryErrUM = num(a.ToUM), num(a.ToErrUM)
			q.LowerRatePerS, q.LowerRateErrPerS = num(a.RatePerS), num(a.RateErrPerS)
			q.UpperRatePerS, q.UpperRateErrPerS = num(b.RatePerS), num(b.RateErrPerS)
		}
		su.Windows = append(su.Windows, q)
	}
	return su
}

// gapAxis is how the figures draw the position across the gap of e's
// tool: the radial position from the inner cylinder in a Couette cell,
// the height above the stationary wall otherwise.
func gapAxis(e *experiment.Experiment) figure.GapAxis {
	if e == nil || e.Geometry.Kind != geometry.Couette {
		return figure.GapAxis{}
	}
	return figure.GapAxis{Radial: true, InnerMoving: e.Geometry.Rotating != geometry.OuterRotates}
}

// phaseBoundaries are the times at which the time line changes phase.
func phaseBoundaries(ps []phases.Phase) []float64 {
	var b []float64
	for i, p := range ps {
		if i > 0 {
			b = append(b, p.StartS)
		}
	}
	return b
}

// phaseProfile is the figure data of one shear phase, nil when it has no
// steady profile.
func phaseProfile(sh *profile.Shear, sp *summary.ShearPhase, gapUM float64, e *experiment.Experiment) *figure.PhaseProfile {
	v := sh.Step.WallSpeedUMPerS
	if !known(v) || v == 0 {
		v = num(sp.WallSpeedUMPerS)
	}
	pp := &figure.PhaseProfile{GapUM: gapUM, WallSpeedUMPerS: v}
	for _, b := range sh.Steady.Bins {
		if b.Known() {
			pp.Points = append(pp.Points, figure.ProfilePoint{YUM: b.YUM, VUMPerS: b.Value, ErrUMPerS: b.Err, N: b.N})
		}
	}
	if len(pp.Points) == 0 {
		return nil
	}
	for _, q := range sh.Fit {
		pp.Fit = append(pp.Fit, figure.VelocityPoint{YUM: q.YUM, VUMPerS: q.VUMPerS})
	}
	for _, b := range sp.Bands {
		pp.Bands = append(pp.Bands, figure.Band{FromUM: num(b.FromUM), ToUM: num(b.ToUM), RatePerS: num(b.RatePerS)})
	}
	if e != nil && e.Geometry.Kind == geometry.Couette {
		for i := range noSlipPoints {
			y := gapUM * float64(i) / (noSlipPoints - 1)
			pp.NoSlip = append(pp.NoSlip, figure.VelocityPoint{YUM: y, VUMPerS: e.Geometry.Reference(y, v)})
		}
	}
	return pp
}

// afterStop picks afterStopCurves times, spread over the observed ones,
// with the fitted picture at each.
func afterStop(c *cessation.Result, a *summary.AfterStop, gapUM float64) *figure.AfterStop {
	out := &figure.AfterStop{GapUM: gapUM, NoiseFloorUM: num(a.NoiseFloorUM), PlaneUM: math.NaN()}
	if a.Mode != nil && *a.Mode == cessation.ModeBulk {
		out.PlaneUM = num(a.PlaneUM)
	}
	var withData []cessation.TimeProfile
	for _, tp := range c.Profiles {
		if slices.ContainsFunc(tp.Bins, layers.Bin.Known) {
			withData = append(withData, tp)
		}
	}
	n := len(withData)
	if n == 0 {
		return nil
	}
	picks := []int{n - 1}
	if n > 1 {
		picks = picks[:0]
		for k := range min(afterStopCurves, n) {
			idx := int(math.Round(float64(k) * float64(n-1) / float64(min(afterStopCurves, n)-1)))
			if len(picks) == 0 || picks[len(picks)-1] != idx {
				picks = append(picks, idx)
			}
		}
	}
	for _, i := range picks {
		tp := withData[i]
		dp := figure.DisplacementProfile{TAfterStopS: tp.TAfterS}
		for _, b := range tp.Bins {
			if b.Known() {
				dp.Points = append(dp.Points, figure.DisplacementPoint{YUM: b.YUM, DxUM: b.Value, ErrUM: b.Err, N: b.N})
			}
		}
		for _, q := range c.Curve(tp.TAfterS) {
			dp.Fit = append(dp.Fit, figure.DisplacementCurvePoint{YUM: q.YUM, DxUM: q.DXUM})
		}
		out.Profiles = append(out.Profiles, dp)
	}
	return out
}
