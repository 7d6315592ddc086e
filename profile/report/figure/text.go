package figure

import (
	"math"
	"strings"

	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
)

// houseText is the text handler of every figure text.
var houseText = richText{fonts: font.DefaultCache}

// Placement of scripts, as fractions of the size of the text they follow:
// a superscript's baseline is raised by supRise, a subscript's lowered by
// subDrop (common practice of typesetting, where the raise is about a
// third of the body size).
const (
	supRise = 0.36
	subDrop = 0.16
)

// richText is a text.Handler for plain text with two marks: x^{...} sets
// its braces as a superscript and x_{...} as a subscript, both in
// House.ScriptPt (never smaller than MinFontPt) on a shifted baseline. The
// face Liberation Sans has no superscript minus, so "s⁻¹" is written
// "s^{−1}".
type richText struct{ fonts *font.Cache }

var _ text.Handler = richText{}

// run is a piece of text on one baseline: shift 0 is the body, +1 a
// superscript, -1 a subscript.
type run struct {
	s     string
	shift int
}

// runs splits a line at its marks.
func runs(line string) []run {
	var out []run
	for line != "" {
		i := strings.IndexAny(line, "^_")
		if i < 0 || i+1 >= len(line) || line[i+1] != '{' {
			if i >= 0 && i+1 < len(line) {
				// A lone ^ or _ is text.
				out = append(out, run{line[:i+1], 0})
				line = line[i+1:]
				continue
			}
			out = append(out, run{line, 0})
			break
		}
		end := strings.IndexByte(line[i:], '}')
		if end < 0 {
			out = append(out, run{line, 0})
			break
		}
		if i > 0 {
			out = append(out, run{line[:i], 0})
		}
		shift := 1
		if line[i] == '_' {
			shift = -1
		}
		out = append(out, run{line[i+2 : i+end], shift})
		line = line[i+end+1:]
	}
	return out
}

// Plain strips the marks of s: the text a reader of the data sees ("s−1").
func Plain(s string) string {
	var b strings.Builder
	for _, r := range runs(s) {
		b.WriteString(r.s)
	}
	return b.String()
}

// scriptFont is the font of a script after text in f.
func scriptFont(f font.Font) font.Font {
	s := f
	s.Size = vg.Points(math.Min(f.Size.Points(), math.Max(House.ScriptPt, MinFontPt)))
	return s
}

// Cache implements text.Handler.
func (h richText) Cache() *font.Cache { return h.fonts }

// Extents implements text.Handler: those of the body font.
func (h richText) Extents(f font.Font) font.Extents {
	face := h.fonts.Lookup(f, f.Size)
	return face.Extents()
}

// Lines implements text.Handler.
func (h richText) Lines(txt string) []string {
	return strings.Split(strings.TrimRight(txt, "\n"), "\n")
}

// offset is the baseline shift of a run in text of font f.
func offset(f font.Font, shift int) vg.Length {
	switch shift {
	case 1:
		return vg.Length(supRise) * f.Size
	case -1:
		return -vg.Length(subDrop) * f.Size
	}
	return 0
}

// Box implements text.Handler.
func (h richText) Box(txt string, f font.Font) (width, height, depth vg.Length) {
	body := h.fonts.Lookup(f, f.Size)
	e := body.Extents()
	height, depth = e.Ascent, e.Descent
	for _, r := range runs(txt) {
		face := body
		if r.shift != 0 {
			sf := scriptFont(f)
			face = h.fonts.Lookup(sf, sf.Size)
			se := face.Extents()
			off := offset(f, r.shift)
			height = max(height, off+se.Ascent)
			depth = max(depth, se.Descent-off)
		}
		width += face.Width(r.s)
	}
	return width, height, depth
}

// Draw implements text.Handler, placing the text as text.Plain does.
func (h richText) Draw(c vg.Canvas, txt string, sty text.Style, pt vg.Point) {
	txt = strings.TrimRight(txt, "\n")
	if txt == "" {
		return
	}
	body := h.fonts.Lookup(sty.Font, sty.Font.Size)
	sf := scriptFont(sty.Font)
	script := h.fonts.Lookup(sf, sf.Size)
	c.SetColor(sty.Color)
	if sty.Rotation != 0 {
		c.Push()
		c.Rotate(sty.Rotation)
	}
	sin64, cos64 := math.Sincos(sty.Rotation)
	sin, cos := vg.Length(sin64), vg.Length(cos64)
	pt.X, pt.Y = pt.Y*sin+pt.X*cos, pt.Y*cos-pt.X*sin

	lines := h.Lines(txt)
	pt.Y += sty.Height(txt)*vg.Length(sty.YAlign) - body.Extents().Ascent
	for i, line := range lines {
		w, _, _ := h.Box(line, sty.Font)
		x := pt.X + vg.Length(sty.XAlign)*w
		y := pt.Y + vg.Length(len(lines)-i)*sty.Font.Size
		for _, r := range runs(line) {
			face := body
			if r.shift != 0 {
				face = script
			}
			c.FillString(face, vg.Point{X: x, Y: y + offset(sty.Font, r.shift)}, r.s)
			x += face.Width(r.s)
		}
	}
	if sty.Rotation != 0 {
		c.Pop()
	}
}
