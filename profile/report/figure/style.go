package figure

import (
	"image/color"

	stdfont "golang.org/x/image/font"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Journal figure sizes and limits. The column widths are common practice
// for two-column journals: single-column figures are about 85 to 90 mm
// wide, figures across both columns about 170 to 180 mm.
const (
	// SingleColumnCM is the width of a one-column figure, cm.
	SingleColumnCM = 8.7
	// DoubleColumnCM is the width of a figure across both columns, cm.
	DoubleColumnCM = 17.5
	// MinFontPt and MaxFontPt bound every text size in a figure, pt: below
	// 7 pt printed labels become hard to read, above 9 pt they crowd a
	// column-wide figure (common practice of journal author guidelines).
	MinFontPt = 7
	MaxFontPt = 9
	// DPI is the resolution of the PNG files, written into each file's
	// pHYs chunk: 300 dpi is the usual minimum for printed line art with
	// grey levels (common practice).
	DPI = 300
)

// Style is the house style of gaptrace's figures, the one place where
// their look is decided. Every figure of the report is drawn with House;
// other packages (a campaign's figures) get the same look from NewPlot,
// Panel and Compose.
//
// The look, in words: a closed frame around the data, ticks inside on all
// four sides, short; tick labels on the left and bottom only; the axes'
// ranges end at the data or at the walls, never padded away from them; no
// grid. Legends stand above the frame, outside the data, each entry its
// symbol first, then its text. Panels of one figure carry bold lower-case
// letters in their top left corners. One sans-serif face at 7 to 9 pt;
// units in parentheses after the quantity, rates in s⁻¹ and lengths in
// µm; a minus sign, not a hyphen, before negative tick labels. Colours are
// the Okabe & Ito (2008) set, and series differ by marker and dash too.
type Style struct {
	// Typeface and Variant name the face of all text, one bundled with
	// gonum/plot (Liberation Sans), so PNG and PDF need no installed font
	// and the PDF embeds it.
	Typeface font.Typeface
	Variant  font.Variant
	// SVGFontFamily is the CSS font list written into SVG files: the face,
	// then faces with the same metrics (so text keeps its width where the
	// face is missing), then the generic family.
	SVGFontFamily string

	// Text sizes, pt, each within [MinFontPt, MaxFontPt].
	TickLabelPt   float64 // numbers at the ticks
	AxisLabelPt   float64 // axis titles
	LegendPt      float64 // legend entries
	NotePt        float64 // notes above the frame and on images
	PanelLetterPt float64 // panel letters, bold
	ScriptPt      float64 // superscripts and subscripts of larger text

	// Frame and ticks, pt.
	FramePt        float64 // frame line width
	MajorTickPt    float64 // length of a labelled tick, inside the frame
	MinorTickPt    float64 // length of an unlabelled tick
	TickLinePt     float64 // tick line width
	TickLabelGapPt float64 // from the frame to the tick labels
	AxisLabelGapPt float64 // from the tick labels to the axis title

	// Legend layout, pt.
	LegendSymbolPt   float64 // width of an entry's symbol
	LegendSymbolGap  float64 // from the symbol to its text
	LegendEntryGapPt float64 // between entries in a row
	LegendToFramePt  float64 // from the legend's last row to the frame
	PanelGapPt       float64 // between panels of one figure
	MarginPt         float64 // around the whole figure

	// Marks, pt.
	DataLinePt     float64 // lines through data and fits
	RefLinePt      float64 // reference lines (no slip, nominal rate)
	MarkerRadiusPt float64
	ErrorBarPt     float64
	ErrorCapPt     float64
	WallLinePt     float64 // the walls, where an axis spans the gap
	BoundaryLinePt float64 // band and phase boundaries

	// Ink is the colour of the frame, ticks and text.
	Ink color.RGBA
	// Series are the colours of data series in order.
	Series []color.RGBA
	// Markers and Dashes are given to series in order; Dashes[0] is solid.
	Markers []draw.GlyphDrawer
	Dashes  [][]vg.Length
}

// House is the house style.
var House = Style{
	Typeface:      "Liberation",
	Variant:       "Sans",
	SVGFontFamily: `'Liberation Sans', Arimo, Helvetica, Arial, sans-serif`,

	TickLabelPt:   7,
	AxisLabelPt:   8,
	LegendPt:      7,
	NotePt:        7,
	PanelLetterPt: 9,
	ScriptPt:      7,

	FramePt:        0.6,
	MajorTickPt:    2.8,
	MinorTickPt:    1.5,
	TickLinePt:     0.5,
	TickLabelGapPt: 2.5,
	AxisLabelGapPt: 2.5,

	LegendSymbolPt:   14,
	LegendSymbolGap:  3,
	LegendEntryGapPt: 9,
	LegendToFramePt:  3,
	PanelGapPt:       8,
	MarginPt:         2,

	DataLinePt:     1.0,
	RefLinePt:      0.75,
	MarkerRadiusPt: 2.0,
	ErrorBarPt:     0.6,
	ErrorCapPt:     2.5,
	WallLinePt:     1.6,
	BoundaryLinePt: 0.6,

	Ink:     color.RGBA{26, 26, 26, 255},
	Series:  []color.RGBA{Blue, Vermillion, BluishGreen, ReddishPurple, Orange, SkyBlue, Black, Yellow},
	Markers: []draw.GlyphDrawer{draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.RingGlyph{}, draw.BoxGlyph{}, draw.PyramidGlyph{}, draw.PlusGlyph{}, draw.CrossGlyph{}},
	Dashes: [][]vg.Length{
		nil,                            // solid
		{vg.Points(3.5), vg.Points(2)}, // dashed
		{vg.Points(1), vg.Points(1.5)}, // dotted
		{vg.Points(5), vg.Points(1.5), vg.Points(1), vg.Points(1.5)}, // dash-dot
	},
}

// Indices into Style.Dashes.
const (
	solid = iota
	dashed
	dotted
	dashDot
)

// Face returns the house font at size pt, bold when bold is set.
func (s Style) Face(pt float64, bold bool) font.Font {
	f := font.Font{Typeface: s.Typeface, Variant: s.Variant, Size: vg.Points(pt)}
	if bold {
		f.Weight = stdfont.WeightBold
	}
	return f
}

// TextStyle returns the style of text at size pt in the house face, with
// the superscript and subscript markup of the house text handler.
func (s Style) TextStyle(pt float64, bold bool) text.Style {
	return text.Style{Color: s.Ink, Font: s.Face(pt, bold), Handler: houseText}
}

// NewPlot returns a plot in the house style with the given axis titles
// (markup: x^{2}, R_{i}): house face and sizes, ticks at 1, 2 or 5 times a
// power of ten with minor ticks between, no axis lines of its own (Compose
// draws the frame and the ticks), and no legend of its own (Panel.Legend
// stands outside the frame).
func NewPlot(xLabel, yLabel string) *plot.Plot {
	s := House
	p := plot.New()
	p.BackgroundColor = nil // the figure's background is white already
	p.TextHandler = houseText
	p.X.Label.Text, p.Y.Label.Text = xLabel, yLabel
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font = s.Face(s.AxisLabelPt, false)
		a.Label.TextStyle.Handler, a.Label.TextStyle.Color = houseText, s.Ink
		a.Label.Padding = vg.Points(s.AxisLabelGapPt)
		a.Tick.Label.Font = s.Face(s.TickLabelPt, false)
		a.Tick.Label.Handler, a.Tick.Label.Color = houseText, s.Ink
		a.Tick.Marker = niceTicks{Major: 5}
		a.Tick.Length = 0 // Compose draws the ticks, inside the frame
		a.LineStyle.Width = 0
	}
	p.X.Padding = vg.Points(s.TickLabelGapPt)
	// The vertical axis already leaves a space's width after its labels.
	space := p.Y.Tick.Label.Width(" ")
	p.Y.Padding = max(0, vg.Points(s.TickLabelGapPt)-space)
	p.Title.TextStyle.Handler = houseText
	return p
}

// series returns the colour, marker and dash of series i.
func (s Style) series(i int) (color.RGBA, draw.GlyphDrawer, []vg.Length) {
	return s.Series[i%len(s.Series)], s.Markers[i%len(s.Markers)], s.Dashes[i%len(s.Dashes)]
}
