package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
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
	RatePerS     float64 // its local shear rate, 1/s (NaN: unknown)
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
var bandShades = []color.Color{color.Gray{Y: 236}, color.Gray{Y: 250}}

// ProfilePlot draws v/V against y/H: the measured profile with its error
// bars, the fit, the bands (shaded, boundaries dashed, each labelled with
// its rate), the no-slip line and the walls, single column wide.
func ProfilePlot(pp *PhaseProfile) (*Figure, error) {
	if err := pp.Check(); err != nil {
		return nil, err
	}
	h, v := pp.GapUM, pp.WallSpeedUMPerS
	p := newPlot("height across the gap y/H", "velocity v/V")

	// Value range first, so the shading and wall lines span it.
	lo, hi := 0.0, 1.0
	pts := make(plotter.XYs, len(pp.Points))
	errs := make([]float64, len(pp.Points))
	for i, q := range pp.Points {
		pts[i] = plotter.XY{X: q.YUM / h, Y: q.VUMPerS / v}
		errs[i] = math.Abs(q.ErrUMPerS / v)
		if finite(pts[i].Y) {
			e := 0.0
			if finite(errs[i]) {
				e = errs[i]
			}
			lo, hi = math.Min(lo, pts[i].Y-e), math.Max(hi, pts[i].Y+e)
		}
	}
	// Room above the data for the legend and the band labels, which sit a
	// little above the data.
	const (
		headroom      = 0.5  // of the data range
		bandLabelRise = 0.08 // of the data range
	)
	yMin, yMax := lo-floorMargin*(hi-lo), hi+headroom*(hi-lo)
	p.Y.Min, p.Y.Max = yMin, yMax
	p.X.Min, p.X.Max = -wallMargin, 1+wallMargin

	if len(pp.Bands) > 1 {
		var labels plotter.XYLabels
		for i, b := range pp.Bands {
			sp, err := span(b.FromUM/h, b.ToUM/h, yMin, yMax, bandShades[i%2])
			if err != nil {
				return nil, err
			}
			p.Add(sp)
			if i > 0 {
				if err := vLine(p, b.FromUM/h, yMin, yMax, color.Gray{Y: 90}, boundaryLnPt, dashes[3]); err != nil {
					return nil, err
				}
			}
			txt := "rate ?"
			if finite(b.RatePerS) {
				txt = fmt.Sprintf("%.3g /s", b.RatePerS)
			}
			labels.XYs = append(labels.XYs, plotter.XY{X: (b.FromUM + b.ToUM) / 2 / h, Y: hi + bandLabelRise*(hi-lo)})
			labels.Labels = append(labels.Labels, txt)
		}
		l, err := plotter.NewLabels(labels)
		if err != nil {
			return nil, err
		}
		for i := range l.TextStyle {
			l.TextStyle[i].Font.Size = vg.Points(legendPt)
			l.TextStyle[i].Font.Variant = sansVariant
			l.TextStyle[i].XAlign = draw.XCenter
		}
		p.Add(l)
	}
	for _, x := range []float64{0, 1} {
		if err := vLine(p, x, yMin, yMax, Black, wallLinePt, nil); err != nil {
			return nil, err
		}
	}

	noSlip := plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}}
	if pp.NoSlip != nil {
		noSlip = make(plotter.XYs, len(pp.NoSlip))
		for i, q := range pp.NoSlip {
			noSlip[i] = plotter.XY{X: q.YUM / h, Y: q.VUMPerS / v}
		}
	}
	if err := addLine(p, noSlip, Black, refLinePt, dashes[2], "no slip"); err != nil {
		return nil, err
	}
	if len(pp.Fit) > 0 {
		fit := make(plotter.XYs, len(pp.Fit))
		for i, q := range pp.Fit {
			fit[i] = plotter.XY{X: q.YUM / h, Y: q.VUMPerS / v}
		}
		if err := addLine(p, fit, Vermillion, dataLinePt, dashes[1], "fit"); err != nil {
			return nil, err
		}
	}
	if err := addPoints(p, pts, errs, Blue, markers[0], "measured ± s.e."); err != nil {
		return nil, err
	}
	if len(pp.Bands) > 1 {
		// A legend entry for the band boundaries.
		p.Legend.Add("band boundary", lineThumb{draw.LineStyle{Color: color.Gray{Y: 90},
			Width: vg.Points(boundaryLnPt), Dashes: dashes[3]}})
	}
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs = vg.Points(legendInsetPt)
	return renderPlot(p, SingleColumnCM, profileHeightCM)
}
