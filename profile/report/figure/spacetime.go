package figure

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Quantity is what a space-time map shows.
type Quantity int

// Quantities of a space-time map.
const (
	LocalVelocity Quantity = iota // velocity along the flow, um/s
	LocalRate                     // local shear rate dv/dy, 1/s
)

// String returns the axis label of q with its unit.
func (q Quantity) String() string {
	if q == LocalRate {
		return "local shear rate (1/s)"
	}
	return "local velocity (µm/s)"
}

// SpaceTime is a map of a local quantity over time and height in the gap.
type SpaceTime struct {
	TS       []float64   // time-window centres, s, increasing (at least 2)
	YUM      []float64   // gap-bin centres above the stationary wall, um, increasing (at least 2)
	Values   [][]float64 // Values[i][j] at TS[i] and YUM[j]; NaN where unknown
	Quantity Quantity
	GapUM    float64 // wall distance, um
	// PhaseBoundariesS are the times at which the motion program changes, s.
	PhaseBoundariesS []float64
}

// Check reports the first value that makes s impossible to draw.
func (s *SpaceTime) Check() error {
	if len(s.TS) < 2 || len(s.YUM) < 2 {
		return fmt.Errorf("figure: space-time map needs at least 2 times and 2 heights, got %d and %d", len(s.TS), len(s.YUM))
	}
	if len(s.Values) != len(s.TS) {
		return fmt.Errorf("figure: space-time map has %d rows of values for %d times", len(s.Values), len(s.TS))
	}
	for i, row := range s.Values {
		if len(row) != len(s.YUM) {
			return fmt.Errorf("figure: space-time row %d (t = %g s) has %d values for %d heights", i, s.TS[i], len(row), len(s.YUM))
		}
	}
	for name, xs := range map[string][]float64{"times": s.TS, "heights": s.YUM} {
		for i := 1; i < len(xs); i++ {
			if !(xs[i] > xs[i-1]) {
				return fmt.Errorf("figure: space-time %s not increasing at %d: %g after %g", name, i, xs[i], xs[i-1])
			}
		}
	}
	if !(s.GapUM > 0) {
		return fmt.Errorf("figure: space-time gap %g um, must be positive", s.GapUM)
	}
	return nil
}

// grid adapts SpaceTime to plotter.GridXYZ: columns are times, rows heights.
type grid struct{ s *SpaceTime }

func (g grid) Dims() (c, r int)   { return len(g.s.TS), len(g.s.YUM) }
func (g grid) Z(c, r int) float64 { return g.s.Values[c][r] }
func (g grid) X(c int) float64    { return g.s.TS[c] }
func (g grid) Y(r int) float64    { return g.s.YUM[r] }
func (g grid) regular() bool      { return evenlySpaced(g.s.TS) && evenlySpaced(g.s.YUM) }
func (g grid) valueRange() (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, row := range g.s.Values {
		for _, v := range row {
			if finite(v) {
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
	}
	return lo, hi
}

// spacingTolerance is the relative spread of the steps below which a grid
// counts as regular and the heat map can be drawn as one image.
const spacingTolerance = 1e-3

func evenlySpaced(xs []float64) bool {
	step := (xs[len(xs)-1] - xs[0]) / float64(len(xs)-1)
	for i := 1; i < len(xs); i++ {
		if math.Abs(xs[i]-xs[i-1]-step) > spacingTolerance*step {
			return false
		}
	}
	return true
}

// rampColours is the number of palette steps of the heat map.
const rampColours = 256

// noData is the colour of unknown cells: white, lighter than every ramp colour.
var noData = color.White

// colourBarCM is the width given to the colour bar and its label, cm.
const colourBarCM = 2.3

// SpaceTimePlot draws the map as a heat map across both columns, with the
// phase boundaries as vertical lines and a colour bar.
func SpaceTimePlot(s *SpaceTime) (*Figure, error) {
	if err := s.Check(); err != nil {
		return nil, err
	}
	g := grid{s}
	lo, hi := g.valueRange()
	if math.IsInf(lo, 0) {
		return nil, fmt.Errorf("figure: space-time map has no known value")
	}
	if hi == lo {
		hi = lo + 1
	}
	ramp := NewRamp(lo, hi)
	hm := plotter.NewHeatMap(g, ramp.Palette(rampColours))
	hm.Min, hm.Max, hm.NaN = lo, hi, noData
	hm.Rasterized = g.regular()

	p := newPlot("time t (s)", "height y (µm)")
	p.Add(hm)
	t0, t1 := s.TS[0]-(s.TS[1]-s.TS[0])/2, s.TS[len(s.TS)-1]+(s.TS[len(s.TS)-1]-s.TS[len(s.TS)-2])/2
	p.X.Min, p.X.Max = t0, t1
	p.Y.Min, p.Y.Max = 0, s.GapUM
	for _, tb := range s.PhaseBoundariesS {
		if tb <= t0 || tb >= t1 {
			continue
		}
		// A white line under a dashed black one shows on dark and light cells.
		if err := vLine(p, tb, 0, s.GapUM, color.White, 2.2, nil); err != nil {
			return nil, err
		}
		if err := vLine(p, tb, 0, s.GapUM, Black, 0.9, dashes[1]); err != nil {
			return nil, err
		}
	}

	bar := plot.New()
	cb := &plotter.ColorBar{ColorMap: ramp, Vertical: true, Colors: rampColours}
	bar.Add(cb)
	bar.HideX()
	bar.Y.Label.Text = s.Quantity.String()
	bar.Y.Label.TextStyle.Font.Size = vg.Points(labelPt)
	bar.Y.Tick.Label.Font.Size = vg.Points(tickPt)
	bar.Y.Padding = 0

	return render(DoubleColumnCM, 6.5, func(dc draw.Canvas) {
		left := draw.Crop(dc, 0, -cm(colourBarCM), 0, 0)
		p.Draw(left)
		da := p.DataCanvas(left)
		right := draw.Crop(dc, dc.Max.X-dc.Min.X-cm(colourBarCM)+cm(0.2), -cm(0.2),
			da.Min.Y-dc.Min.Y, da.Max.Y-dc.Max.Y)
		bar.Draw(right)
	})
}
