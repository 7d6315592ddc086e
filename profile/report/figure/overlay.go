package figure

import (
	"fmt"
	"image/color"
	"math"
	"strconv"

	"gocv.io/x/gocv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"gaptrace/calib"
)

// PointPx is an image position, px, origin at the centre of the top-left
// pixel, y down.
type PointPx struct{ XPx, YPx float64 }

// Overlay is a video frame with what to draw on it.
type Overlay struct {
	// Frame is an 8-bit grey frame (gocv.MatTypeCV8UC1). The caller owns
	// and closes it.
	Frame gocv.Mat
	// Calibration places the walls and the gap axes.
	Calibration *calib.Calibration
	// Tracks are tracer paths of a time window, each a polyline in px.
	Tracks [][]PointPx
	// ScaleBarUM is the length of the scale bar, um (0: a round length near
	// a fifth of the image width).
	ScaleBarUM float64
}

// Sizes of the annotations, as fractions of the frame's width or in pt.
const (
	// axisTicks is the number of intervals on the drawn y axis.
	axisTicks = 4
	// axisInset is where the gap axes start, as a fraction of the width from
	// the side the flow comes from; xAxisLength and scaleBarLength are the x
	// arrow's and the scale bar's length as fractions of the width.
	axisInset      = 0.1
	xAxisLength    = 0.15
	scaleBarLength = 0.2
	// Line widths and lengths on the image, pt.
	overlayWallPt   = 1.4
	overlayTrackPt  = 0.8
	overlayDotPt    = 1.3 // radius of a track's latest position
	overlayAxisPt   = 0.8
	overlayTickPt   = 3
	overlayArrowPt  = 4.5 // length of an arrow head
	overlayBarPt    = 1.6
	overlayInsetPt  = 5 // from the image's edge to the scale bar
	overlayBoxPadPt = 1.2
)

// backdrop is the translucent dark box behind text on the image, so white
// text reads on bright tracers too (alpha-premultiplied black, 60 %).
var backdrop = color.RGBA{0, 0, 0, 153}

// trackColours are the Okabe & Ito colours left after the walls' sky blue and
// orange, in an order that alternates light and dark on a grey frame.
var trackColours = []color.RGBA{Yellow, Blue, BluishGreen, ReddishPurple, Vermillion}

// Check reports the first value that makes o impossible to draw.
func (o *Overlay) Check() error {
	if o.Frame.Empty() {
		return fmt.Errorf("figure: overlay frame is empty")
	}
	if t := o.Frame.Type(); t != gocv.MatTypeCV8UC1 {
		return fmt.Errorf("figure: overlay frame has Mat type %v, want 8-bit grey (CV_8UC1)", t)
	}
	if o.Calibration == nil {
		return fmt.Errorf("figure: overlay has no calibration")
	}
	if err := o.Calibration.Check(); err != nil {
		return fmt.Errorf("figure: overlay: %w", err)
	}
	for i, tr := range o.Tracks {
		for _, q := range tr {
			if !finite(q.XPx, q.YPx) {
				return fmt.Errorf("figure: overlay track %d has point (%g, %g) px", i, q.XPx, q.YPx)
			}
		}
	}
	return nil
}

// stationaryYAt is the image y of the stationary wall line at image x.
func stationaryYAt(c *calib.Calibration, xPx float64) float64 {
	s := c.StationaryWallPx
	if s[1][0] == s[0][0] {
		return (s[0][1] + s[1][1]) / 2
	}
	return s[0][1] + (xPx-s[0][0])*(s[1][1]-s[0][1])/(s[1][0]-s[0][0])
}

// roundLength returns 1, 2 or 5 times a power of ten, the largest not above v.
func roundLength(v float64) float64 {
	p := math.Pow(10, math.Floor(math.Log10(v)))
	for _, m := range []float64{5, 2, 1} {
		if m*p <= v {
			return m * p
		}
	}
	return p
}

// clipLine returns the part of the infinite line through l inside the image
// [-0.5, w-0.5] x [-0.5, h-0.5] px (Liang & Barsky 1984 clipping).
func clipLine(l calib.Line, w, h float64) (a, b PointPx, ok bool) {
	x0, y0 := l[0][0], l[0][1]
	dx, dy := l[1][0]-x0, l[1][1]-y0
	t0, t1 := math.Inf(-1), math.Inf(1)
	for _, e := range [][3]float64{{-dx, x0 + 0.5}, {dx, w - 0.5 - x0}, {-dy, y0 + 0.5}, {dy, h - 0.5 - y0}} {
		p, q := e[0], e[1]
		if p == 0 {
			if q < 0 {
				return a, b, false
			}
			continue
		}
		r := q / p
		if p < 0 {
			t0 = math.Max(t0, r)
		} else {
			t1 = math.Min(t1, r)
		}
	}
	if t0 > t1 {
		return a, b, false
	}
	return PointPx{x0 + t0*dx, y0 + t0*dy}, PointPx{x0 + t1*dx, y0 + t1*dy}, true
}

// flippedTicks labels a y axis that holds -y_px with y_px, so the image
// keeps its rows top to bottom while the axis reads like image rows.
type flippedTicks struct{}

// Ticks implements plot.Ticker.
func (flippedTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := niceTicks{Major: 5}.Ticks(lo, hi)
	for i := range ts {
		if ts[i].Label != "" {
			v := -ts[i].Value
			if v == 0 {
				v = 0 // not "-0"
			}
			ts[i].Label = strconv.FormatFloat(v, 'g', -1, 64)
		}
	}
	return ts
}

// OverlayPlot draws the frame as an image with the walls, the gap axes (x
// along the flow, y across the gap, ticks in µm), a scale bar and the
// tracks as vector marks over it, in a figure across both columns whose
// image keeps the frame's aspect ratio, with the image axes in px.
func OverlayPlot(o *Overlay) (*Figure, error) {
	if err := o.Check(); err != nil {
		return nil, err
	}
	img, err := o.Frame.ToImage()
	if err != nil {
		return nil, fmt.Errorf("figure: overlay: %w", err)
	}
	w, h := float64(o.Frame.Cols()), float64(o.Frame.Rows())
	pn := &Panel{Plot: NewPlot("image x (px)", "image y (px)")}
	p := pn.Plot
	p.Add(plotter.NewImage(img, -0.5, -(h - 0.5), w-0.5, 0.5))
	p.X.Min, p.X.Max = -0.5, w-0.5
	p.Y.Min, p.Y.Max = -(h - 0.5), 0.5
	p.Y.Tick.Marker = flippedTicks{}
	p.X.Tick.Marker = niceTicks{Major: 8}
	marks := newOverlayMarks(o)
	p.Add(marks)
	pn.AddLegend("stationary wall", lineSymbol{lineStyle(SkyBlue, overlayWallPt, nil)})
	pn.AddLegend("moving wall", lineSymbol{lineStyle(Orange, overlayWallPt, nil)})
	if len(o.Tracks) > 0 {
		pn.AddLegend("tracks (dot: latest position)", lineSymbol{lineStyle(Blue, overlayTrackPt, nil)},
			markerSymbol{glyph: draw.GlyphStyle{Color: Blue, Radius: vg.Points(overlayDotPt), Shape: draw.CircleGlyph{}}})
	}

	// Choose the height so the data area has the frame's aspect ratio: the
	// layout of a first guess, corrected by the data area's misfit.
	hTry := DoubleColumnCM * h / w
	da := measure(DoubleColumnCM, hTry, pn)
	dw, dh := float64(da.Max.X-da.Min.X), float64(da.Max.Y-da.Min.Y)
	hCM := hTry + (dw*h/w-dh)/float64(cm(1))
	f, err := Compose(DoubleColumnCM, hCM, [][]*Panel{{pn}})
	if err != nil {
		return nil, err
	}
	f.CSV = marks.table().CSV()
	return f, nil
}

// overlayMarks is the plotter of the annotations, in image px.
type overlayMarks struct {
	o    *Overlay
	w, h float64 // frame size, px
	// flowLeft: the flow runs towards -x of the image.
	flowLeft bool
	walls    [2][2]PointPx // clipped stationary and moving wall lines
	haveWall [2]bool
	// Gap axes: origin on the stationary wall, ends of the x and y arrows,
	// and the y ticks with their heights, um.
	origin, xEnd, yEnd PointPx
	ticks              []PointPx
	tickUM             []float64
	barUM              float64
}

func newOverlayMarks(o *Overlay) *overlayMarks {
	cal := o.Calibration
	m := &overlayMarks{o: o, w: float64(o.Frame.Cols()), h: float64(o.Frame.Rows())}
	// The gap axes start near the image side the flow comes from, so the
	// x arrow points into the image; the scale bar goes the other way.
	ax0, _ := cal.ToImage(0, 0)
	ax1, _ := cal.ToImage(1, 0)
	m.flowLeft = ax1 < ax0
	for k, l := range []calib.Line{cal.StationaryWallPx, cal.MovingWallPx} {
		a, b, ok := clipLine(l, m.w, m.h)
		m.walls[k], m.haveWall[k] = [2]PointPx{a, b}, ok
	}
	originPx := axisInset * m.w
	if m.flowLeft {
		originPx = (1 - axisInset) * m.w
	}
	ox, _ := cal.ToGap(originPx, stationaryYAt(cal, originPx))
	pt := func(xUM, yUM float64) PointPx {
		x, y := cal.ToImage(xUM, yUM)
		return PointPx{x, y}
	}
	m.origin = pt(ox, 0)
	m.xEnd = pt(ox+xAxisLength*m.w*cal.UMPerPx, 0)
	m.yEnd = pt(ox, cal.GapUM)
	for i := 0; i <= axisTicks; i++ {
		yUM := cal.GapUM * float64(i) / axisTicks
		m.ticks = append(m.ticks, pt(ox, yUM))
		m.tickUM = append(m.tickUM, yUM)
	}
	m.barUM = o.ScaleBarUM
	if !(m.barUM > 0) {
		m.barUM = roundLength(scaleBarLength * m.w * cal.UMPerPx)
	}
	return m
}

// table is the annotations' positions for the figure's CSV.
func (m *overlayMarks) table() *Table {
	t := NewTable("series", "x_px", "y_px", "y_um")
	names := []string{"stationary_wall", "moving_wall"}
	for k := range m.walls {
		if m.haveWall[k] {
			for _, q := range m.walls[k] {
				t.Row(names[k], q.XPx, q.YPx)
			}
		}
	}
	t.Row("x_axis", m.origin.XPx, m.origin.YPx, 0.0)
	t.Row("x_axis", m.xEnd.XPx, m.xEnd.YPx, 0.0)
	for i, q := range m.ticks {
		t.Row("y_axis_tick", q.XPx, q.YPx, m.tickUM[i])
	}
	t.Row("scale_bar_um", m.barUM)
	for i, tr := range m.o.Tracks {
		for _, q := range tr {
			t.Row(fmt.Sprintf("track %d", i+1), q.XPx, q.YPx)
		}
	}
	return t
}

// Plot implements plot.Plotter: tracks first, then walls, axes and the
// scale bar on top.
func (m *overlayMarks) Plot(c draw.Canvas, plt *plot.Plot) {
	tx, ty := plt.Transforms(&c)
	at := func(q PointPx) vg.Point { return vg.Point{X: tx(q.XPx), Y: ty(-q.YPx)} }
	for i, tr := range m.o.Tracks {
		if len(tr) == 0 {
			continue
		}
		col := trackColours[i%len(trackColours)]
		line := make([]vg.Point, len(tr))
		for j, q := range tr {
			line[j] = at(q)
		}
		c.StrokeLines(lineStyle(col, overlayTrackPt, nil), line)
		c.DrawGlyph(draw.GlyphStyle{Color: col, Radius: vg.Points(overlayDotPt), Shape: draw.CircleGlyph{}}, line[len(line)-1])
	}
	for k, col := range []color.Color{SkyBlue, Orange} {
		if m.haveWall[k] {
			c.StrokeLine2(lineStyle(col, overlayWallPt, nil), at(m.walls[k][0]).X, at(m.walls[k][0]).Y,
				at(m.walls[k][1]).X, at(m.walls[k][1]).Y)
		}
	}

	white := color.White
	ax := lineStyle(white, overlayAxisPt, nil)
	o := at(m.origin)
	arrowTo(c, o, at(m.xEnd), ax)
	arrowTo(c, o, at(m.yEnd), ax)
	pad := vg.Points(overlayArrowPt)
	xe, ye := at(m.xEnd), at(m.yEnd)
	dir := unit(xe.X-o.X, xe.Y-o.Y)
	onImage(c, "x", vg.Point{X: xe.X + dir.X*pad, Y: xe.Y + dir.Y*pad}, draw.XCenter, draw.YCenter)
	// Ticks on the side of the y axis away from the flow's start, labels
	// beyond them; the axis's name on the other side, at its end.
	side := vg.Length(1)
	xa, xaName, labelSide := draw.XLeft, draw.XRight, vg.Length(1)
	if m.flowLeft {
		side, xa, xaName, labelSide = -1, draw.XRight, draw.XLeft, -1
	}
	tick := vg.Points(overlayTickPt)
	onImage(c, "y", vg.Point{X: ye.X - labelSide*vg.Points(2), Y: ye.Y}, xaName, draw.YCenter)
	for i, q := range m.ticks {
		p := at(q)
		c.StrokeLine2(ax, p.X, p.Y, p.X+side*tick, p.Y)
		lab := minusSign(strconv.FormatFloat(m.tickUM[i], 'g', 4, 64))
		if i == len(m.ticks)-1 {
			lab += " µm"
		}
		onImage(c, lab, vg.Point{X: p.X + labelSide*(tick+vg.Points(2)), Y: p.Y}, xa, draw.YCenter)
	}

	// Scale bar in the lower corner away from the axes.
	cal := m.o.Calibration
	x0, x1 := tx(-0.5), tx(m.w-0.5)
	yBottom := ty(-(m.h - 0.5))
	inset := vg.Points(overlayInsetPt)
	barLen := tx(m.barUM/cal.UMPerPx) - tx(0)
	bx1 := x1 - inset
	if m.flowLeft {
		bx1 = x0 + inset + barLen
	}
	by := yBottom + inset
	label := minusSign(strconv.FormatFloat(m.barUM, 'g', 4, 64)) + " µm"
	sty := textStyleAt(House.NotePt, draw.XCenter, draw.YBottom)
	sty.Color = white
	lr := sty.Rectangle(label)
	boxPad := vg.Points(overlayBoxPadPt)
	top := by + vg.Points(overlayBarPt) + vg.Points(1.5) + (lr.Max.Y - lr.Min.Y)
	halfW := max(barLen, lr.Max.X-lr.Min.X) / 2
	mid := bx1 - barLen/2
	fillRect(c, vg.Rectangle{Min: vg.Point{X: mid - halfW - boxPad, Y: by - boxPad - vg.Points(overlayBarPt)/2},
		Max: vg.Point{X: mid + halfW + boxPad, Y: top + boxPad}}, backdrop)
	c.StrokeLine2(lineStyle(white, overlayBarPt, nil), bx1-barLen, by, bx1, by)
	c.FillText(sty, vg.Point{X: mid, Y: by + vg.Points(overlayBarPt)/2 + vg.Points(1.5) - lr.Min.Y}, label)
}

// DataRange implements plot.DataRanger: within the image.
func (m *overlayMarks) DataRange() (xmin, xmax, ymin, ymax float64) {
	return -0.5, m.w - 0.5, -(m.h - 0.5), 0.5
}

// unit is the unit vector along (dx, dy), zero for a zero vector.
func unit(dx, dy vg.Length) vg.Point {
	n := vg.Length(math.Hypot(float64(dx), float64(dy)))
	if n == 0 {
		return vg.Point{}
	}
	return vg.Point{X: dx / n, Y: dy / n}
}

// arrowTo draws a line from a to b ending in a filled head at b.
func arrowTo(c draw.Canvas, a, b vg.Point, st draw.LineStyle) {
	d := unit(b.X-a.X, b.Y-a.Y)
	if d == (vg.Point{}) {
		return
	}
	head := vg.Points(overlayArrowPt)
	base := vg.Point{X: b.X - d.X*head, Y: b.Y - d.Y*head}
	c.StrokeLine2(st, a.X, a.Y, base.X, base.Y)
	// A head about 2 x 26 degrees wide.
	half := head * vg.Length(math.Tan(math.Pi/7))
	var tri vg.Path
	tri.Move(b)
	tri.Line(vg.Point{X: base.X - d.Y*half, Y: base.Y + d.X*half})
	tri.Line(vg.Point{X: base.X + d.Y*half, Y: base.Y - d.X*half})
	tri.Close()
	c.SetColor(st.Color)
	c.Fill(tri)
}

// fillRect fills r with col.
func fillRect(c draw.Canvas, r vg.Rectangle, col color.Color) {
	c.SetColor(col)
	c.Fill(r.Path())
}

// onImage writes white text on its backdrop at p.
func onImage(c draw.Canvas, txt string, p vg.Point, xa draw.XAlignment, ya draw.YAlignment) {
	sty := textStyleAt(House.NotePt, xa, ya)
	sty.Color = color.White
	r := sty.Rectangle(txt).Add(p)
	pad := vg.Points(overlayBoxPadPt)
	fillRect(c, vg.Rectangle{Min: vg.Point{X: r.Min.X - pad, Y: r.Min.Y - pad}, Max: vg.Point{X: r.Max.X + pad, Y: r.Max.Y + pad}}, backdrop)
	c.FillText(sty, p, txt)
}
