package profile

import (
	"fmt"
	"math"

	"gaptrace/calib/geometry"
	"gaptrace/profile/rheometry"
	"gaptrace/profile/summary"
	"gaptrace/profile/wallstress"
)

// wallStress fills each shear phase's wall stress over its window and its
// stress maximum from the rheometer log o.Log (package wallstress), and
// fits the slip laws across the phases.
func (r *Result) wallStress(o Options, g geometry.Geometry) {
	if o.Log == nil || len(r.Shear) == 0 {
		return
	}
	var ws []wallstress.Window
	for _, sh := range r.Shear {
		ws = append(ws, wallstress.Window{T0S: sh.Steady.T0S, T1S: sh.Steady.T1S, RatePerS: sh.Step.RatePerS})
	}
	conv, warn := wallstress.NewConverter(o.Log, g, ws)
	r.Warnings = append(r.Warnings, warn...)
	if conv == nil {
		if len(warn) == 0 {
			r.Warnings = append(r.Warnings, "wall stress: the rheometer log has no torque or stress column (give --log-torque or --log-stress)")
		}
		return
	}
	series := conv.Series(o.Log)
	var stat, mov []wallstress.Point
	for i := range r.Shear {
		sh := &r.Shear[i]
		sp := &sh.Summary
		st, ok := conv.Mean(o.Log, ws[i])
		if !ok {
			r.Warnings = append(r.Warnings, fmt.Sprintf("wall stress: shear phase %d (%.4g-%.4g s): fewer than two log samples in its window %.4g-%.4g s",
				i+1, sp.StartS, sp.EndS, ws[i].T0S, ws[i].T1S))
			continue
		}
		sp.WallStressPa, sp.WallStressErrPa = summary.Num(st.Pa), summary.Num(st.ErrPa)
		sp.WallStressOuterPa, sp.WallStressOuterErrPa = summary.Num(st.OuterPa), summary.Num(st.OuterErrPa)
		sp.WallStressSource = conv.Source
		if pk, ok := wallstress.FindPeak(o.Log, series, sh.Step.StartS, sh.Step.EndS, sh.Step.RatePerS); ok {
			sp.StressPeakS, sp.StressPeakStrain, sp.StressPeakPa = summary.Num(pk.AfterStartS), summary.Num(pk.Strain), summary.Num(pk.Pa)
			if math.IsNaN(sh.Step.RatePerS) {
				sp.StressPeakStrain = summary.Null
			}
		}
		stat = append(stat, wallstress.Point{StressPa: st.StationaryPa, StressErrPa: st.StationaryErrPa,
			SlipUMPerS: float64(sp.SlipStationaryUMPerS), SlipErrUMPerS: float64(sp.SlipStationaryErrUMPerS),
			Significant: significant(sp.SlipStationaryUMPerS, sp.SlipStationaryErrUMPerS, sp.WallSpeedUMPerS)})
		mov = append(mov, wallstress.Point{StressPa: st.MovingPa, StressErrPa: st.MovingErrPa,
			SlipUMPerS: float64(sp.SlipMovingUMPerS), SlipErrUMPerS: float64(sp.SlipMovingErrUMPerS),
			Significant: significant(sp.SlipMovingUMPerS, sp.SlipMovingErrUMPerS, sp.WallSpeedUMPerS)})
		r.ShearPhases[i] = *sp
	}
	laws := &summary.SlipLaws{Stationary: slipLaw(stat), Moving: slipLaw(mov)}
	if laws.Stationary != nil || laws.Moving != nil {
		r.SlipLaw = laws
	}
}

func slipLaw(pts []wallstress.Point) *summary.SlipLaw {
	l, ok := wallstress.FitSlipLaw(pts)
	if !ok {
		return nil
	}
	return &summary.SlipLaw{Phases: l.Phases, NavierUMPerSPerPa: summary.Num(l.NavierUMPerSPerPa),
		NavierErrUMPerSPerPa: summary.Num(l.NavierErrUMPerSPerPa), PowerLawExponent: summary.Num(l.PowerLawExponent),
		PowerLawExponentErr: summary.Num(l.PowerLawExponentErr), PowerLawCoefficient: summary.Num(l.PowerLawCoefficient),
		PowerLawPhases: l.PowerLawPhases}
}

// significant is the verdict rule's wall slip (package rheometry): at
// least rheometry.SlipSigma standard uncertainties and
// rheometry.MinSlipFraction of the wall speed.
func significant(slip, err, wall summary.Num) bool {
	if !slip.Known() || !err.Known() {
		return false
	}
	v := math.Abs(float64(slip))
	return v >= rheometry.SlipSigma*float64(err) && (!wall.Known() || v >= rheometry.MinSlipFraction*math.Abs(float64(wall)))
}
