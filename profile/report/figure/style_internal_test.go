package figure

import (
	"bytes"
	"image"
	"image/png"
	"math"
	"slices"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/recorder"

	"gaptrace/profile/report/internal/figcheck"
)

// slack is the rounding allowed on a drawn position, pt.
const slack = 1e-6

// The frame is closed and every tick lies inside it.
func TestFrameTicksInside(t *testing.T) {
	p := NewPlot("x", "y")
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, -3, 7
	rec := &recorder.Canvas{}
	da := draw.Canvas{Canvas: rec, Rectangle: vg.Rectangle{Min: vg.Point{X: 30, Y: 20}, Max: vg.Point{X: 200, Y: 150}}}
	drawFrame(da, p, false, false)
	var strokes []vg.Path
	for _, a := range rec.Actions {
		if s, ok := a.(*recorder.Stroke); ok {
			strokes = append(strokes, s.Path)
		}
	}
	if len(strokes) < 5 {
		t.Fatalf("%d strokes, want a frame and ticks", len(strokes))
	}
	inside := func(q vg.Point) bool {
		r := da.Rectangle
		return q.X >= r.Min.X-slack && q.X <= r.Max.X+slack && q.Y >= r.Min.Y-slack && q.Y <= r.Max.Y+slack
	}
	ticks := 0
	for _, path := range strokes {
		for _, c := range path {
			if !inside(c.Pos) {
				t.Errorf("stroke point %v outside the frame %v", c.Pos, da.Rectangle)
			}
		}
		if len(path) == 2 {
			ticks++
			l := math.Hypot(float64(path[1].Pos.X-path[0].Pos.X), float64(path[1].Pos.Y-path[0].Pos.Y))
			if l > House.MajorTickPt+slack {
				t.Errorf("tick %.2f pt long, longer than %g pt", l, House.MajorTickPt)
			}
		}
	}
	frame := strokes[len(strokes)-1]
	if len(frame) != 5 || frame[0].Pos != frame[4].Pos {
		t.Errorf("the frame is not a closed rectangle: %v", frame)
	}
	// Ticks mirrored on all four sides: the two axes' ticks twice each.
	want := 0
	for _, tk := range p.X.Tick.Marker.Ticks(p.X.Min, p.X.Max) {
		if tk.Value > p.X.Min && tk.Value < p.X.Max {
			want += 2
		}
	}
	for _, tk := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
		if tk.Value > p.Y.Min && tk.Value < p.Y.Max {
			want += 2
		}
	}
	if ticks != want {
		t.Errorf("%d ticks, want %d (each axis's inner ticks on both sides)", ticks, want)
	}
}

// A legend entry shows its symbol first, then its text, and stands above
// the frame.
func TestLegendSymbolFirst(t *testing.T) {
	rec := &recorder.Canvas{}
	c := draw.Canvas{Canvas: rec, Rectangle: vg.Rectangle{Max: vg.Point{X: 300, Y: 200}}}
	const frameTop = 150
	rows := legendRows([]LegendEntry{{Text: "fit", Symbols: []plot.Thumbnailer{lineSymbol{lineStyle(Blue, 1, nil)}}}}, 300)
	drawLegend(c, rows, 40, frameTop)
	var symX, textX vg.Length = -1, -1
	for _, a := range rec.Actions {
		switch v := a.(type) {
		case *recorder.Stroke:
			symX = v.Path[0].Pos.X
			for _, q := range v.Path {
				if q.Pos.Y < frameTop {
					t.Errorf("legend symbol at y = %v, inside the frame below %d", q.Pos.Y, frameTop)
				}
			}
		case *recorder.FillString:
			textX = v.Point.X
			if v.Point.Y < frameTop {
				t.Errorf("legend text at y = %v, inside the frame", v.Point.Y)
			}
		}
	}
	if symX < 0 || textX < 0 || symX >= textX {
		t.Errorf("symbol at x = %v, text at x = %v: want the symbol first", symX, textX)
	}
}

// The value axis of the profile ends at the data (with the small margin),
// whatever the legend holds: a legend outside the frame takes no room from
// the data. (Inside the frame it stretched v/V to 1.5.)
func TestProfileAxisFitsData(t *testing.T) {
	pp := &PhaseProfile{GapUM: 800, WallSpeedUMPerS: 1000, Bands: []Band{{0, 300, 2}, {300, 800, 1}}}
	for i := range 8 {
		y := (float64(i) + 0.5) * 100
		pp.Points = append(pp.Points, ProfilePoint{YUM: y, VUMPerS: 0.5 * y, ErrUMPerS: 5, N: 50})
	}
	pn, _, err := profilePanel(pp)
	if err != nil {
		t.Fatal(err)
	}
	// Data and references span v/V from 0 to 1 (the no-slip line).
	lo, hi := withMargin(0, 1)
	if p := pn.Plot; math.Abs(p.Y.Min-lo) > slack || math.Abs(p.Y.Max-hi) > slack || p.X.Min != 0 || p.X.Max != 1 {
		t.Errorf("axes [%g, %g] x [%g, %g], want [0, 1] x [%g, %g]", p.X.Min, p.X.Max, p.Y.Min, p.Y.Max, lo, hi)
	}
	if len(pn.Legend) < 3 || len(pn.Notes) != 2 {
		t.Errorf("%d legend entries, %d band notes", len(pn.Legend), len(pn.Notes))
	}
}

// Marked-up text splits into runs; Plain strips the marks.
func TestRichTextRuns(t *testing.T) {
	for _, c := range []struct {
		in    string
		runs  []run
		plain string
	}{
		{"rate (s^{−1})", []run{{"rate (s", 0}, {"−1", 1}, {")", 0}}, "rate (s−1)"},
		{"r − R_{i}", []run{{"r − R", 0}, {"i", -1}}, "r − Ri"},
		{"a^b_c", []run{{"a^", 0}, {"b_", 0}, {"c", 0}}, "a^b_c"},
		{"open ^{", []run{{"open ^{", 0}}, "open ^{"},
	} {
		if got := runs(c.in); !slices.Equal(got, c.runs) {
			t.Errorf("runs(%q) = %v, want %v", c.in, got, c.runs)
		}
		if got := Plain(c.in); got != c.plain {
			t.Errorf("Plain(%q) = %q, want %q", c.in, got, c.plain)
		}
	}
	// A superscript is set at ScriptPt, never below MinFontPt, and widens
	// the text by its own width.
	f := House.Face(House.AxisLabelPt, false)
	w1, h1, _ := houseText.Box("s", f)
	w2, h2, _ := houseText.Box("s^{−1}", f)
	if !(w2 > w1) || !(h2 > h1) {
		t.Errorf("box of s^{−1} (%v x %v) not larger than of s (%v x %v)", w2, h2, w1, h1)
	}
	if sf := scriptFont(f); sf.Size.Points() < MinFontPt {
		t.Errorf("script of %g pt", sf.Size.Points())
	}
}

// withPHYs adds a pHYs chunk that the PNG specification's reader
// (figcheck) and Go's image/png (which checks every chunk's CRC) accept,
// and leaves the image as it was.
func TestWithPHYs(t *testing.T) {
	img := image.NewGray(image.Rect(0, 0, 3, 2))
	img.Pix[4] = 200
	var b bytes.Buffer
	if err := png.Encode(&b, img); err != nil {
		t.Fatal(err)
	}
	out, err := withPHYs(b.Bytes(), 300)
	if err != nil {
		t.Fatal(err)
	}
	ph, err := figcheck.ReadPHYs(out)
	if err != nil {
		t.Fatal(err)
	}
	// 300 dpi is 300 / 0.0254 = 11811.02 px/m, written as 11811.
	if ph.PerUnitX != 11811 || ph.PerUnitY != 11811 || ph.Unit != 1 {
		t.Errorf("pHYs %+v, want 11811 px/m both ways", ph)
	}
	back, err := png.Decode(bytes.NewReader(out))
	if err != nil {
		t.Fatal(err)
	}
	if g := back.(*image.Gray); !bytes.Equal(g.Pix, img.Pix) {
		t.Errorf("pixels changed: %v, want %v", g.Pix, img.Pix)
	}
	if _, err := withPHYs([]byte("not a png"), 300); err == nil {
		t.Errorf("no error for bytes that are not a PNG")
	}
}

// Table writes unknown values as empty cells and numbers that read back
// exactly.
func TestTable(t *testing.T) {
	tab := NewTable("series", "y_um", "n")
	a, b := 0.1, 0.2 // variables: a constant 0.1+0.2 folds to 0.3 exactly
	tab.Row("measured", a+b, 3)
	tab.Row("fit", math.NaN())
	want := "series,y_um,n\nmeasured,0.30000000000000004,3\nfit,,\n"
	if got := string(tab.CSV()); got != want {
		t.Errorf("CSV %q, want %q", got, want)
	}
}
