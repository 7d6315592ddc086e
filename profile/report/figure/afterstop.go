package figure

import (
	"fmt"
	"image/color"
	"math"
	"strconv"

	"gonum.org/v1/plot/plotter"
)

// DisplacementPoint is the mean displacement along the flow since
// cessation in one gap bin.
type DisplacementPoint struct {
	YUM   float64 // bin centre above the stationary wall, um
	DxUM  float64 // mean displacement since cessation, um
	ErrUM float64 // its standard error, um (NaN or 0: no bar)
	N     int     // tracers averaged
}

// DisplacementCurvePoint is a point on a model displacement profile.
type DisplacementCurvePoint struct {
	YUM  float64 // height above the stationary wall, um
	DxUM float64 // displacement, um
}

// DisplacementProfile is the displacement across the gap at one time after
// cessation, with the fitted recovery-plus-jump model at that time.
type DisplacementProfile struct {
	TAfterStopS float64 // time since cessation, s
	Points      []DisplacementPoint
	Fit         []DisplacementCurvePoint // in y order; nil when not fitted
}

// AfterStop is the motion of the sample after the last shear phase.
type AfterStop struct {
	GapUM        float64 // wall distance, um
	Profiles     []DisplacementProfile
	NoiseFloorUM float64 // displacement indistinguishable from noise, um (NaN: unknown)
	PlaneUM      float64 // height of a failure plane, um (NaN: none)
	// Axis is how the position across the gap is drawn.
	Axis GapAxis
}

// maxAfterStopProfiles bounds the number of times drawn: with more, markers
// and colours stop being told apart.
const maxAfterStopProfiles = 8

// Check reports the first value that makes a impossible to draw.
func (a *AfterStop) Check() error {
	switch {
	case !(a.GapUM > 0):
		return fmt.Errorf("figure: after-stop gap %g um, must be positive", a.GapUM)
	case len(a.Profiles) == 0:
		return fmt.Errorf("figure: after-stop data has no profiles")
	case len(a.Profiles) > maxAfterStopProfiles:
		return fmt.Errorf("figure: %d after-stop profiles, at most %d can be told apart", len(a.Profiles), maxAfterStopProfiles)
	}
	return nil
}

// AfterStopPlot draws the displacement since cessation against the
// position across the gap at each time, the fitted recovery and jump, the
// noise floor as a grey strip and the failure plane, single column wide.
func AfterStopPlot(a *AfterStop) (*Figure, error) {
	if err := a.Check(); err != nil {
		return nil, err
	}
	s := House
	h := a.GapUM
	x := func(yUM float64) float64 { return a.Axis.Coord(yUM, h) }
	pn := &Panel{Plot: NewPlot(a.Axis.Label(), "displacement since the stop Δx (µm)"), WallsX: true}
	p := pn.Plot
	cols := []string{"series", "t_after_stop_s", "y_um"}
	if a.Axis.Column() != "" {
		cols = append(cols, a.Axis.Column())
	}
	tab := NewTable(append(cols, "dx_um", "dx_err_um", "n")...)
	row := func(series string, t, yUM, dx, err float64, n int) {
		cells := []any{series, t, yUM}
		if a.Axis.Column() != "" {
			cells = append(cells, x(yUM))
		}
		nv := math.NaN()
		if n > 0 {
			nv = float64(n)
		}
		tab.Row(append(cells, dx, err, nv)...)
	}

	lo, hi := 0.0, 0.0
	for _, pr := range a.Profiles {
		for _, q := range pr.Points {
			if finite(q.DxUM) {
				e := 0.0
				if finite(q.ErrUM) {
					e = math.Abs(q.ErrUM)
				}
				lo, hi = math.Min(lo, q.DxUM-e), math.Max(hi, q.DxUM+e)
			}
		}
		for _, q := range pr.Fit {
			if finite(q.DxUM) {
				lo, hi = math.Min(lo, q.DxUM), math.Max(hi, q.DxUM)
			}
		}
	}
	if finite(a.NoiseFloorUM) {
		lo, hi = math.Min(lo, -a.NoiseFloorUM), math.Max(hi, a.NoiseFloorUM)
	}
	yMin, yMax := withMargin(lo, hi)
	p.Y.Min, p.Y.Max = yMin, yMax
	p.X.Min, p.X.Max = 0, h

	if finite(a.NoiseFloorUM) && a.NoiseFloorUM > 0 {
		poly, err := span(0, h, -a.NoiseFloorUM, a.NoiseFloorUM, noiseGrey)
		if err != nil {
			return nil, err
		}
		p.Add(poly)
		pn.AddLegend("noise floor", swatch{fill: noiseGrey})
		row("noise_floor", math.NaN(), 0, a.NoiseFloorUM, math.NaN(), 0)
		row("noise_floor", math.NaN(), h, a.NoiseFloorUM, math.NaN(), 0)
	}
	if finite(a.PlaneUM) {
		plane := lineStyle(Vermillion, s.BoundaryLinePt, s.Dashes[dashDot])
		if err := vLine(pn, x(a.PlaneUM), yMin, yMax, plane); err != nil {
			return nil, err
		}
		pn.AddLegend("failure plane", lineSymbol{plane})
		row("failure_plane", math.NaN(), a.PlaneUM, math.NaN(), math.NaN(), 0)
	}
	for i, pr := range a.Profiles {
		c, shape, d := s.series(i)
		if i%len(s.Series) == 1 {
			c = SkyBlue // vermillion marks the failure plane
		}
		pts := make(plotter.XYs, len(pr.Points))
		errs := make([]float64, len(pr.Points))
		for j, q := range pr.Points {
			pts[j], errs[j] = plotter.XY{X: x(q.YUM), Y: q.DxUM}, q.ErrUM
			row("measured", pr.TAfterStopS, q.YUM, q.DxUM, q.ErrUM, q.N)
		}
		fit := make(plotter.XYs, len(pr.Fit))
		for j, q := range pr.Fit {
			fit[j] = plotter.XY{X: x(q.YUM), Y: q.DxUM}
			row("fit", pr.TAfterStopS, q.YUM, q.DxUM, math.NaN(), 0)
		}
		st := lineStyle(c, s.DataLinePt, d)
		if err := addLine(pn, fit, st, ""); err != nil {
			return nil, err
		}
		if err := addPoints(pn, pts, errs, c, shape, strconv.FormatFloat(pr.TAfterStopS, 'g', 3, 64)+" s", st); err != nil {
			return nil, err
		}
	}
	f, err := Compose(SingleColumnCM, afterStopHeightCM, [][]*Panel{{pn}})
	if err != nil {
		return nil, err
	}
	f.CSV = tab.CSV()
	return f, nil
}

// noiseGrey is the strip of the noise floor.
var noiseGrey = color.Gray{Y: 222}
