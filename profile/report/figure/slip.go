package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
)

// SlipPoint is the decomposition of the imposed motion in one time window.
// NaN marks an unknown value (e.g. at rest).
type SlipPoint struct {
	TS                                            float64 // window centre, s
	SlipStationaryUMPerS, SlipStationaryErrUMPerS float64 // fluid speed at the stationary wall, um/s
	SlipMovingUMPerS, SlipMovingErrUMPerS         float64 // wall speed minus fluid speed at the moving wall, um/s
	BulkRatePerS, BulkRateErrPerS                 float64 // shear rate of the bulk, 1/s
}

// RateStep is the nominal rate of one segment of the motion program.
type RateStep struct {
	StartS, EndS float64 // s
	RatePerS     float64 // 1/s
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

// SlipPlot draws the slip velocity at each wall (top panel) and the bulk
// shear rate with the nominal rate (bottom panel) against time, single
// column wide.
func SlipPlot(s *SlipSeries) (*Figure, error) {
	if err := s.Check(); err != nil {
		return nil, err
	}
	n := len(s.Points)
	stat, mov, bulk := make(plotter.XYs, n), make(plotter.XYs, n), make(plotter.XYs, n)
	statErr, movErr, bulkErr := make([]float64, n), make([]float64, n), make([]float64, n)
	tMin, tMax := math.Inf(1), math.Inf(-1)
	for i, q := range s.Points {
		stat[i] = plotter.XY{X: q.TS, Y: q.SlipStationaryUMPerS}
		mov[i] = plotter.XY{X: q.TS, Y: q.SlipMovingUMPerS}
		bulk[i] = plotter.XY{X: q.TS, Y: q.BulkRatePerS}
		statErr[i], movErr[i], bulkErr[i] = q.SlipStationaryErrUMPerS, q.SlipMovingErrUMPerS, q.BulkRateErrPerS
		tMin, tMax = math.Min(tMin, q.TS), math.Max(tMax, q.TS)
	}
	for _, r := range s.Nominal {
		tMin, tMax = math.Min(tMin, r.StartS), math.Max(tMax, r.EndS)
	}

	top := newPlot("", "slip velocity (µm/s)")
	bottom := newPlot("time t (s)", "bulk shear rate (1/s)")
	for _, p := range []*plot.Plot{top, bottom} {
		p.X.Min, p.X.Max = tMin, tMax
	}
	if err := addLine(top, stat, Blue, refLinePt, nil, ""); err != nil {
		return nil, err
	}
	if err := addPoints(top, stat, statErr, Blue, markers[0], "stationary wall"); err != nil {
		return nil, err
	}
	if err := addLine(top, mov, Vermillion, refLinePt, dashes[1], ""); err != nil {
		return nil, err
	}
	if err := addPoints(top, mov, movErr, Vermillion, markers[1], "moving wall"); err != nil {
		return nil, err
	}
	var nominal plotter.XYs
	for _, r := range s.Nominal {
		nominal = append(nominal, plotter.XY{X: r.StartS, Y: r.RatePerS}, plotter.XY{X: r.EndS, Y: r.RatePerS},
			plotter.XY{X: math.NaN(), Y: math.NaN()})
	}
	if err := addLine(bottom, nominal, Black, refLinePt, dashes[2], "nominal"); err != nil {
		return nil, err
	}
	if err := addLine(bottom, bulk, BluishGreen, refLinePt, nil, ""); err != nil {
		return nil, err
	}
	if err := addPoints(bottom, bulk, bulkErr, BluishGreen, markers[2], "bulk"); err != nil {
		return nil, err
	}
	topLo, topHi := rangeY([]plotter.XYs{stat, mov}, [][]float64{statErr, movErr})
	botLo, botHi := rangeY([]plotter.XYs{bulk, nominal}, [][]float64{bulkErr, nil})
	for k, p := range []*plot.Plot{top, bottom} {
		p.Legend.Top, p.Legend.Left = true, false
		ymin, ymax := topLo, topHi
		if k == 1 {
			ymin, ymax = botLo, botHi
		}
		// Room above the data for the legend.
		const headroom = 0.35 // of the data range
		ymax += headroom * (ymax - ymin)
		p.Y.Min, p.Y.Max = ymin, ymax
		for _, tb := range s.PhaseBoundariesS {
			if tb > tMin && tb < tMax {
				if err := vLine(p, tb, ymin, ymax, color.Gray{Y: 120}, boundaryLnPt, dashes[1]); err != nil {
					return nil, err
				}
			}
		}
	}
	return renderGrid([][]*plot.Plot{{top}, {bottom}}, SingleColumnCM, slipHeightCM)
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
