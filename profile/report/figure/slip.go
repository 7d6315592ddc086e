package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
)

// SlipPoint is the decomposition of the imposed motion in one time window.
// NaN marks an unknown value (e.g. at rest).
type SlipPoint struct {
	TS                                            float64 // window centre, s
	SlipStationaryUMPerS, SlipStationaryErrUMPerS float64 // fluid speed at the stationary wall, um/s
	SlipMovingUMPerS, SlipMovingErrUMPerS         float64 // wall speed minus fluid speed at the moving wall, um/s
	BulkRatePerS, BulkRateErrPerS                 float64 // shear rate of the bulk, s⁻¹
}

// RateStep is the nominal rate of one segment of the motion program.
type RateStep struct {
	StartS, EndS float64 // s
	RatePerS     float64 // s⁻¹
}

// SlipSeries is the slip and bulk rate through the experiment.
type SlipSeries struct {
	Points           []SlipPoint
	Nominal          []RateStep // the imposed program, drawn as a reference
	PhaseBoundariesS []float64  // s
}

// Check reports the first value that makes s impossible to draw.
func (s *SlipSeries) Check() error {
	if len(s.Points) == 0 {
		return fmt.Errorf("figure: slip series has no points")
	}
	for i, q := range s.Points {
		if !finite(q.TS) {
			return fmt.Errorf("figure: slip point %d has time %g s", i, q.TS)
		}
	}
	return nil
}

// SlipPlot draws the slip velocity at each wall (panel a) and the bulk
// shear rate with the nominal rate (panel b) against time, single column
// wide.
func SlipPlot(ss *SlipSeries) (*Figure, error) {
	if err := ss.Check(); err != nil {
		return nil, err
	}
	s := House
	n := len(ss.Points)
	stat, mov, bulk := make(plotter.XYs, n), make(plotter.XYs, n), make(plotter.XYs, n)
	statErr, movErr, bulkErr := make([]float64, n), make([]float64, n), make([]float64, n)
	tMin, tMax := math.Inf(1), math.Inf(-1)
	tab := NewTable("series", "t_s", "slip_stationary_um_per_s", "slip_stationary_err_um_per_s",
		"slip_moving_um_per_s", "slip_moving_err_um_per_s", "bulk_rate_per_s", "bulk_rate_err_per_s", "nominal_rate_per_s")
	for i, q := range ss.Points {
		stat[i] = plotter.XY{X: q.TS, Y: q.SlipStationaryUMPerS}
		mov[i] = plotter.XY{X: q.TS, Y: q.SlipMovingUMPerS}
		bulk[i] = plotter.XY{X: q.TS, Y: q.BulkRatePerS}
		statErr[i], movErr[i], bulkErr[i] = q.SlipStationaryErrUMPerS, q.SlipMovingErrUMPerS, q.BulkRateErrPerS
		tMin, tMax = math.Min(tMin, q.TS), math.Max(tMax, q.TS)
		tab.Row("window", q.TS, q.SlipStationaryUMPerS, q.SlipStationaryErrUMPerS, q.SlipMovingUMPerS, q.SlipMovingErrUMPerS,
			q.BulkRatePerS, q.BulkRateErrPerS)
	}
	for _, r := range ss.Nominal {
		tMin, tMax = math.Min(tMin, r.StartS), math.Max(tMax, r.EndS)
	}

	top := &Panel{Plot: NewPlot("", "slip velocity (µm/s)")}
	bottom := &Panel{Plot: NewPlot("time t (s)", "shear rate (s^{−1})")}
	for _, pn := range []*Panel{top, bottom} {
		pn.Plot.X.Min, pn.Plot.X.Max = tMin, tMax
	}
	statLine := lineStyle(Blue, s.RefLinePt, s.Dashes[solid])
	movLine := lineStyle(Vermillion, s.RefLinePt, s.Dashes[dashed])
	bulkLine := lineStyle(BluishGreen, s.RefLinePt, s.Dashes[solid])
	if err := addLine(top, stat, statLine, ""); err != nil {
		return nil, err
	}
	if err := addPoints(top, stat, statErr, Blue, s.Markers[0], "stationary wall", statLine); err != nil {
		return nil, err
	}
	if err := addLine(top, mov, movLine, ""); err != nil {
		return nil, err
	}
	if err := addPoints(top, mov, movErr, Vermillion, s.Markers[1], "moving wall", movLine); err != nil {
		return nil, err
	}
	var nominal plotter.XYs
	for _, r := range ss.Nominal {
		nominal = append(nominal, plotter.XY{X: r.StartS, Y: r.RatePerS}, plotter.XY{X: r.EndS, Y: r.RatePerS},
			plotter.XY{X: math.NaN(), Y: math.NaN()})
		tab.Row("nominal", r.StartS, math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN(), r.RatePerS)
		tab.Row("nominal", r.EndS, math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN(), math.NaN(), r.RatePerS)
	}
	if err := addLine(bottom, nominal, lineStyle(s.Ink, s.RefLinePt, s.Dashes[dotted]), "nominal"); err != nil {
		return nil, err
	}
	if err := addLine(bottom, bulk, bulkLine, ""); err != nil {
		return nil, err
	}
	if err := addPoints(bottom, bulk, bulkErr, BluishGreen, s.Markers[2], "bulk", bulkLine); err != nil {
		return nil, err
	}
	phase := lineStyle(color.Gray{Y: 120}, s.BoundaryLinePt, s.Dashes[dashed])
	ranges := [2][2]float64{}
	ranges[0][0], ranges[0][1] = rangeY([]plotter.XYs{stat, mov}, [][]float64{statErr, movErr})
	ranges[1][0], ranges[1][1] = rangeY([]plotter.XYs{bulk, nominal}, [][]float64{bulkErr, nil})
	for k, pn := range []*Panel{top, bottom} {
		ymin, ymax := withMargin(ranges[k][0], ranges[k][1])
		pn.Plot.Y.Min, pn.Plot.Y.Max = ymin, ymax
		for _, tb := range ss.PhaseBoundariesS {
			if tb > tMin && tb < tMax {
				if err := vLine(pn, tb, ymin, ymax, phase); err != nil {
					return nil, err
				}
			}
		}
	}
	for _, tb := range ss.PhaseBoundariesS {
		tab.Row("phase_boundary", tb)
	}
	f, err := Compose(SingleColumnCM, slipHeightCM, [][]*Panel{{top}, {bottom}})
	if err != nil {
		return nil, err
	}
	f.CSV = tab.CSV()
	return f, nil
}

// rangeY is the span of the finite values of the series with their error
// bars (errs may hold nil), widened to include 0.
func rangeY(series []plotter.XYs, errs [][]float64) (lo, hi float64) {
	for k, pts := range series {
		for i, q := range pts {
			if !finite(q.Y) {
				continue
			}
			e := 0.0
			if errs[k] != nil && finite(errs[k][i]) {
				e = math.Abs(errs[k][i])
			}
			lo, hi = math.Min(lo, q.Y-e), math.Max(hi, q.Y+e)
		}
	}
	if hi == lo {
		hi = lo + 1
	}
	return lo, hi
}
