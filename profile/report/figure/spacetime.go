package figure

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"gonum.org/v1/plot/plotter"
)

// Quantity is what a space-time map shows.
type Quantity int

// Quantities of a space-time map.
const (
	LocalVelocity Quantity = iota // velocity along the flow, um/s
	LocalRate                     // local shear rate dv/dy, s⁻¹
)

// Noun names q in words, without its unit.
func (q Quantity) Noun() string {
	if q == LocalRate {
		return "local shear rate"
	}
	return "local velocity"
}

// String returns the axis label of q with its unit, in the markup of
// NewPlot.
func (q Quantity) String() string {
	if q == LocalRate {
		return "local shear rate (s^{−1})"
	}
	return "local velocity (µm/s)"
}

// column is the CSV column of q.
func (q Quantity) column() string {
	if q == LocalRate {
		return "rate_per_s"
	}
	return "v_um_per_s"
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
	// Axis is how the position across the gap is drawn.
	Axis GapAxis
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

// grid adapts SpaceTime to plotter.GridXYZ: columns are times, rows the
// drawn positions across the gap, increasing.
type grid struct{ s *SpaceTime }

// flipped reports whether the drawn position runs against y.
func (g grid) flipped() bool { return g.s.Axis.Coord(0, 1) > g.s.Axis.Coord(1, 1) }

// row is the index into YUM of grid row r.
func (g grid) row(r int) int {
	if g.flipped() {
		return len(g.s.YUM) - 1 - r
	}
	return r
}

func (g grid) Dims() (c, r int)   { return len(g.s.TS), len(g.s.YUM) }
func (g grid) Z(c, r int) float64 { return g.s.Values[c][g.row(r)] }
func (g grid) X(c int) float64    { return g.s.TS[c] }
func (g grid) Y(r int) float64    { return g.s.Axis.Coord(g.s.YUM[g.row(r)], g.s.GapUM) }
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

// Minimum size of the cell image, px: cells are drawn as blocks of whole
// pixels, so that resampling to the page blurs only their edges.
const (
	cellImageMinWPx = 1200
	cellImageMinHPx = 500
)

// cellImage paints the map's cells as blocks of pixels, time to the right
// and the drawn position across the gap up.
func cellImage(s *SpaceTime, ramp *Ramp) *image.RGBA {
	g := grid{s}
	nt, ny := len(s.TS), len(s.YUM)
	sx, sy := (cellImageMinWPx+nt-1)/nt, (cellImageMinHPx+ny-1)/ny
	img := image.NewRGBA(image.Rect(0, 0, nt*sx, ny*sy))
	for i := range s.Values {
		for j := range ny {
			v := g.Z(i, j)
			c := color.RGBA(noData)
			if finite(v) {
				cc, err := ramp.At(v)
				if err == nil {
					c = cc.(color.RGBA)
				}
			}
			top := (ny - 1 - j) * sy
			for y := top; y < top+sy; y++ {
				off := img.PixOffset(i*sx, y)
				for x := 0; x < sx; x++ {
					copy(img.Pix[off+4*x:], []uint8{c.R, c.G, c.B, c.A})
				}
			}
		}
	}
	return img
}

// rampColours is the number of palette steps of the heat map.
const rampColours = 256

// noData is the colour of unknown cells: white, lighter than every ramp colour.
var noData = color.RGBA{255, 255, 255, 255}

// Phase boundaries on a map: a white halo under a dashed black line, pt.
const (
	boundaryHaloPt  = 2.2
	boundaryOnMapPt = 0.9
)

// SpaceTimePlot draws the map as a heat map across both columns, with the
// phase boundaries as vertical lines, the walls as the frame's top and
// bottom, and a colour bar.
func SpaceTimePlot(s *SpaceTime) (*Figure, error) {
	if err := s.Check(); err != nil {
		return nil, err
	}
	st := House
	g := grid{s}
	lo, hi := g.valueRange()
	if math.IsInf(lo, 0) {
		return nil, fmt.Errorf("figure: space-time map has no known value")
	}
	if hi == lo {
		hi = lo + 1
	}
	ramp := NewRamp(lo, hi)
	pn := &Panel{Plot: NewPlot("time t (s)", s.Axis.Label()), WallsY: true,
		ColourBar: &ColourBar{Map: ramp, Label: s.Quantity.String()}}
	p := pn.Plot
	nt, ny := len(s.TS), len(s.YUM)
	t0, t1 := s.TS[0]-(s.TS[1]-s.TS[0])/2, s.TS[nt-1]+(s.TS[nt-1]-s.TS[nt-2])/2
	// The drawn extent of the cells, from the first and last row.
	c0, c1 := g.Y(0)-(g.Y(1)-g.Y(0))/2, g.Y(ny-1)+(g.Y(ny-1)-g.Y(ny-2))/2
	if g.regular() {
		// One image with sharp cell edges; gonum's own raster mode smooths them.
		p.Add(plotter.NewImage(cellImage(s, ramp), t0, c0, t1, c1))
	} else {
		hm := plotter.NewHeatMap(g, ramp.Palette(rampColours))
		hm.Min, hm.Max, hm.NaN = lo, hi, noData
		p.Add(hm)
	}
	p.X.Tick.Marker = niceTicks{Major: 10}
	p.X.Min, p.X.Max = t0, t1
	p.Y.Min, p.Y.Max = math.Min(0, c0), math.Max(s.GapUM, c1)
	halo := lineStyle(color.White, boundaryHaloPt, nil)
	dash := lineStyle(Black, boundaryOnMapPt, st.Dashes[dashed])
	for _, tb := range s.PhaseBoundariesS {
		if tb <= t0 || tb >= t1 {
			continue
		}
		// A white line under a dashed black one shows on dark and light cells.
		if err := vLine(pn, tb, p.Y.Min, p.Y.Max, halo); err != nil {
			return nil, err
		}
		if err := vLine(pn, tb, p.Y.Min, p.Y.Max, dash); err != nil {
			return nil, err
		}
	}
	pn.AddLegend("change of the imposed motion", lineSymbol{halo}, lineSymbol{dash})
	pn.AddLegend("too few tracers", swatch{fill: noData, edge: true})

	cols := []string{"series", "t_s", "y_um"}
	if s.Axis.Column() != "" {
		cols = append(cols, s.Axis.Column())
	}
	tab := NewTable(append(cols, s.Quantity.column())...)
	for i, t := range s.TS {
		for j, y := range s.YUM {
			cells := []any{"cell", t, y}
			if s.Axis.Column() != "" {
				cells = append(cells, s.Axis.Coord(y, s.GapUM))
			}
			tab.Row(append(cells, s.Values[i][j])...)
		}
	}
	for _, tb := range s.PhaseBoundariesS {
		tab.Row("phase_boundary", tb)
	}
	f, err := Compose(DoubleColumnCM, spaceTimeHeightCM, [][]*Panel{{pn}})
	if err != nil {
		return nil, err
	}
	f.CSV = tab.CSV()
	return f, nil
}
