package figure

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"strconv"
	"strings"

	"codeberg.org/go-pdf/fpdf"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
)

// pdfCanvas is a vg.Canvas that writes a one-page PDF through fpdf with
// the faces embedded as Unicode (Type 0) fonts, so µ, − and Greek letters
// come out as themselves and can be searched and copied. (gonum's own PDF
// canvas encodes text in Windows code page 1252, which has neither the
// minus sign nor most of what a figure of a measurement needs.)
//
// fpdf measures from the top left corner of the page, vg from the bottom
// left; the canvas passes every point as (x, h - y) and keeps vg's
// transformations as PDF matrices in PDF's own bottom-left frame, where
// they mean what vg means by them.
type pdfCanvas struct {
	doc    *fpdf.Fpdf
	w, h   vg.Length
	stack  []pdfState
	fonts  map[string]string // face name -> fpdf family
	images int
}

// pdfState is what Push saves and Pop restores.
type pdfState struct {
	col    color.Color
	width  vg.Length
	dashes []vg.Length
	offs   vg.Length
	alpha  float64
}

func newPDF(w, h vg.Length) *pdfCanvas {
	doc := fpdf.NewCustom(&fpdf.InitType{UnitStr: "pt", Size: fpdf.SizeType{Wd: w.Points(), Ht: h.Points()}})
	doc.SetMargins(0, 0, 0)
	doc.SetAutoPageBreak(false, 0)
	doc.SetCellMargin(0)
	doc.SetCreator("gaptrace", false)
	doc.AddPageFormat("P", fpdf.SizeType{Wd: w.Points(), Ht: h.Points()})
	doc.SetLineCapStyle("butt")
	doc.SetLineJoinStyle("miter")
	c := &pdfCanvas{doc: doc, w: w, h: h, stack: []pdfState{{col: color.Black, width: 1, alpha: 1}}, fonts: map[string]string{}}
	vg.Initialize(c)
	return c
}

func (c *pdfCanvas) top() *pdfState { return &c.stack[len(c.stack)-1] }

// pt is a vg point in fpdf's page coordinates.
func (c *pdfCanvas) pt(p vg.Point) (float64, float64) {
	return p.X.Points(), (c.h - p.Y).Points()
}

// Size implements vg.CanvasSizer.
func (c *pdfCanvas) Size() (w, h vg.Length) { return c.w, c.h }

// SetLineWidth implements vg.Canvas.
func (c *pdfCanvas) SetLineWidth(w vg.Length) {
	c.top().width = w
	c.doc.SetLineWidth(w.Points())
}

// SetLineDash implements vg.Canvas.
func (c *pdfCanvas) SetLineDash(dashes []vg.Length, offs vg.Length) {
	c.top().dashes, c.top().offs = dashes, offs
	ds := make([]float64, len(dashes))
	for i, d := range dashes {
		ds[i] = d.Points()
	}
	c.doc.SetDashPattern(ds, offs.Points())
}

// SetColor implements vg.Canvas.
func (c *pdfCanvas) SetColor(col color.Color) {
	if col == nil {
		col = color.Black
	}
	c.top().col = col
	r, g, b, a := col.RGBA()
	// color.Color is alpha-premultiplied; PDF wants the straight colour.
	un := func(v uint32) int {
		if a == 0 {
			return 0
		}
		return int(math.Round(float64(v) / float64(a) * 255))
	}
	c.doc.SetDrawColor(un(r), un(g), un(b))
	c.doc.SetFillColor(un(r), un(g), un(b))
	c.doc.SetTextColor(un(r), un(g), un(b))
	alpha := float64(a) / 0xffff
	if alpha != c.top().alpha {
		c.doc.SetAlpha(alpha, "Normal")
		c.top().alpha = alpha
	}
}

// matrix writes a transformation "a b c d e f cm".
func (c *pdfCanvas) matrix(m ...float64) {
	parts := make([]string, len(m))
	for i, v := range m {
		parts[i] = strconv.FormatFloat(v, 'f', 5, 64)
	}
	c.doc.RawWriteStr(strings.Join(parts, " ") + " cm")
}

// Rotate implements vg.Canvas: counter-clockwise by r radians.
func (c *pdfCanvas) Rotate(r float64) {
	s, co := math.Sincos(r)
	c.matrix(co, s, -s, co, 0, 0)
}

// Translate implements vg.Canvas.
func (c *pdfCanvas) Translate(p vg.Point) { c.matrix(1, 0, 0, 1, p.X.Points(), p.Y.Points()) }

// Scale implements vg.Canvas.
func (c *pdfCanvas) Scale(x, y float64) { c.matrix(x, 0, 0, y, 0, 0) }

// Push implements vg.Canvas.
func (c *pdfCanvas) Push() {
	c.stack = append(c.stack, *c.top())
	c.doc.RawWriteStr("q")
}

// Pop implements vg.Canvas. PDF restores its own state with Q; fpdf's
// record of it is set again to match.
func (c *pdfCanvas) Pop() {
	c.doc.RawWriteStr("Q")
	c.stack = c.stack[:len(c.stack)-1]
	st := *c.top()
	c.top().alpha = -1 // force the alpha to be written again
	c.SetColor(st.col)
	c.SetLineWidth(st.width)
	c.SetLineDash(st.dashes, st.offs)
}

// Stroke implements vg.Canvas.
func (c *pdfCanvas) Stroke(p vg.Path) {
	if c.top().width <= 0 || len(p) == 0 {
		return
	}
	c.path(p)
	c.doc.DrawPath("D")
}

// Fill implements vg.Canvas.
func (c *pdfCanvas) Fill(p vg.Path) {
	if len(p) == 0 {
		return
	}
	c.path(p)
	c.doc.DrawPath("F")
}

// path writes the segments of p.
func (c *pdfCanvas) path(p vg.Path) {
	var start vg.Point
	moved := false
	for _, comp := range p {
		switch comp.Type {
		case vg.MoveComp:
			c.doc.MoveTo(c.pt(comp.Pos))
			start, moved = comp.Pos, true
		case vg.LineComp:
			c.doc.LineTo(c.pt(comp.Pos))
		case vg.CurveComp:
			switch len(comp.Control) {
			case 1:
				cx, cy := c.pt(comp.Control[0])
				x, y := c.pt(comp.Pos)
				c.doc.CurveTo(cx, cy, x, y)
			case 2:
				ax, ay := c.pt(comp.Control[0])
				bx, by := c.pt(comp.Control[1])
				x, y := c.pt(comp.Pos)
				c.doc.CurveBezierCubicTo(ax, ay, bx, by, x, y)
			}
		case vg.ArcComp:
			s := arcPoint(comp, comp.Start)
			if moved {
				c.doc.LineTo(c.pt(s))
			} else {
				c.doc.MoveTo(c.pt(s))
				start, moved = s, true
			}
			c.arc(comp)
		case vg.CloseComp:
			c.doc.LineTo(c.pt(start))
			c.doc.ClosePath()
		}
	}
}

func arcPoint(comp vg.PathComp, a float64) vg.Point {
	s, co := math.Sincos(a)
	return vg.Point{X: comp.Pos.X + comp.Radius*vg.Length(co), Y: comp.Pos.Y + comp.Radius*vg.Length(s)}
}

// arc writes a circular arc as cubic Bézier curves of at most a quarter
// turn each, with control points at 4/3 tan(θ/4) of the radius along the
// tangents, the usual approximation (its radial error is below 3e-4 of
// the radius for a quarter turn; common practice).
func (c *pdfCanvas) arc(comp vg.PathComp) {
	n := max(1, int(math.Ceil(math.Abs(comp.Angle)/(math.Pi/2))))
	step := comp.Angle / float64(n)
	k := 4.0 / 3 * math.Tan(step/4) * float64(comp.Radius)
	for i := range n {
		a0 := comp.Start + float64(i)*step
		a1 := a0 + step
		p0, p3 := arcPoint(comp, a0), arcPoint(comp, a1)
		s0, c0 := math.Sincos(a0)
		s1, c1 := math.Sincos(a1)
		p1 := vg.Point{X: p0.X - vg.Length(k*s0), Y: p0.Y + vg.Length(k*c0)}
		p2 := vg.Point{X: p3.X + vg.Length(k*s1), Y: p3.Y - vg.Length(k*c1)}
		ax, ay := c.pt(p1)
		bx, by := c.pt(p2)
		x, y := c.pt(p3)
		c.doc.CurveBezierCubicTo(ax, ay, bx, by, x, y)
	}
}

// FillString implements vg.Canvas: the text with its baseline's left end
// at p.
func (c *pdfCanvas) FillString(f font.Face, p vg.Point, s string) {
	if f.Font.Size <= 0 || s == "" {
		return
	}
	name := f.Name()
	family, ok := c.fonts[name]
	if !ok {
		var raw bytes.Buffer
		if _, err := f.Face.WriteSourceTo(nil, &raw); err != nil {
			panic(fmt.Sprintf("figure: pdf: font %s: %v", name, err))
		}
		family = strings.NewReplacer(" ", "", "-", "").Replace(name)
		c.doc.AddUTF8FontFromBytes(family, "", raw.Bytes())
		c.fonts[name] = family
	}
	c.doc.SetFont(family, "", f.Font.Size.Points())
	x, y := c.pt(p)
	c.doc.Text(x, y, s)
}

// DrawImage implements vg.Canvas.
func (c *pdfCanvas) DrawImage(r vg.Rectangle, img image.Image) {
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		panic(fmt.Sprintf("figure: pdf: image: %v", err))
	}
	c.images++
	name := fmt.Sprintf("image%d", c.images)
	opt := fpdf.ImageOptions{ImageType: "PNG"}
	c.doc.RegisterImageOptionsReader(name, opt, &buf)
	x, y := c.pt(vg.Point{X: r.Min.X, Y: r.Max.Y})
	c.doc.ImageOptions(name, x, y, (r.Max.X - r.Min.X).Points(), (r.Max.Y - r.Min.Y).Points(), false, opt, 0, "")
}

// WriteTo writes the PDF; the canvas is finished afterwards.
func (c *pdfCanvas) WriteTo(w io.Writer) (int64, error) {
	var buf bytes.Buffer
	if err := c.doc.Output(&buf); err != nil {
		return 0, err
	}
	return buf.WriteTo(w)
}
