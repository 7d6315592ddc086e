package figure

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// LegendEntry is one entry of a panel's legend: its symbols, drawn on top
// of each other (a line and a marker, say), then its text.
type LegendEntry struct {
	Text    string
	Symbols []plot.Thumbnailer
}

// Note is a text placed above the frame, centred at data coordinate X
// (the rate of a shear band above its band).
type Note struct {
	X    float64
	Text string
}

// ColourBar is the key of a heat map, drawn to the right of its frame.
type ColourBar struct {
	Map   palette.ColorMap
	Label string // the quantity and its unit
}

// Panel is one plot of a figure with what the house style draws around it.
type Panel struct {
	Plot   *plot.Plot
	Legend []LegendEntry
	Notes  []Note
	// WallsX and WallsY mark an axis that spans the gap exactly: its two
	// ends are drawn as walls, heavier than the frame.
	WallsX, WallsY bool
	ColourBar      *ColourBar
}

// AddLegend adds an entry to the panel's legend.
func (p *Panel) AddLegend(txt string, symbols ...plot.Thumbnailer) {
	p.Legend = append(p.Legend, LegendEntry{Text: txt, Symbols: symbols})
}

// Compose draws panels in rows and columns (nil cells stay empty) on a
// figure wCM by hCM centimetres in the house style: frames and ticks,
// legends and notes above the frames, colour bars, panel letters when
// there is more than one panel, and the frames of a column (a row)
// aligned. The figure's CSV is left for the caller.
func Compose(wCM, hCM float64, rows [][]*Panel) (*Figure, error) {
	n := 0
	for _, r := range rows {
		for _, p := range r {
			if p != nil {
				if p.Plot == nil {
					return nil, fmt.Errorf("figure: panel without a plot")
				}
				n++
			}
		}
	}
	if n == 0 {
		return nil, fmt.Errorf("figure: no panels")
	}
	return render(wCM, hCM, func(dc draw.Canvas) { layout(dc, rows, n > 1) })
}

// legendRows lays out entries in rows no wider than width, and returns the
// entries of each row.
func legendRows(es []LegendEntry, width vg.Length) [][]LegendEntry {
	s := House
	sty := s.TextStyle(s.LegendPt, false)
	var out [][]LegendEntry
	var cur []LegendEntry
	x := vg.Length(0)
	for _, e := range es {
		w := vg.Points(s.LegendSymbolPt+s.LegendSymbolGap) + sty.Width(e.Text)
		if len(cur) > 0 && x+vg.Points(s.LegendEntryGapPt)+w > width {
			out = append(out, cur)
			cur, x = nil, 0
		}
		if len(cur) > 0 {
			x += vg.Points(s.LegendEntryGapPt)
		}
		cur = append(cur, e)
		x += w
	}
	if len(cur) > 0 {
		out = append(out, cur)
	}
	return out
}

// legendRowHeight is the height of one legend row: the text with room for
// a marker.
func legendRowHeight() vg.Length {
	s := House
	return vg.Points(math.Max(1.3*s.LegendPt, 2*s.MarkerRadiusPt+2))
}

// noteHeight is the height of the strip of notes above a frame.
func noteHeight() vg.Length {
	return House.TextStyle(House.AxisLabelPt, false).Height("s^{−1}") + vg.Points(1)
}

// cell is a panel's place on the page.
type cell struct {
	p        *Panel
	tile     draw.Canvas // the whole tile
	plot     draw.Canvas // where Plot draws
	legend   [][]LegendEntry
	barWidth vg.Length
}

// layout draws rows of panels on dc.
func layout(dc draw.Canvas, rows [][]*Panel, letters bool) {
	drawCells(arrange(dc, rows, letters), letters)
}

// measure returns the data area that Compose gives a lone panel on a
// figure wCM by hCM centimetres, without drawing.
func measure(wCM, hCM float64, pn *Panel) draw.Canvas {
	dc := draw.Canvas{Rectangle: vg.Rectangle{Max: vg.Point{X: cm(wCM), Y: cm(hCM)}}}
	c := arrange(dc, [][]*Panel{{pn}}, false)[0][0]
	return pn.Plot.DataCanvas(c.plot)
}

// arrange places rows of panels on dc: tiles, the strips above the
// frames, colour bars, and aligned plot areas.
func arrange(dc draw.Canvas, rows [][]*Panel, letters bool) [][]*cell {
	s := House
	margin, gap := vg.Points(s.MarginPt), vg.Points(s.PanelGapPt)
	area := draw.Crop(dc, margin, -margin, margin, -margin)
	nr, nc := len(rows), 0
	for _, r := range rows {
		nc = max(nc, len(r))
	}
	tw := (area.Max.X - area.Min.X - gap*vg.Length(nc-1)) / vg.Length(nc)
	th := (area.Max.Y - area.Min.Y - gap*vg.Length(nr-1)) / vg.Length(nr)
	letterH := s.TextStyle(s.PanelLetterPt, true).Height("a")

	cells := make([][]*cell, nr)
	for i, r := range rows {
		cells[i] = make([]*cell, nc)
		top := vg.Length(0)
		for j, p := range r {
			if p == nil {
				continue
			}
			x0 := area.Min.X + vg.Length(j)*(tw+gap)
			y1 := area.Max.Y - vg.Length(i)*(th+gap)
			tile := draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{
				Min: vg.Point{X: x0, Y: y1 - th}, Max: vg.Point{X: x0 + tw, Y: y1}}}
			c := &cell{p: p, tile: tile}
			if p.ColourBar != nil {
				c.barWidth = colourBarWidth(p.ColourBar)
			}
			guess := p.Plot.DataCanvas(draw.Crop(tile, 0, -c.barWidth, 0, 0))
			c.legend = legendRows(p.Legend, tile.Max.X-guess.Min.X)
			h := vg.Length(len(c.legend)) * legendRowHeight()
			if len(c.legend) > 0 {
				h += vg.Points(s.LegendToFramePt)
			}
			if len(p.Notes) > 0 {
				h += noteHeight()
			}
			if letters {
				h = max(h, letterH+vg.Points(s.LegendToFramePt))
			}
			top = max(top, h)
			cells[i][j] = c
		}
		for _, c := range cells[i] {
			if c != nil {
				c.plot = draw.Crop(c.tile, 0, -c.barWidth, 0, -top)
			}
		}
	}
	align(cells, nr, nc)
	return cells
}

// drawCells draws the arranged panels.
func drawCells(cells [][]*cell, letters bool) {
	s := House
	letter := 0
	for i := range cells {
		for _, c := range cells[i] {
			if c == nil {
				continue
			}
			p := c.p.Plot
			p.Draw(c.plot)
			da := p.DataCanvas(c.plot)
			drawFrame(da, p, c.p.WallsX, c.p.WallsY)
			y := da.Max.Y + vg.Points(s.LegendToFramePt)
			if len(c.p.Notes) > 0 {
				drawNotes(da, p, c.p.Notes, y)
				y += noteHeight()
			}
			drawLegend(c.tile, c.legend, da.Min.X, y)
			if c.p.ColourBar != nil {
				drawColourBar(c.p.ColourBar, da, c.tile.Max.X)
			}
			if letters {
				sty := s.TextStyle(s.PanelLetterPt, true)
				sty.YAlign = draw.YTop
				c.tile.FillText(sty, vg.Point{X: c.tile.Min.X, Y: c.tile.Max.Y}, string(rune('a'+letter)))
			}
			letter++
		}
	}
}

// align crops the plot areas so that the frames of a column share their
// left and right edges and those of a row their bottom edge.
func align(cells [][]*cell, nr, nc int) {
	type insets struct{ l, r, b vg.Length }
	in := make([][]insets, nr)
	for i := range cells {
		in[i] = make([]insets, nc)
		for j, c := range cells[i] {
			if c == nil {
				continue
			}
			da := c.p.Plot.DataCanvas(c.plot)
			in[i][j] = insets{da.Min.X - c.plot.Min.X, c.plot.Max.X - da.Max.X, da.Min.Y - c.plot.Min.Y}
		}
	}
	for j := range nc {
		var l, r vg.Length
		for i := range nr {
			if cells[i][j] != nil {
				l, r = max(l, in[i][j].l), max(r, in[i][j].r)
			}
		}
		for i := range nr {
			if c := cells[i][j]; c != nil {
				c.plot = draw.Crop(c.plot, l-in[i][j].l, -(r - in[i][j].r), 0, 0)
			}
		}
	}
	for i := range nr {
		var b vg.Length
		for j := range nc {
			if cells[i][j] != nil {
				b = max(b, in[i][j].b)
			}
		}
		for j := range nc {
			if c := cells[i][j]; c != nil {
				c.plot = draw.Crop(c.plot, 0, 0, b-in[i][j].b, 0)
			}
		}
	}
}

// drawFrame draws the closed frame around the data area da of p, with the
// ticks of both axes inside it on all four sides, and heavier lines at the
// ends of an axis that spans the gap.
func drawFrame(da draw.Canvas, p *plot.Plot, wallsX, wallsY bool) {
	s := House
	tick := draw.LineStyle{Color: s.Ink, Width: vg.Points(s.TickLinePt)}
	forTicks(p.X, da.Min.X, da.Max.X, func(x, l vg.Length) {
		da.StrokeLine2(tick, x, da.Min.Y, x, da.Min.Y+l)
		da.StrokeLine2(tick, x, da.Max.Y, x, da.Max.Y-l)
	})
	forTicks(p.Y, da.Min.Y, da.Max.Y, func(y, l vg.Length) {
		da.StrokeLine2(tick, da.Min.X, y, da.Min.X+l, y)
		da.StrokeLine2(tick, da.Max.X, y, da.Max.X-l, y)
	})
	frame := draw.LineStyle{Color: s.Ink, Width: vg.Points(s.FramePt)}
	r := da.Rectangle
	da.StrokeLines(frame, []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}, r.Min})
	wall := draw.LineStyle{Color: s.Ink, Width: vg.Points(s.WallLinePt)}
	if wallsX {
		da.StrokeLine2(wall, r.Min.X, r.Min.Y, r.Min.X, r.Max.Y)
		da.StrokeLine2(wall, r.Max.X, r.Min.Y, r.Max.X, r.Max.Y)
	}
	if wallsY {
		da.StrokeLine2(wall, r.Min.X, r.Min.Y, r.Max.X, r.Min.Y)
		da.StrokeLine2(wall, r.Min.X, r.Max.Y, r.Max.X, r.Max.Y)
	}
}

// forTicks calls mark with the position of each tick of axis a strictly
// between lo and hi on the page, and its length.
func forTicks(a plot.Axis, lo, hi vg.Length, mark func(at, length vg.Length)) {
	for _, t := range a.Tick.Marker.Ticks(a.Min, a.Max) {
		at := lo + vg.Length(a.Norm(t.Value))*(hi-lo)
		if at <= lo || at >= hi {
			continue
		}
		l := vg.Points(House.MajorTickPt)
		if t.IsMinor() {
			l = vg.Points(House.MinorTickPt)
		}
		mark(at, l)
	}
}

// drawNotes writes the notes centred at their data x, with their baseline
// region starting at y above the frame.
func drawNotes(da draw.Canvas, p *plot.Plot, notes []Note, y vg.Length) {
	// Notes are set at the size of axis titles, so that a unit's
	// superscript (ScriptPt) is smaller than its base.
	sty := House.TextStyle(House.AxisLabelPt, false)
	sty.XAlign = draw.XCenter
	for _, n := range notes {
		if !finite(n.X) {
			continue
		}
		x := da.X(p.X.Norm(n.X))
		da.FillText(sty, vg.Point{X: x, Y: y}, n.Text)
	}
}

// drawLegend draws the legend rows upwards from y, starting at x.
func drawLegend(c draw.Canvas, rows [][]LegendEntry, x0, y vg.Length) {
	s := House
	sty := s.TextStyle(s.LegendPt, false)
	sty.YAlign = draw.YCenter
	rh := legendRowHeight()
	for i := len(rows) - 1; i >= 0; i-- {
		x := x0
		mid := y + rh/2
		for _, e := range rows[i] {
			symH := rh * 0.7
			box := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
				Min: vg.Point{X: x, Y: mid - symH/2}, Max: vg.Point{X: x + vg.Points(s.LegendSymbolPt), Y: mid + symH/2}}}
			for _, th := range e.Symbols {
				th.Thumbnail(&box)
			}
			x += vg.Points(s.LegendSymbolPt + s.LegendSymbolGap)
			c.FillText(sty, vg.Point{X: x, Y: mid}, e.Text)
			x += sty.Width(e.Text) + vg.Points(s.LegendEntryGapPt)
		}
		y += rh
	}
}

// Colour bar sizes, pt.
const (
	barGapPt   = 7 // from the frame to the bar
	barWidthPt = 8
)

// colourBarWidth is the width a colour bar takes right of its frame.
func colourBarWidth(b *ColourBar) vg.Length {
	s := House
	ticks := s.TextStyle(s.TickLabelPt, false)
	w := vg.Length(0)
	for _, t := range (niceTicks{Major: 5}).Ticks(b.Map.Min(), b.Map.Max()) {
		w = max(w, ticks.Width(t.Label))
	}
	label := s.TextStyle(s.AxisLabelPt, false)
	return vg.Points(barGapPt+barWidthPt+s.TickLabelGapPt+s.AxisLabelGapPt) + w + label.Height(b.Label)
}

// barSteps is the number of colour steps of a colour bar's image.
const barSteps = 256

// drawColourBar draws the key of b right of the frame da.
func drawColourBar(b *ColourBar, da draw.Canvas, right vg.Length) {
	s := House
	x0 := da.Max.X + vg.Points(barGapPt)
	x1 := x0 + vg.Points(barWidthPt)
	y0, y1 := da.Min.Y, da.Max.Y
	lo, hi := b.Map.Min(), b.Map.Max()
	img := image.NewRGBA(image.Rect(0, 0, 1, barSteps))
	for k := range barSteps {
		v := lo + (hi-lo)*(float64(k)+0.5)/barSteps
		c, err := b.Map.At(v)
		if err != nil {
			c = color.White
		}
		img.Set(0, barSteps-1-k, c)
	}
	da.DrawImage(vg.Rectangle{Min: vg.Point{X: x0, Y: y0}, Max: vg.Point{X: x1, Y: y1}}, img)
	tick := draw.LineStyle{Color: s.Ink, Width: vg.Points(s.TickLinePt)}
	lab := s.TextStyle(s.TickLabelPt, false)
	lab.YAlign = draw.YCenter
	labelX := x1 + vg.Points(s.TickLabelGapPt)
	widest := vg.Length(0)
	for _, t := range (niceTicks{Major: 5}).Ticks(lo, hi) {
		if hi == lo {
			break
		}
		y := y0 + (y1-y0)*vg.Length((t.Value-lo)/(hi-lo))
		l := vg.Points(s.MajorTickPt)
		if t.IsMinor() {
			l = vg.Points(s.MinorTickPt)
		}
		da.StrokeLine2(tick, x0, y, x0+l, y)
		da.StrokeLine2(tick, x1, y, x1-l, y)
		if !t.IsMinor() {
			da.FillText(lab, vg.Point{X: labelX, Y: y}, t.Label)
			widest = max(widest, lab.Width(t.Label))
		}
	}
	frame := draw.LineStyle{Color: s.Ink, Width: vg.Points(s.FramePt)}
	da.StrokeLines(frame, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}, {X: x0, Y: y0}})
	title := s.TextStyle(s.AxisLabelPt, false)
	title.Rotation = math.Pi / 2 // reading upwards, like the axis titles
	title.XAlign, title.YAlign = draw.XCenter, draw.YTop
	tx := labelX + widest + vg.Points(s.AxisLabelGapPt)
	da.FillText(title, vg.Point{X: min(tx, right-title.Height(b.Label)), Y: (y0 + y1) / 2}, b.Label)
}

// lineSymbol is a legend symbol drawn as a short line.
type lineSymbol struct{ draw.LineStyle }

// Thumbnail implements plot.Thumbnailer.
func (t lineSymbol) Thumbnail(c *draw.Canvas) {
	y := c.Center().Y
	c.StrokeLine2(t.LineStyle, c.Min.X, y, c.Max.X, y)
}

// markerSymbol is a legend symbol drawn as one marker with an error bar
// through it when bar is set.
type markerSymbol struct {
	glyph draw.GlyphStyle
	bar   bool
}

// Thumbnail implements plot.Thumbnailer.
func (t markerSymbol) Thumbnail(c *draw.Canvas) {
	ctr := c.Center()
	if t.bar {
		st := draw.LineStyle{Color: t.glyph.Color, Width: vg.Points(House.ErrorBarPt)}
		c.StrokeLine2(st, ctr.X, c.Min.Y, ctr.X, c.Max.Y)
		cap := vg.Points(House.ErrorCapPt) / 2
		c.StrokeLine2(st, ctr.X-cap, c.Min.Y, ctr.X+cap, c.Min.Y)
		c.StrokeLine2(st, ctr.X-cap, c.Max.Y, ctr.X+cap, c.Max.Y)
	}
	c.DrawGlyph(t.glyph, ctr)
}

// swatch is a legend symbol drawn as a filled box, outlined when edge is
// set (a white box on a white page).
type swatch struct {
	fill color.Color
	edge bool
}

// Thumbnail implements plot.Thumbnailer.
func (t swatch) Thumbnail(c *draw.Canvas) {
	c.SetColor(t.fill)
	c.Fill(c.Rectangle.Path())
	if t.edge {
		r := c.Rectangle
		c.StrokeLines(draw.LineStyle{Color: House.Ink, Width: vg.Points(House.TickLinePt)},
			[]vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}, r.Min})
	}
}

// textStyleAt is the house text style of size pt with alignment.
func textStyleAt(pt float64, xa text.XAlignment, ya text.YAlignment) text.Style {
	sty := House.TextStyle(pt, false)
	sty.XAlign, sty.YAlign = xa, ya
	return sty
}
