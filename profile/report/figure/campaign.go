package figure

import (
	"fmt"
	"image/color"
	"math"
	"sort"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// CampaignPoint is one shear phase of one recording of a campaign, as its
// summary gives it. NaN marks an unknown value.
type CampaignPoint struct {
	// Group is the series the point belongs to (e.g. "gap 800 µm"); points
	// of one group share a colour and a marker.
	Group                                         string
	NominalRatePerS                               float64 // the imposed rate, 1/s
	WallStressPa, WallStressErrPa                 float64 // shear stress at the wall from the rheometer's log, Pa
	SlipStationaryUMPerS, SlipStationaryErrUMPerS float64 // fluid speed at the stationary wall, um/s
	SlipMovingUMPerS, SlipMovingErrUMPerS         float64 // wall speed minus fluid speed at the moving wall, um/s
	SlipFraction, SlipFractionErr                 float64 // share of the wall speed taken by slip
	BulkRatePerS, BulkRateErrPerS                 float64 // shear rate of the bulk, 1/s
}

// CampaignHeightCM is the height of a one-panel campaign figure, cm; the
// two-panel slip figure is CampaignSlipHeightCM.
const (
	CampaignHeightCM     = 7
	CampaignSlipHeightCM = 11
)

// decadeSpan is the ratio of the largest to the smallest rate from which a
// rate axis is logarithmic: a flow curve's rates are spaced by factors, and
// below a decade a linear axis reads better.
const decadeSpan = 10

// groups returns the groups of pts in sorted order and, for each, the
// indices of its points.
func groups(pts []CampaignPoint) ([]string, map[string][]int) {
	idx := map[string][]int{}
	var names []string
	for i, p := range pts {
		if _, ok := idx[p.Group]; !ok {
			names = append(names, p.Group)
		}
		idx[p.Group] = append(idx[p.Group], i)
	}
	sort.Strings(names)
	return names, idx
}

// logAxis reports whether the finite values vs are all positive and span
// at least decadeSpan.
func logAxis(vs []float64) bool {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range vs {
		if !finite(v) {
			continue
		}
		if v <= 0 {
			return false
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return hi >= decadeSpan*lo
}

// Room around the data of a campaign figure: xMargin of the rate span on a
// linear axis (a factor of 1 + xMargin on a logarithmic one), so that end
// points are not cut by the frame, and legendRoom of the y span above the
// data for the legend.
const (
	xMargin    = 0.06
	legendRoom = 0.35
)

// frame sets the ranges of p around the finite points (x, y) with their
// y errors, 0 included on the y axis (the no-slip level).
func frame(p *plot.Plot, x, y, yErr []float64, logX bool) {
	pts := make(plotter.XYs, len(x))
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := range x {
		pts[i] = plotter.XY{X: x[i], Y: y[i]}
		if finite(x[i]) {
			lo, hi = math.Min(lo, x[i]), math.Max(hi, x[i])
		}
	}
	if !(hi >= lo) {
		return
	}
	if logX {
		p.X.Min, p.X.Max = lo/(1+xMargin), hi*(1+xMargin)
	} else {
		pad := xMargin * math.Max(hi-lo, math.Abs(hi))
		p.X.Min, p.X.Max = lo-pad, hi+pad
	}
	yLo, yHi := rangeY([]plotter.XYs{pts}, [][]float64{yErr})
	p.Y.Min, p.Y.Max = yLo, yHi+legendRoom*(yHi-yLo)
}

// setLog makes an axis of p logarithmic.
func setLog(a *plot.Axis) {
	a.Scale = plot.LogScale{}
	a.Tick.Marker = plot.LogTicks{Prec: -1}
}

// series adds one group's points to p, with y error bars and, when xErr is
// not nil, x error bars.
func series(p *plot.Plot, k int, name string, x, y, xErr, yErr []float64) error {
	c := Series[k%len(Series)]
	pts := make(plotter.XYs, len(x))
	for i := range x {
		pts[i] = plotter.XY{X: x[i], Y: y[i]}
	}
	if xErr != nil {
		var eb struct {
			plotter.XYs
			plotter.XErrors
		}
		for i := range x {
			if finite(x[i], y[i], xErr[i]) && xErr[i] > 0 {
				eb.XYs = append(eb.XYs, pts[i])
				eb.XErrors = append(eb.XErrors, struct{ Low, High float64 }{xErr[i], xErr[i]})
			}
		}
		if len(eb.XYs) > 0 {
			bars, err := plotter.NewXErrorBars(eb)
			if err != nil {
				return err
			}
			bars.Color, bars.Width, bars.CapWidth = c, vg.Points(errorBarPt), vg.Points(errorCapPt)
			p.Add(bars)
		}
	}
	return addPoints(p, pts, yErr, c, markers[k%len(markers)], name)
}

// column picks one field of the points of idx.
func column(pts []CampaignPoint, idx []int, f func(*CampaignPoint) float64) []float64 {
	out := make([]float64, len(idx))
	for i, j := range idx {
		out[i] = f(&pts[j])
	}
	return out
}

// anyFinite reports whether some point has finite x and y.
func anyFinite(pts []CampaignPoint, x, y func(*CampaignPoint) float64) bool {
	for i := range pts {
		if finite(x(&pts[i]), y(&pts[i])) {
			return true
		}
	}
	return false
}

// UseStress reports whether the slip figure can be drawn against the wall
// shear stress: every point with a known slip velocity has a known stress.
func UseStress(pts []CampaignPoint) bool {
	n := 0
	for _, p := range pts {
		if !finite(p.SlipStationaryUMPerS) && !finite(p.SlipMovingUMPerS) {
			continue
		}
		if !finite(p.WallStressPa) {
			return false
		}
		n++
	}
	return n > 0
}

// CampaignSlipPlot draws the slip velocity at the stationary wall (top
// panel) and at the moving wall (bottom panel) against the nominal rate,
// or against the wall shear stress when stress is true, one series per
// group, with error bars; single column wide.
func CampaignSlipPlot(pts []CampaignPoint, stress bool) (*Figure, error) {
	xOf := func(p *CampaignPoint) float64 { return p.NominalRatePerS }
	xErrOf := func(p *CampaignPoint) float64 { return math.NaN() }
	xLabel := "nominal shear rate (1/s)"
	if stress {
		xOf = func(p *CampaignPoint) float64 { return p.WallStressPa }
		xErrOf = func(p *CampaignPoint) float64 { return p.WallStressErrPa }
		xLabel = "wall shear stress (Pa)"
	}
	walls := []struct {
		label  string
		v, err func(*CampaignPoint) float64
	}{
		{"slip, stationary wall (µm/s)", func(p *CampaignPoint) float64 { return p.SlipStationaryUMPerS },
			func(p *CampaignPoint) float64 { return p.SlipStationaryErrUMPerS }},
		{"slip, moving wall (µm/s)", func(p *CampaignPoint) float64 { return p.SlipMovingUMPerS },
			func(p *CampaignPoint) float64 { return p.SlipMovingErrUMPerS }},
	}
	if !anyFinite(pts, xOf, walls[0].v) && !anyFinite(pts, xOf, walls[1].v) {
		return nil, fmt.Errorf("figure: no point has both a slip velocity and a %s", xLabel)
	}
	names, idx := groups(pts)
	all := allIndices(len(pts))
	xs := column(pts, all, xOf)
	var panels [][]*plot.Plot
	for w, wall := range walls {
		label := ""
		if w == len(walls)-1 {
			label = xLabel
		}
		p := newPlot(label, wall.label)
		logX := logAxis(xs)
		if logX {
			setLog(&p.X)
		}
		frame(p, xs, column(pts, all, wall.v), column(pts, all, wall.err), logX)
		for k, g := range names {
			x, xe := column(pts, idx[g], xOf), column(pts, idx[g], xErrOf)
			if err := series(p, k, g, x, column(pts, idx[g], wall.v), xe, column(pts, idx[g], wall.err)); err != nil {
				return nil, err
			}
		}
		// The no-slip level: a slip velocity of 0.
		if err := zeroLine(p); err != nil {
			return nil, err
		}
		p.Legend.Top, p.Legend.Left = true, true
		p.Legend.XOffs = vg.Points(legendInsetPt)
		panels = append(panels, []*plot.Plot{p})
	}
	return renderGrid(panels, SingleColumnCM, CampaignSlipHeightCM)
}

// CampaignSlipFractionPlot draws the slip fraction against the nominal
// rate, one series per group (per gap), with error bars; single column.
func CampaignSlipFractionPlot(pts []CampaignPoint) (*Figure, error) {
	xOf := func(p *CampaignPoint) float64 { return p.NominalRatePerS }
	yOf := func(p *CampaignPoint) float64 { return p.SlipFraction }
	if !anyFinite(pts, xOf, yOf) {
		return nil, fmt.Errorf("figure: no point has both a nominal rate and a slip fraction")
	}
	p := newPlot("nominal shear rate (1/s)", "slip fraction")
	all := allIndices(len(pts))
	xs := column(pts, all, xOf)
	logX := logAxis(xs)
	if logX {
		setLog(&p.X)
	}
	frame(p, xs, column(pts, all, yOf), column(pts, all, func(p *CampaignPoint) float64 { return p.SlipFractionErr }), logX)
	names, idx := groups(pts)
	for k, g := range names {
		if err := series(p, k, g, column(pts, idx[g], xOf), column(pts, idx[g], yOf), nil,
			column(pts, idx[g], func(p *CampaignPoint) float64 { return p.SlipFractionErr })); err != nil {
			return nil, err
		}
	}
	if err := zeroLine(p); err != nil {
		return nil, err
	}
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs = vg.Points(legendInsetPt)
	return renderPlot(p, SingleColumnCM, CampaignHeightCM)
}

// CampaignBulkRatePlot draws the bulk shear rate against the nominal rate,
// one series per group, with error bars and the no-slip line (bulk rate
// equal to the nominal rate); single column. Both axes are logarithmic
// when the rates span a decade and every error bar stays above zero.
func CampaignBulkRatePlot(pts []CampaignPoint) (*Figure, error) {
	xOf := func(p *CampaignPoint) float64 { return p.NominalRatePerS }
	yOf := func(p *CampaignPoint) float64 { return p.BulkRatePerS }
	if !anyFinite(pts, xOf, yOf) {
		return nil, fmt.Errorf("figure: no point has both a nominal and a bulk rate")
	}
	p := newPlot("nominal shear rate (1/s)", "bulk shear rate (1/s)")
	all := allIndices(len(pts))
	xs := column(pts, all, xOf)
	lows := column(pts, all, func(p *CampaignPoint) float64 {
		if finite(p.BulkRateErrPerS) {
			return p.BulkRatePerS - p.BulkRateErrPerS
		}
		return p.BulkRatePerS
	})
	logLog := logAxis(xs) && positive(lows)
	if logLog {
		setLog(&p.X)
		setLog(&p.Y)
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, vs := range [][]float64{xs, column(pts, all, yOf)} {
		for _, v := range vs {
			if finite(v) && (!logLog || v > 0) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	// The axes frame the data with room above for the legend; the no-slip
	// line runs across the whole x range.
	if logLog {
		p.X.Min, p.X.Max = lo/(1+xMargin), hi*(1+xMargin)
		p.Y.Min, p.Y.Max = p.X.Min, p.X.Max*math.Pow(p.X.Max/p.X.Min, legendRoom)
	} else {
		lo = math.Min(lo, 0)
		p.X.Min, p.X.Max = lo, hi+xMargin*(hi-lo)
		p.Y.Min, p.Y.Max = lo, hi+legendRoom*(hi-lo)
	}
	line := plotter.XYs{{X: p.X.Min, Y: p.X.Min}, {X: p.X.Max, Y: p.X.Max}}
	if err := addLine(p, line, Black, refLinePt, dashes[2], "no slip"); err != nil {
		return nil, err
	}
	names, idx := groups(pts)
	for k, g := range names {
		if err := series(p, k, g, column(pts, idx[g], xOf), column(pts, idx[g], yOf), nil,
			column(pts, idx[g], func(p *CampaignPoint) float64 { return p.BulkRateErrPerS })); err != nil {
			return nil, err
		}
	}
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs = vg.Points(legendInsetPt)
	return renderPlot(p, SingleColumnCM, CampaignHeightCM)
}

// zeroLine draws a thin grey dashed line at y = 0 across the x range of p
// (set by frame).
func zeroLine(p *plot.Plot) error {
	if !(p.X.Max > p.X.Min) {
		return nil
	}
	return addLine(p, plotter.XYs{{X: p.X.Min, Y: 0}, {X: p.X.Max, Y: 0}}, color.Gray{Y: 120}, refLinePt, dashes[1], "")
}

func positive(vs []float64) bool {
	for _, v := range vs {
		if finite(v) && v <= 0 {
			return false
		}
	}
	return true
}

func allIndices(n int) []int {
	out := make([]int, n)
	for i := range out {
		out[i] = i
	}
	return out
}
