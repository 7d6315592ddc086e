package figure

import (
	"fmt"
	"image/color"
	"math"
	"strconv"

	"gonum.org/v1/plot/plotter"
)

// ProfilePoint is the mean velocity along the flow in one gap bin.
type ProfilePoint struct {
	YUM       float64 // bin centre above the stationary wall, um
	VUMPerS   float64 // mean velocity, um/s
	ErrUMPerS float64 // its standard error, um/s (NaN or 0: no bar)
	N         int     // displacements averaged
}

// VelocityPoint is a point on a model velocity profile.
type VelocityPoint struct {
	YUM     float64 // height above the stationary wall, um
	VUMPerS float64 // velocity, um/s
}

// Band is a layer of uniform local shear rate.
type Band struct {
	FromUM, ToUM float64 // its extent above the stationary wall, um
	RatePerS     float64 // its local shear rate, s⁻¹ (NaN: unknown)
}

// PhaseProfile is the steady velocity profile of one shear phase.
type PhaseProfile struct {
	GapUM           float64         // wall distance H, um
	WallSpeedUMPerS float64         // moving wall speed V, um/s (not 0)
	Points          []ProfilePoint  // measured profile
	Fit             []VelocityPoint // the fitted profile (slip plus bands), in y order
	Bands           []Band          // from the stationary wall up; one band: none found
	// NoSlip is the reference profile without slip of a Newtonian liquid
	// (curved in a Couette cell); nil means the straight line v = V y / H.
	NoSlip []VelocityPoint
	// Axis is how the position across the gap is drawn.
	Axis GapAxis
}

// Check reports the first value that makes p impossible to draw.
func (p *PhaseProfile) Check() error {
	switch {
	case !(p.GapUM > 0) || math.IsInf(p.GapUM, 0):
		return fmt.Errorf("figure: profile gap %g um, must be positive", p.GapUM)
	case p.WallSpeedUMPerS == 0 || !finite(p.WallSpeedUMPerS):
		return fmt.Errorf("figure: profile wall speed %g um/s, must be finite and not zero", p.WallSpeedUMPerS)
	case len(p.Points) == 0:
		return fmt.Errorf("figure: profile has no points")
	}
	for i, b := range p.Bands {
		if !finite(b.FromUM, b.ToUM) || b.ToUM < b.FromUM {
			return fmt.Errorf("figure: band %d from %g to %g um is not an interval", i+1, b.FromUM, b.ToUM)
		}
	}
	return nil
}

// Band shades, alternating light greys that keep the data readable.
var bandShades = []color.Color{color.Gray{Y: 234}, color.Gray{Y: 247}}

// bandBoundaryGrey is the colour of the dash-dotted band boundaries.
var bandBoundaryGrey = color.Gray{Y: 90}

// RateText is a shear rate for a figure, with its unit: 2.5 s⁻¹ in the
// markup of NewPlot.
func RateText(ratePerS float64) string {
	if !finite(ratePerS) {
		return "rate unknown"
	}
	return minusSign(strconv.FormatFloat(ratePerS, 'g', 3, 64)) + " s^{−1}"
}

// ProfilePlot draws v/V against the position across the gap over H: the
// measured profile with its error bars, the fit, the bands (shaded,
// boundaries dash-dotted, each labelled with its rate above the frame), the
// no-slip line, and the walls at the frame's two sides; single column wide.
func ProfilePlot(pp *PhaseProfile) (*Figure, error) {
	pn, tab, err := profilePanel(pp)
	if err != nil {
		return nil, err
	}
	f, err := Compose(SingleColumnCM, profileHeightCM, [][]*Panel{{pn}})
	if err != nil {
		return nil, err
	}
	f.CSV = tab.CSV()
	return f, nil
}

// profilePanel is the panel and the data of ProfilePlot.
func profilePanel(pp *PhaseProfile) (*Panel, *Table, error) {
	if err := pp.Check(); err != nil {
		return nil, nil, err
	}
	s := House
	h, v := pp.GapUM, pp.WallSpeedUMPerS
	x := func(yUM float64) float64 { return pp.Axis.Coord(yUM, h) / h }
	pn := &Panel{Plot: NewPlot(pp.Axis.NormLabel(), "velocity v/V"), WallsX: true}
	p := pn.Plot

	tab := NewTable(profileColumns(pp.Axis)...)
	row := func(series string, yUM, vUM, errUM float64, n int, rate float64) {
		cells := []any{series, yUM}
		if pp.Axis.Column() != "" {
			cells = append(cells, pp.Axis.Coord(yUM, h))
		}
		nv := math.NaN()
		if n > 0 {
			nv = float64(n)
		}
		cells = append(cells, x(yUM), vUM, errUM, vUM/v, nv, rate)
		tab.Row(cells...)
	}

	lo, hi := 0.0, 1.0
	pts := make(plotter.XYs, len(pp.Points))
	errs := make([]float64, len(pp.Points))
	for i, q := range pp.Points {
		pts[i] = plotter.XY{X: x(q.YUM), Y: q.VUMPerS / v}
		errs[i] = math.Abs(q.ErrUMPerS / v)
		if finite(pts[i].Y) {
			e := 0.0
			if finite(errs[i]) {
				e = errs[i]
			}
			lo, hi = math.Min(lo, pts[i].Y-e), math.Max(hi, pts[i].Y+e)
		}
		row("measured", q.YUM, q.VUMPerS, q.ErrUMPerS, q.N, math.NaN())
	}
	for _, q := range pp.Fit {
		if finite(q.VUMPerS) {
			lo, hi = math.Min(lo, q.VUMPerS/v), math.Max(hi, q.VUMPerS/v)
		}
	}
	yMin, yMax := withMargin(lo, hi)
	p.Y.Min, p.Y.Max = yMin, yMax
	p.X.Min, p.X.Max = 0, 1

	boundary := lineStyle(bandBoundaryGrey, s.BoundaryLinePt, s.Dashes[dashDot])
	if len(pp.Bands) > 1 {
		for i, b := range pp.Bands {
			x0, x1 := x(b.FromUM), x(b.ToUM)
			sp, err := span(math.Min(x0, x1), math.Max(x0, x1), yMin, yMax, bandShades[i%2])
			if err != nil {
				return nil, nil, err
			}
			p.Add(sp)
			if i > 0 {
				if err := vLine(pn, x0, yMin, yMax, boundary); err != nil {
					return nil, nil, err
				}
			}
			pn.Notes = append(pn.Notes, Note{X: (x0 + x1) / 2, Text: RateText(b.RatePerS)})
			row(fmt.Sprintf("band %d", i+1), b.FromUM, math.NaN(), math.NaN(), 0, b.RatePerS)
			row(fmt.Sprintf("band %d", i+1), b.ToUM, math.NaN(), math.NaN(), 0, b.RatePerS)
		}
	}

	noSlip := pp.NoSlip
	if noSlip == nil {
		noSlip = []VelocityPoint{{YUM: 0, VUMPerS: 0}, {YUM: h, VUMPerS: v}}
	}
	ns := make(plotter.XYs, len(noSlip))
	for i, q := range noSlip {
		ns[i] = plotter.XY{X: x(q.YUM), Y: q.VUMPerS / v}
		row("no slip", q.YUM, q.VUMPerS, math.NaN(), 0, math.NaN())
	}
	if err := addLine(pn, ns, lineStyle(s.Ink, s.RefLinePt, s.Dashes[dotted]), "no slip"); err != nil {
		return nil, nil, err
	}
	if len(pp.Fit) > 0 {
		fit := make(plotter.XYs, len(pp.Fit))
		for i, q := range pp.Fit {
			fit[i] = plotter.XY{X: x(q.YUM), Y: q.VUMPerS / v}
			row("fit", q.YUM, q.VUMPerS, math.NaN(), 0, math.NaN())
		}
		if err := addLine(pn, fit, lineStyle(Vermillion, s.DataLinePt, s.Dashes[dashed]), "fit"); err != nil {
			return nil, nil, err
		}
	}
	if err := addPoints(pn, pts, errs, Blue, s.Markers[0], "measured ± s.e."); err != nil {
		return nil, nil, err
	}
	if len(pp.Bands) > 1 {
		pn.AddLegend("band boundary", lineSymbol{boundary})
	}
	return pn, tab, nil
}

// profileColumns is the CSV header of a profile figure.
func profileColumns(a GapAxis) []string {
	c := []string{"series", "y_um"}
	if a.Column() != "" {
		c = append(c, a.Column())
	}
	return append(c, "position_over_gap", "v_um_per_s", "v_err_um_per_s", "v_over_wall_speed", "n", "band_rate_per_s")
}
