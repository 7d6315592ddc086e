package figure

import (
	"bytes"
	"fmt"
	"image/color"
	"image/png"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Journal figure sizes.
const (
	// SingleColumnCM is the width of a one-column figure, cm (common practice
	// for two-column journals).
	SingleColumnCM = 8.5
	// DoubleColumnCM is the width of a figure across both columns, cm
	// (common practice).
	DoubleColumnCM = 17.5
	// MinFontPt is the smallest text size in any figure, pt: below 7 pt
	// printed labels become hard to read (common practice of journal author
	// guidelines).
	MinFontPt = 7
	// DPI is the resolution of the PNG files: 300 dpi is the usual minimum
	// for printed line art with grey levels (common practice).
	DPI = 300
)

// legendInsetPt keeps a legend in the top left corner clear of the wall
// line drawn at the left end of the axis, pt.
const legendInsetPt = 12

// Text sizes, pt, all at least MinFontPt.
const (
	labelPt  = 8
	tickPt   = 7
	legendPt = 7
)

const cmPerInch = 2.54

// Figure is one rendered figure.
type Figure struct {
	PNG, SVG          []byte
	WidthCM, HeightCM float64
}

// cm converts centimetres to a vg length.
func cm(v float64) vg.Length { return vg.Length(v / cmPerInch * float64(vg.Inch)) }

// Figure heights, cm: the profiles and the displacement nearly square, the
// stacked slip panels taller, the wide maps and histograms a strip.
const (
	profileHeightCM   = 7.5
	afterStopHeightCM = 7.5
	slipHeightCM      = 9
	spaceTimeHeightCM = 6.5
	detectionHeightCM = 6
)

// Margins of a plot's data range, as fractions of the data span: below the
// data, and beside the walls at the ends of a gap axis.
const (
	floorMargin = 0.05
	wallMargin  = 0.03
)

// Line widths and marker sizes, in points.
const (
	dataLinePt   = 1.0
	refLinePt    = 0.75
	markerPt     = 2.2
	errorCapPt   = 3
	wallLinePt   = 1.2
	boundaryLnPt = 0.6
	gridLinePt   = 0.4
	errorBarPt   = 0.6
)

// newPlot returns a plot with the report's text sizes and axis labels.
func newPlot(xLabel, yLabel string) *plot.Plot {
	p := plot.New()
	p.X.Label.Text, p.Y.Label.Text = xLabel, yLabel
	setFonts(p)
	p.X.Tick.Marker = niceTicks{Major: 5}
	p.Y.Tick.Marker = niceTicks{Major: 5}
	p.Legend.ThumbnailWidth = vg.Points(16)
	p.X.Padding, p.Y.Padding = vg.Points(2), vg.Points(2)
	p.Legend.Padding = vg.Points(1)
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{Y: 225}
	g.Horizontal.Color = color.Gray{Y: 225}
	g.Vertical.Width, g.Horizontal.Width = vg.Points(gridLinePt), vg.Points(gridLinePt)
	p.Add(g)
	return p
}

// sansVariant is the Liberation variant of all figure text: a sans-serif
// face reads better than the default serif at 7 to 8 pt.
const sansVariant = "Sans"

// setFonts gives every text of p the report's face and sizes.
func setFonts(p *plot.Plot) {
	for _, f := range []*font.Font{&p.X.Label.TextStyle.Font, &p.Y.Label.TextStyle.Font, &p.Title.TextStyle.Font} {
		f.Size, f.Variant = vg.Points(labelPt), sansVariant
	}
	for _, f := range []*font.Font{&p.X.Tick.Label.Font, &p.Y.Tick.Label.Font} {
		f.Size, f.Variant = vg.Points(tickPt), sansVariant
	}
	p.Legend.TextStyle.Font.Size, p.Legend.TextStyle.Font.Variant = vg.Points(legendPt), sansVariant
}

// render draws with paint on a canvas of the given size and returns the PNG
// and SVG. gonum/plot reports bad data by panicking; the panic comes back as
// an error.
func render(wCM, hCM float64, paint func(dc draw.Canvas)) (f *Figure, err error) {
	defer func() {
		if r := recover(); r != nil {
			f, err = nil, fmt.Errorf("figure: drawing failed: %v", r)
		}
	}()
	w, h := cm(wCM), cm(hCM)
	img := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(color.White))
	paint(draw.New(img))
	var pngBuf bytes.Buffer
	// Fastest deflate: the files come out about a third larger than with the
	// default level and are written several times faster.
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	if err := enc.Encode(&pngBuf, img.Image()); err != nil {
		return nil, fmt.Errorf("figure: png: %w", err)
	}
	svg := vgsvg.NewWith(vgsvg.UseWH(w, h), vgsvg.EmbedFonts(false))
	paint(draw.New(svg))
	var svgBuf bytes.Buffer
	if _, err := svg.WriteTo(&svgBuf); err != nil {
		return nil, fmt.Errorf("figure: svg: %w", err)
	}
	return &Figure{PNG: pngBuf.Bytes(), SVG: svgBuf.Bytes(), WidthCM: wCM, HeightCM: hCM}, nil
}

// renderPlot renders a single plot.
func renderPlot(p *plot.Plot, wCM, hCM float64) (*Figure, error) {
	return render(wCM, hCM, func(dc draw.Canvas) { p.Draw(dc) })
}

// renderGrid renders plots in rows and columns, axes aligned.
func renderGrid(plots [][]*plot.Plot, wCM, hCM float64) (*Figure, error) {
	rows, cols := len(plots), len(plots[0])
	return render(wCM, hCM, func(dc draw.Canvas) {
		t := draw.Tiles{Rows: rows, Cols: cols, PadX: vg.Points(6), PadY: vg.Points(4),
			PadTop: vg.Points(2), PadBottom: vg.Points(2), PadLeft: vg.Points(2), PadRight: vg.Points(4)}
		cs := plot.Align(plots, t, dc)
		for i := range plots {
			for j := range plots[i] {
				if plots[i][j] != nil {
					plots[i][j].Draw(cs[i][j])
				}
			}
		}
	})
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

// addLine adds the finite runs of pts as a line in colour c with dashes,
// naming it in the legend once when name is not empty.
func addLine(p *plot.Plot, pts plotter.XYs, c color.Color, widthPt float64, dashes []vg.Length, name string) error {
	for i, seg := range segments(pts) {
		l, err := plotter.NewLine(seg)
		if err != nil {
			return err
		}
		l.Color, l.Width, l.Dashes = c, vg.Points(widthPt), dashes
		p.Add(l)
		if i == 0 && name != "" {
			p.Legend.Add(name, l)
		}
	}
	return nil
}

// addPoints adds markers with error bars (errs may be nil) for the finite
// points; points with an unknown error get no bar.
func addPoints(p *plot.Plot, pts plotter.XYs, errs []float64, c color.Color, shape draw.GlyphDrawer, name string) error {
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
		bars.Color, bars.Width, bars.CapWidth = c, vg.Points(errorBarPt), vg.Points(errorCapPt)
		p.Add(bars)
	}
	s, err := plotter.NewScatter(xy)
	if err != nil {
		return err
	}
	s.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(markerPt), Shape: shape}
	p.Add(s)
	if name != "" {
		p.Legend.Add(name, s)
	}
	return nil
}

// Markers in the order the series use them, so that series differ in shape
// as well as colour.
var markers = []draw.GlyphDrawer{
	draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.PlusGlyph{},
	draw.BoxGlyph{}, draw.RingGlyph{}, draw.PyramidGlyph{}, draw.CrossGlyph{},
}

// Dash patterns in the order the series use them.
var dashes = [][]vg.Length{
	nil,
	{vg.Points(4), vg.Points(2)},
	{vg.Points(1.5), vg.Points(1.5)},
	{vg.Points(5), vg.Points(1.5), vg.Points(1.5), vg.Points(1.5)},
}

// vLine adds a vertical line at x from y0 to y1 (data units).
func vLine(p *plot.Plot, x, y0, y1 float64, c color.Color, widthPt float64, d []vg.Length) error {
	return addLine(p, plotter.XYs{{X: x, Y: y0}, {X: x, Y: y1}}, c, widthPt, d, "")
}

// span is a shaded vertical strip between x0 and x1 from y0 to y1.
func span(x0, x1, y0, y1 float64, c color.Color) (*plotter.Polygon, error) {
	poly, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
	if err != nil {
		return nil, err
	}
	poly.Color = c
	poly.LineStyle.Width = 0
	return poly, nil
}

// lineThumb is a legend entry drawn as a short line.
type lineThumb struct{ draw.LineStyle }

// Thumbnail implements plot.Thumbnailer.
func (t lineThumb) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	c.StrokeLine2(t.LineStyle, c.Min.X, y, c.Max.X, y)
}

// lineStyle is a line in colour c, widthPt wide, with dashes d.
func lineStyle(c color.Color, widthPt float64, d []vg.Length) draw.LineStyle {
	return draw.LineStyle{Color: c, Width: vg.Points(widthPt), Dashes: d}
}
