package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
)

// StartUpWindow is the decomposition of one time-resolved window of a shear
// phase. NaN marks an unknown value.
type StartUpWindow struct {
	AfterStartS float64 // window middle, s after the phase's start
	// BoundaryUM is the height of the first band boundary (NaN without
	// bands), um, with its standard uncertainty.
	BoundaryUM, BoundaryErrUM float64
	// Lower and upper band rates, s⁻¹, with uncertainties; without bands
	// both are the one rate of the window.
	LowerRatePerS, LowerRateErrPerS float64
	UpperRatePerS, UpperRateErrPerS float64
}

// StartUp is the band boundary and the bands' rates through one shear
// phase.
type StartUp struct {
	Phase           int     // shear phase number, from 1
	WindowS         float64 // length of the windows, s
	Windows         []StartUpWindow
	NominalRatePerS float64 // NaN when unknown
	GapUM           float64
	// OnsetS and OnsetErrS are the onset of inhomogeneity, s after the
	// phase's start (NaN when none).
	OnsetS, OnsetErrS float64
	// StressPeakS is the time of the stress maximum from the rheometer's
	// log, s after the phase's start (NaN when none).
	StressPeakS float64
	Axis        GapAxis
}

// Check reports the first value that makes s impossible to draw.
func (s *StartUp) Check() error {
	if len(s.Windows) == 0 {
		return fmt.Errorf("figure: start-up of phase %d has no windows", s.Phase)
	}
	for i, w := range s.Windows {
		if !finite(w.AfterStartS) {
			return fmt.Errorf("figure: start-up window %d has time %g s", i, w.AfterStartS)
		}
	}
	return nil
}

// onsetShade is the tint of the onset's uncertainty band.
var onsetShade = color.RGBA{R: 230, G: 230, B: 230, A: 255}

// StartUpPlot draws the height of the band boundary (panel a) and the rate
// of each band with the nominal rate (panel b) against the time since the
// phase's start, the onset of inhomogeneity as a line with a grey band of
// one standard uncertainty, and the stress maximum when known; single
// column wide.
func StartUpPlot(su *StartUp) (*Figure, error) {
	if err := su.Check(); err != nil {
		return nil, err
	}
	s := House
	n := len(su.Windows)
	bnd, lo, hi := make(plotter.XYs, n), make(plotter.XYs, n), make(plotter.XYs, n)
	bndErr, loErr, hiErr := make([]float64, n), make([]float64, n), make([]float64, n)
	tMax := 0.0
	tab := NewTable("series", "t_after_start_s", "boundary_um", "boundary_err_um", "lower_rate_per_s", "lower_rate_err_per_s",
		"upper_rate_per_s", "upper_rate_err_per_s")
	for i, w := range su.Windows {
		bnd[i] = plotter.XY{X: w.AfterStartS, Y: su.Axis.Coord(w.BoundaryUM, su.GapUM)}
		lo[i] = plotter.XY{X: w.AfterStartS, Y: w.LowerRatePerS}
		hi[i] = plotter.XY{X: w.AfterStartS, Y: w.UpperRatePerS}
		bndErr[i], loErr[i], hiErr[i] = w.BoundaryErrUM, w.LowerRateErrPerS, w.UpperRateErrPerS
		tMax = math.Max(tMax, w.AfterStartS)
		tab.Row("window", w.AfterStartS, w.BoundaryUM, w.BoundaryErrUM, w.LowerRatePerS, w.LowerRateErrPerS, w.UpperRatePerS, w.UpperRateErrPerS)
	}
	if finite(su.OnsetS) {
		tab.Row("onset", su.OnsetS, math.NaN(), su.OnsetErrS)
	}
	if finite(su.StressPeakS) {
		tab.Row("stress_peak", su.StressPeakS)
		tMax = math.Max(tMax, su.StressPeakS)
	}
	yLabel := "boundary y (µm)"
	if su.Axis.Radial {
		yLabel = "boundary r − R_{i} (µm)"
	}
	top := &Panel{Plot: NewPlot("", yLabel)}
	bottom := &Panel{Plot: NewPlot("time since the start t − t_{0} (s)", "shear rate (s^{−1})")}
	for _, pn := range []*Panel{top, bottom} {
		pn.Plot.X.Min, pn.Plot.X.Max = 0, tMax*(1+dataMargin)
	}
	top.Plot.Y.Min, top.Plot.Y.Max = 0, su.GapUM
	if !finite(su.GapUM) || !(su.GapUM > 0) {
		top.Plot.Y.Min, top.Plot.Y.Max = withMargin(rangeY([]plotter.XYs{bnd}, [][]float64{bndErr}))
	}
	loLine := lineStyle(Blue, s.RefLinePt, s.Dashes[solid])
	hiLine := lineStyle(Vermillion, s.RefLinePt, s.Dashes[dashed])
	bndLine := lineStyle(BluishGreen, s.RefLinePt, s.Dashes[solid])
	if err := addLine(top, bnd, bndLine, ""); err != nil {
		return nil, err
	}
	if err := addPoints(top, bnd, bndErr, BluishGreen, s.Markers[2], "boundary", bndLine); err != nil {
		return nil, err
	}
	if err := addLine(bottom, lo, loLine, ""); err != nil {
		return nil, err
	}
	if err := addPoints(bottom, lo, loErr, Blue, s.Markers[0], "band by the stationary wall", loLine); err != nil {
		return nil, err
	}
	if err := addLine(bottom, hi, hiLine, ""); err != nil {
		return nil, err
	}
	if err := addPoints(bottom, hi, hiErr, Vermillion, s.Markers[1], "band by the moving wall", hiLine); err != nil {
		return nil, err
	}
	rlo, rhi := rangeY([]plotter.XYs{lo, hi}, [][]float64{loErr, hiErr})
	if finite(su.NominalRatePerS) {
		nom := plotter.XYs{{X: 0, Y: su.NominalRatePerS}, {X: tMax * (1 + dataMargin), Y: su.NominalRatePerS}}
		if err := addLine(bottom, nom, lineStyle(s.Ink, s.RefLinePt, s.Dashes[dotted]), "nominal"); err != nil {
			return nil, err
		}
		rlo, rhi = math.Min(rlo, su.NominalRatePerS), math.Max(rhi, su.NominalRatePerS)
	}
	bottom.Plot.Y.Min, bottom.Plot.Y.Max = withMargin(rlo, rhi)
	for k, pn := range []*Panel{top, bottom} {
		y0, y1 := pn.Plot.Y.Min, pn.Plot.Y.Max
		if finite(su.OnsetS) {
			if finite(su.OnsetErrS) && su.OnsetErrS > 0 {
				sh, err := span(math.Max(0, su.OnsetS-su.OnsetErrS), su.OnsetS+su.OnsetErrS, y0, y1, onsetShade)
				if err != nil {
					return nil, err
				}
				pn.Plot.Add(sh)
			}
			name := ""
			if k == 0 {
				name = "onset"
			}
			if err := addLine(pn, plotter.XYs{{X: su.OnsetS, Y: y0}, {X: su.OnsetS, Y: y1}}, lineStyle(s.Ink, s.BoundaryLinePt, s.Dashes[dashed]), name); err != nil {
				return nil, err
			}
		}
		if finite(su.StressPeakS) {
			name := ""
			if k == 0 {
				name = "stress maximum"
			}
			if err := addLine(pn, plotter.XYs{{X: su.StressPeakS, Y: y0}, {X: su.StressPeakS, Y: y1}}, lineStyle(ReddishPurple, s.BoundaryLinePt, s.Dashes[dotted]), name); err != nil {
				return nil, err
			}
		}
	}
	f, err := Compose(SingleColumnCM, slipHeightCM, [][]*Panel{{top}, {bottom}})
	if err != nil {
		return nil, err
	}
	f.CSV = tab.CSV()
	return f, nil
}
