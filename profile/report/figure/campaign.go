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
	NominalRatePerS                               float64 // the imposed rate, s⁻¹
	WallStressPa, WallStressErrPa                 float64 // shear stress at the wall from the rheometer's log, Pa
	SlipStationaryUMPerS, SlipStationaryErrUMPerS float64 // fluid speed at the stationary wall, um/s
	SlipMovingUMPerS, SlipMovingErrUMPerS         float64 // wall speed minus fluid speed at the moving wall, um/s
	SlipFraction, SlipFractionErr                 float64 // share of the wall speed taken by slip
	BulkRatePerS, BulkRateErrPerS                 float64 // shear rate of the bulk, s⁻¹
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

// logXMargin is the factor by which a logarithmic rate axis extends
// beyond the data at each end: the house style's data margin on a linear
// axis, taken as a fraction of a decade.
var logXMargin = math.Pow(10, dataMargin)

// frameX sets the x range of p around the finite values xs.
func frameX(p *plot.Plot, xs []float64, logX bool) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range xs {
		if finite(x) && (!logX || x > 0) {
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	if !(hi >= lo) {
		return
	}
	if logX {
		p.X.Min, p.X.Max = lo/logXMargin, hi*logXMargin
		return
	}
	p.X.Min, p.X.Max = withMargin(lo, hi)
}

// frameY sets the y range of p around the finite values y with their
// errors, 0 included (the no-slip level).
func frameY(p *plot.Plot, y, yErr []float64) {
	pts := make(plotter.XYs, len(y))
	for i := range y {
		pts[i] = plotter.XY{Y: y[i]}
	}
	p.Y.Min, p.Y.Max = withMargin(rangeY([]plotter.XYs{pts}, [][]float64{yErr}))
}

// setLog makes an axis of p logarithmic.
func setLog(a *plot.Axis) {
	a.Scale = plot.LogScale{}
	a.Tick.Marker = plot.LogTicks{Prec: -1}
}

// addGroup adds one group's points to the panel, with y error bars and,
// when xErr is not nil, x error bars, in the k-th series style.
func addGroup(pn *Panel, k int, name string, x, y, xErr, yErr []float64) error {
	c, marker, _ := House.series(k)
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
			bars.Color, bars.Width, bars.CapWidth = c, vg.Points(House.ErrorBarPt), vg.Points(House.ErrorCapPt)
			pn.Plot.Add(bars)
		}
	}
	return addPoints(pn, pts, yErr, c, marker, name)
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

// campaignTable is the CSV of a campaign figure: every point's group and
// numbers.
func campaignTable(pts []CampaignPoint) *Table {
	t := NewTable("group", "nominal_rate_per_s", "wall_stress_pa", "wall_stress_err_pa",
		"slip_stationary_um_per_s", "slip_stationary_err_um_per_s", "slip_moving_um_per_s", "slip_moving_err_um_per_s",
		"slip_fraction", "slip_fraction_err", "bulk_rate_per_s", "bulk_rate_err_per_s")
	for _, p := range pts {
		t.Row(p.Group, p.NominalRatePerS, p.WallStressPa, p.WallStressErrPa, p.SlipStationaryUMPerS, p.SlipStationaryErrUMPerS,
			p.SlipMovingUMPerS, p.SlipMovingErrUMPerS, p.SlipFraction, p.SlipFractionErr, p.BulkRatePerS, p.BulkRateErrPerS)
	}
	return t
}

// compose draws the panels in one column, single column wide and hCM
// high, with the points' table as its CSV.
func compose(pts []CampaignPoint, hCM float64, panels ...*Panel) (*Figure, error) {
	rows := make([][]*Panel, len(panels))
	for i, p := range panels {
		rows[i] = []*Panel{p}
	}
	f, err := Compose(SingleColumnCM, hCM, rows)
	if err != nil {
		return nil, err
	}
	f.CSV = campaignTable(pts).CSV()
	return f, nil
}

// rateLabel is the axis title of the nominal rate.
const rateLabel = "nominal shear rate (s^{−1})"

// CampaignSlipPlot draws the slip velocity at the stationary wall (panel
// a) and at the moving wall (panel b) against the nominal rate, or against
// the wall shear stress when stress is true, one series per group, with
// error bars; single column wide.
func CampaignSlipPlot(pts []CampaignPoint, stress bool) (*Figure, error) {
	xOf := func(p *CampaignPoint) float64 { return p.NominalRatePerS }
	xErrOf := func(p *CampaignPoint) float64 { return math.NaN() }
	xLabel := rateLabel
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
	logX := logAxis(xs)
	var panels []*Panel
	for w, wall := range walls {
		label := ""
		if w == len(walls)-1 {
			label = xLabel
		}
		pn := &Panel{Plot: NewPlot(label, wall.label)}
		if logX {
			setLog(&pn.Plot.X)
		}
		frameX(pn.Plot, xs, logX)
		frameY(pn.Plot, column(pts, all, wall.v), column(pts, all, wall.err))
		if err := zeroLine(pn); err != nil {
			return nil, err
		}
		for k, g := range names {
			x, xe := column(pts, idx[g], xOf), column(pts, idx[g], xErrOf)
			if !stress {
				xe = nil
			}
			name := g
			if w > 0 {
				name = "" // one legend, above panel a
			}
			if err := addGroup(pn, k, name, x, column(pts, idx[g], wall.v), xe, column(pts, idx[g], wall.err)); err != nil {
				return nil, err
			}
		}
		panels = append(panels, pn)
	}
	return compose(pts, CampaignSlipHeightCM, panels...)
}

// CampaignSlipFractionPlot draws the slip fraction against the nominal
// rate, one series per group (per gap), with error bars; single column.
func CampaignSlipFractionPlot(pts []CampaignPoint) (*Figure, error) {
	xOf := func(p *CampaignPoint) float64 { return p.NominalRatePerS }
	yOf := func(p *CampaignPoint) float64 { return p.SlipFraction }
	errOf := func(p *CampaignPoint) float64 { return p.SlipFractionErr }
	if !anyFinite(pts, xOf, yOf) {
		return nil, fmt.Errorf("figure: no point has both a nominal rate and a slip fraction")
	}
	pn := &Panel{Plot: NewPlot(rateLabel, "slip fraction")}
	all := allIndices(len(pts))
	xs := column(pts, all, xOf)
	logX := logAxis(xs)
	if logX {
		setLog(&pn.Plot.X)
	}
	frameX(pn.Plot, xs, logX)
	frameY(pn.Plot, column(pts, all, yOf), column(pts, all, errOf))
	if err := zeroLine(pn); err != nil {
		return nil, err
	}
	names, idx := groups(pts)
	for k, g := range names {
		if err := addGroup(pn, k, g, column(pts, idx[g], xOf), column(pts, idx[g], yOf), nil, column(pts, idx[g], errOf)); err != nil {
			return nil, err
		}
	}
	return compose(pts, CampaignHeightCM, pn)
}

// CampaignBulkRatePlot draws the bulk shear rate against the nominal rate,
// one series per group, with error bars and the no-slip line (bulk rate
// equal to the nominal rate); single column. Both axes are logarithmic
// when the rates span a decade and every error bar stays above zero.
func CampaignBulkRatePlot(pts []CampaignPoint) (*Figure, error) {
	xOf := func(p *CampaignPoint) float64 { return p.NominalRatePerS }
	yOf := func(p *CampaignPoint) float64 { return p.BulkRatePerS }
	errOf := func(p *CampaignPoint) float64 { return p.BulkRateErrPerS }
	if !anyFinite(pts, xOf, yOf) {
		return nil, fmt.Errorf("figure: no point has both a nominal and a bulk rate")
	}
	pn := &Panel{Plot: NewPlot(rateLabel, "bulk shear rate (s^{−1})")}
	p := pn.Plot
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
	// Both axes span the rates, nominal and bulk, so that the no-slip line
	// is the diagonal.
	both := append(append([]float64{}, xs...), column(pts, all, yOf)...)
	if !logLog {
		both = append(both, 0)
	}
	frameX(p, both, logLog)
	p.Y.Min, p.Y.Max = p.X.Min, p.X.Max
	line := plotter.XYs{{X: p.X.Min, Y: p.X.Min}, {X: p.X.Max, Y: p.X.Max}}
	if err := addLine(pn, line, lineStyle(House.Ink, House.RefLinePt, House.Dashes[dotted]), "no slip"); err != nil {
		return nil, err
	}
	names, idx := groups(pts)
	for k, g := range names {
		if err := addGroup(pn, k, g, column(pts, idx[g], xOf), column(pts, idx[g], yOf), nil, column(pts, idx[g], errOf)); err != nil {
			return nil, err
		}
	}
	return compose(pts, CampaignHeightCM, pn)
}

// zeroLine draws a thin grey dashed line at y = 0 across the x range of
// the panel's plot (set by frameX).
func zeroLine(pn *Panel) error {
	p := pn.Plot
	if !(p.X.Max > p.X.Min) || !(p.Y.Min < 0 && p.Y.Max > 0) {
		return nil
	}
	return addLine(pn, plotter.XYs{{X: p.X.Min, Y: 0}, {X: p.X.Max, Y: 0}},
		lineStyle(color.Gray{Y: 120}, House.RefLinePt, House.Dashes[dashed]), "")
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
