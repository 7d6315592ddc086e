package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
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

// AfterStopPlot draws the displacement since cessation against height at
// each time, the fitted recovery and jump, the noise floor as a grey strip
// and the failure plane, single column wide.
func AfterStopPlot(a *AfterStop) (*Figure, error) {
	if err := a.Check(); err != nil {
		return nil, err
	}
	p := newPlot("height y (µm)", "displacement since stop Δx (µm)")
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
	if hi == lo {
		hi = lo + 1
	}
	const headroom = 0.45 // of the data range, for the legend
	yMin, yMax := lo-floorMargin*(hi-lo), hi+headroom*(hi-lo)
	p.Y.Min, p.Y.Max = yMin, yMax
	p.X.Min, p.X.Max = -wallMargin*a.GapUM, (1+wallMargin)*a.GapUM

	if finite(a.NoiseFloorUM) && a.NoiseFloorUM > 0 {
		poly, err := plotter.NewPolygon(plotter.XYs{{X: 0, Y: -a.NoiseFloorUM}, {X: a.GapUM, Y: -a.NoiseFloorUM},
			{X: a.GapUM, Y: a.NoiseFloorUM}, {X: 0, Y: a.NoiseFloorUM}})
		if err != nil {
			return nil, err
		}
		poly.Color, poly.LineStyle.Width = color.Gray{Y: 225}, 0
		p.Add(poly)
		p.Legend.Add("noise floor", poly)
	}
	for _, x := range []float64{0, a.GapUM} {
		if err := vLine(p, x, yMin, yMax, Black, wallLinePt, nil); err != nil {
			return nil, err
		}
	}
	if finite(a.PlaneUM) {
		if err := vLine(p, a.PlaneUM, yMin, yMax, Vermillion, boundaryLnPt, dashes[3]); err != nil {
			return nil, err
		}
		p.Legend.Add("failure plane", lineThumb{lineStyle(Vermillion, boundaryLnPt, dashes[3])})
	}
	for i, pr := range a.Profiles {
		c := Series[i%len(Series)]
		if i%len(Series) == 1 {
			c = SkyBlue // vermillion marks the failure plane
		}
		pts := make(plotter.XYs, len(pr.Points))
		errs := make([]float64, len(pr.Points))
		for j, q := range pr.Points {
			pts[j], errs[j] = plotter.XY{X: q.YUM, Y: q.DxUM}, q.ErrUM
		}
		fit := make(plotter.XYs, len(pr.Fit))
		for j, q := range pr.Fit {
			fit[j] = plotter.XY{X: q.YUM, Y: q.DxUM}
		}
		if err := addLine(p, fit, c, dataLinePt, dashes[i%len(dashes)], ""); err != nil {
			return nil, err
		}
		if err := addPoints(p, pts, errs, c, markers[i%len(markers)], fmt.Sprintf("%.3g s", pr.TAfterStopS)); err != nil {
			return nil, err
		}
	}
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.XOffs = vg.Points(legendInsetPt)
	return renderPlot(p, SingleColumnCM, afterStopHeightCM)
}
