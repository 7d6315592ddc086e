package figure

import (
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Figure heights, cm: the profiles and the displacement nearly square, the
// stacked slip panels taller, the wide maps and histograms a strip.
const (
	profileHeightCM   = 7.5
	afterStopHeightCM = 7.5
	slipHeightCM      = 9.5
	spaceTimeHeightCM = 6.5
	detectionHeightCM = 6
)

// dataMargin is the room left between the data and the frame along a value
// axis, as a fraction of the data's span: enough that no marker sits on the
// frame, far less than a tick interval.
const dataMargin = 0.04

// withMargin widens [lo, hi] by dataMargin on each side (to a unit span
// when it is empty).
func withMargin(lo, hi float64) (float64, float64) {
	if !(hi > lo) {
		return lo - 0.5, lo + 0.5
	}
	m := dataMargin * (hi - lo)
	return lo - m, hi + m
}

// finite reports whether every value is a finite number.
func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// segments splits pts into runs of finite points, so that an unknown value
// breaks a line instead of failing it.
func segments(pts plotter.XYs) []plotter.XYs {
	var out []plotter.XYs
	var cur plotter.XYs
	for _, p := range pts {
		if finite(p.X, p.Y) {
			cur = append(cur, p)
			continue
		}
		if len(cur) > 0 {
			out = append(out, cur)
		}
		cur = nil
	}
	if len(cur) > 0 {
		out = append(out, cur)
	}
	return out
}

// xyErrs is points with symmetric errors in y, for plotter.YErrorBars.
type xyErrs struct {
	plotter.XYs
	plotter.YErrors
}

// lineStyle is a line in colour c, widthPt wide, with dashes d.
func lineStyle(c color.Color, widthPt float64, d []vg.Length) draw.LineStyle {
	return draw.LineStyle{Color: c, Width: vg.Points(widthPt), Dashes: d}
}

// addLine adds the finite runs of pts to the panel's plot as a line, and
// names it in the legend when name is not empty.
func addLine(pn *Panel, pts plotter.XYs, st draw.LineStyle, name string) error {
	for _, seg := range segments(pts) {
		l, err := plotter.NewLine(seg)
		if err != nil {
			return err
		}
		l.LineStyle = st
		pn.Plot.Add(l)
	}
	if name != "" {
		pn.AddLegend(name, lineSymbol{st})
	}
	return nil
}

// addPoints adds markers with error bars (errs may be nil) for the finite
// points; points with an unknown error get no bar. The legend entry, when
// name is not empty, shows the marker with a bar when there are bars, after
// the symbols of the line (if any) drawn through the points.
func addPoints(pn *Panel, pts plotter.XYs, errs []float64, c color.Color, shape draw.GlyphDrawer, name string, through ...draw.LineStyle) error {
	var xy plotter.XYs
	var eb xyErrs
	for i, q := range pts {
		if !finite(q.X, q.Y) {
			continue
		}
		xy = append(xy, q)
		if errs != nil && finite(errs[i]) && errs[i] > 0 {
			eb.XYs = append(eb.XYs, q)
			eb.YErrors = append(eb.YErrors, struct{ Low, High float64 }{errs[i], errs[i]})
		}
	}
	if len(xy) == 0 {
		return nil
	}
	if len(eb.XYs) > 0 {
		bars, err := plotter.NewYErrorBars(eb)
		if err != nil {
			return err
		}
		bars.Color, bars.Width, bars.CapWidth = c, vg.Points(House.ErrorBarPt), vg.Points(House.ErrorCapPt)
		pn.Plot.Add(bars)
	}
	s, err := plotter.NewScatter(xy)
	if err != nil {
		return err
	}
	g := draw.GlyphStyle{Color: c, Radius: vg.Points(House.MarkerRadiusPt), Shape: shape}
	s.GlyphStyle = g
	pn.Plot.Add(s)
	if name != "" {
		var sym []plot.Thumbnailer
		for _, l := range through {
			sym = append(sym, lineSymbol{l})
		}
		pn.AddLegend(name, append(sym, markerSymbol{glyph: g, bar: len(eb.XYs) > 0})...)
	}
	return nil
}

// vLine adds a vertical line at x from y0 to y1 (data units).
func vLine(pn *Panel, x, y0, y1 float64, st draw.LineStyle) error {
	return addLine(pn, plotter.XYs{{X: x, Y: y0}, {X: x, Y: y1}}, st, "")
}

// span is a shaded rectangle from (x0, y0) to (x1, y1) in data units.
func span(x0, x1, y0, y1 float64, c color.Color) (*plotter.Polygon, error) {
	poly, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
	if err != nil {
		return nil, err
	}
	poly.Color = c
	poly.LineStyle.Width = 0
	return poly, nil
}
