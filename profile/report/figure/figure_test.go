package figure_test

import (
	"bytes"
	"encoding/csv"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/figcheck"
	"gaptrace/profile/report/internal/scenario"
)

// draw is one figure of the scenario.
type draw struct {
	name   string
	widthC float64
	draw   func(t *testing.T) (*figure.Figure, error)
}

// rendered holds each figure of the scenario, drawn once for all tests
// that only read it.
var rendered sync.Map // name -> *renderedFigure

type renderedFigure struct {
	once sync.Once
	fig  *figure.Figure
	err  error
}

// render draws f once.
func (f draw) render(t *testing.T) (*figure.Figure, error) {
	v, _ := rendered.LoadOrStore(f.name, &renderedFigure{})
	r := v.(*renderedFigure)
	r.once.Do(func() { r.fig, r.err = f.draw(t) })
	return r.fig, r.err
}

var figures = []draw{
	{"profile", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.ProfilePlot(scenario.Profile()) }},
	{"space_time", figure.DoubleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.SpaceTimePlot(scenario.SpaceTime()) }},
	{"slip", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.SlipPlot(scenario.Slip()) }},
	{"startup", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.StartUpPlot(scenario.StartUp()) }},
	{"after_stop", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.AfterStopPlot(scenario.AfterStop()) }},
	{"detection", figure.DoubleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.DetectionPlot(scenario.Detection()) }},
	{"frame", figure.DoubleColumnCM, func(t *testing.T) (*figure.Figure, error) {
		frame, tracks := scenario.Frame()
		defer frame.Close()
		return figure.OverlayPlot(&figure.Overlay{Frame: frame, Calibration: scenario.Calibration(), Tracks: tracks})
	}},
}

// Journal column widths, mm (common practice of two-column journals, as
// the issue gives them): a single-column figure 85 to 90 mm wide, a
// double-column one 170 to 180 mm.
var columnMM = map[float64][2]float64{figure.SingleColumnCM: {85, 90}, figure.DoubleColumnCM: {170, 180}}

const mmPerPt = 25.4 / 72

// TestFiguresJournalReady renders each figure of the scenario and checks
// the three files against what a journal asks: the PNG decodes (Go's
// image/png checks every chunk's CRC) at the column width and declares its
// DPI in a pHYs chunk; the PDF's page is a column wide, its text 7 to 9 pt
// and every font embedded; the SVG's text is 7 to 9 pt with a font list
// that ends in a generic family; the CSV holds the plotted data. The file
// formats are read back with figcheck, which follows the specifications.
// FIGURE_DIR=path keeps the files for a look.
func TestFiguresJournalReady(t *testing.T) {
	keep := os.Getenv("FIGURE_DIR")
	for _, f := range figures {
		t.Run(f.name, func(t *testing.T) {
			fig, err := f.render(t)
			if err != nil {
				t.Fatal(err)
			}
			if keep != "" {
				for ext, b := range map[string][]byte{".png": fig.PNG, ".svg": fig.SVG, ".pdf": fig.PDF, ".csv": fig.CSV} {
					os.WriteFile(filepath.Join(keep, f.name+ext), b, 0o644)
				}
			}
			if fig.WidthCM != f.widthC {
				t.Errorf("WidthCM %g, want %g", fig.WidthCM, f.widthC)
			}

			img, err := png.Decode(bytes.NewReader(fig.PNG))
			if err != nil {
				t.Fatalf("PNG: %v", err)
			}
			wantPx := f.widthC / 2.54 * figure.DPI
			if got := float64(img.Bounds().Dx()); math.Abs(got-wantPx) > 1 {
				t.Errorf("PNG is %g px wide, want %.0f (%.1f cm at %d dpi)", got, wantPx, f.widthC, figure.DPI)
			}
			phys, err := figcheck.ReadPHYs(fig.PNG)
			if err != nil {
				t.Fatalf("PNG pHYs: %v", err)
			}
			// dpiTol: pixels per metre are whole numbers, 300 dpi is 11811.02 px/m.
			const dpiTol = 0.01
			if x, y := phys.DPI(); math.Abs(x-figure.DPI) > dpiTol || math.Abs(y-figure.DPI) > dpiTol {
				t.Errorf("PNG pHYs says %.3f x %.3f dpi (%+v), want %d", x, y, phys, figure.DPI)
			}
			if mm := float64(img.Bounds().Dx()) / float64(phys.PerUnitX) * 1000; mm < columnMM[f.widthC][0] || mm > columnMM[f.widthC][1] {
				t.Errorf("PNG prints %.1f mm wide at its pHYs, want %v mm", mm, columnMM[f.widthC])
			}
			// Not blank: a fair share of the pixels is not white.
			inked, all := 0, 0
			b := img.Bounds()
			for y := b.Min.Y; y < b.Max.Y; y += 4 {
				for x := b.Min.X; x < b.Max.X; x += 4 {
					r, g, bl, _ := img.At(x, y).RGBA()
					if r < 0xf000 || g < 0xf000 || bl < 0xf000 {
						inked++
					}
					all++
				}
			}
			// minInk: axes, labels and data cover at least 2% of any figure.
			const minInk = 0.02
			if float64(inked)/float64(all) < minInk {
				t.Errorf("only %.1f%% of the PNG is drawn on", 100*float64(inked)/float64(all))
			}

			pdf, err := figcheck.ReadPDF(fig.PDF)
			if err != nil {
				t.Fatalf("PDF: %v", err)
			}
			wMM := (pdf.MediaBox[2] - pdf.MediaBox[0]) * mmPerPt
			if r := columnMM[f.widthC]; wMM < r[0] || wMM > r[1] {
				t.Errorf("PDF page is %.1f mm wide, want %v mm", wMM, r)
			}
			checkSizes(t, "PDF", pdf.FontSizesPt)
			if pdf.Fonts == 0 || pdf.Embedded != pdf.Fonts {
				t.Errorf("PDF embeds %d of its %d fonts", pdf.Embedded, pdf.Fonts)
			}

			svg := string(fig.SVG)
			if !strings.HasPrefix(strings.TrimSpace(svg), "<?xml") || !strings.Contains(svg, "<svg") {
				t.Errorf("SVG does not start as an SVG document: %.60q", svg)
			}
			sv, err := figcheck.ReadSVG(fig.SVG)
			if err != nil {
				t.Fatalf("SVG: %v", err)
			}
			if math.Abs(sv.WidthPt*mmPerPt-10*f.widthC) > 0.1 {
				t.Errorf("SVG is %.1f mm wide, want %g", sv.WidthPt*mmPerPt, 10*f.widthC)
			}
			checkSizes(t, "SVG", sv.FontSizes)
			for _, fam := range sv.Families {
				if !strings.Contains(fam, ",") || !strings.HasSuffix(strings.TrimSpace(fam), "sans-serif") {
					t.Errorf("SVG font-family %q is not a list ending in the generic family", fam)
				}
			}

			rows := readCSV(t, fig.CSV)
			for i, r := range rows {
				if len(r) != len(rows[0]) {
					t.Fatalf("CSV row %d has %d cells, the header %d", i, len(r), len(rows[0]))
				}
			}
		})
	}
}

// checkSizes fails unless every text size is within [MinFontPt, MaxFontPt].
func checkSizes(t *testing.T, what string, sizes []float64) {
	t.Helper()
	if len(sizes) == 0 {
		t.Fatalf("%s has no text", what)
	}
	lo, hi := slices.Min(sizes), slices.Max(sizes)
	if lo < figure.MinFontPt || hi > figure.MaxFontPt {
		t.Errorf("%s text from %g to %g pt, want %d to %d pt", what, lo, hi, figure.MinFontPt, figure.MaxFontPt)
	}
}

func TestFigureAxisLabels(t *testing.T) {
	// Texts with a superscript come out in pieces: "shear rate (s", "−1", ")".
	want := map[string][]string{
		"profile":    {"velocity v/V", "height above the stationary wall y/H", "no slip", "fit", "band boundary", "2.5 s", "−1"},
		"space_time": {"time t (s)", "height above the stationary wall y (µm)", "local velocity (µm/s)", "change of the imposed motion"},
		"slip":       {"slip velocity (µm/s)", "shear rate (s", "−1", ")", "time t (s)", "moving wall", "nominal", "a", "b"},
		"after_stop": {"height above the stationary wall y (µm)", "displacement since the stop Δx (µm)", "failure plane", "noise floor", "0.2 s", "2 s"},
		"detection":  {"signal-to-noise ratio", "fractional position (px)", "threshold", "uniform", "a", "b"},
		"frame":      {"image x (px)", "image y (px)", "stationary wall", "moving wall", "800 µm", "200 µm", "x", "y"},
	}
	for _, f := range figures {
		fig, err := f.render(t)
		if err != nil {
			t.Fatalf("%s: %v", f.name, err)
		}
		for _, s := range want[f.name] {
			if !strings.Contains(string(fig.SVG), ">"+htmlEscape(s)+"<") {
				t.Errorf("%s figure has no text %q", f.name, s)
			}
		}
	}
}

func htmlEscape(s string) string {
	return strings.NewReplacer("&", "&amp;", "<", "&lt;", ">", "&gt;").Replace(s)
}

func TestBadFigureData(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name string
		draw func() (*figure.Figure, error)
		want string
	}{
		{"profile gap", func() (*figure.Figure, error) {
			p := scenario.Profile()
			p.GapUM = 0
			return figure.ProfilePlot(p)
		}, "gap 0 um"},
		{"profile wall speed", func() (*figure.Figure, error) {
			p := scenario.Profile()
			p.WallSpeedUMPerS = nan
			return figure.ProfilePlot(p)
		}, "wall speed NaN"},
		{"profile points", func() (*figure.Figure, error) {
			p := scenario.Profile()
			p.Points = nil
			return figure.ProfilePlot(p)
		}, "no points"},
		{"profile band", func() (*figure.Figure, error) {
			p := scenario.Profile()
			p.Bands[1].ToUM = 100
			return figure.ProfilePlot(p)
		}, "band 2 from 300 to 100 um"},
		{"space-time rows", func() (*figure.Figure, error) {
			s := scenario.SpaceTime()
			s.Values = s.Values[1:]
			return figure.SpaceTimePlot(s)
		}, "59 rows of values for 60 times"},
		{"space-time order", func() (*figure.Figure, error) {
			s := scenario.SpaceTime()
			s.YUM[3] = s.YUM[2]
			return figure.SpaceTimePlot(s)
		}, "heights not increasing at 3"},
		{"space-time empty", func() (*figure.Figure, error) {
			s := scenario.SpaceTime()
			for _, r := range s.Values {
				for j := range r {
					r[j] = nan
				}
			}
			return figure.SpaceTimePlot(s)
		}, "no known value"},
		{"slip time", func() (*figure.Figure, error) {
			s := scenario.Slip()
			s.Points[2].TS = nan
			return figure.SlipPlot(s)
		}, "slip point 2 has time NaN"},
		{"after-stop count", func() (*figure.Figure, error) {
			a := scenario.AfterStop()
			for len(a.Profiles) <= 8 {
				a.Profiles = append(a.Profiles, a.Profiles[0])
			}
			return figure.AfterStopPlot(a)
		}, "at most 8"},
		{"detection fraction", func() (*figure.Figure, error) {
			d := scenario.Detection()
			d.FracYPx[5] = 1
			return figure.DetectionPlot(d)
		}, "fractional position 5 is 1 px"},
		{"detection snr", func() (*figure.Figure, error) {
			d := scenario.Detection()
			d.SNR = nil
			return figure.DetectionPlot(d)
		}, "no SNR values"},
		{"overlay empty frame", func() (*figure.Figure, error) {
			m := gocv.NewMat()
			defer m.Close()
			return figure.OverlayPlot(&figure.Overlay{Frame: m, Calibration: scenario.Calibration()})
		}, "frame is empty"},
		{"overlay colour frame", func() (*figure.Figure, error) {
			m := gocv.NewMatWithSize(48, 64, gocv.MatTypeCV8UC3)
			defer m.Close()
			return figure.OverlayPlot(&figure.Overlay{Frame: m, Calibration: scenario.Calibration()})
		}, "want 8-bit grey"},
		{"overlay calibration", func() (*figure.Figure, error) {
			m := gocv.NewMatWithSize(48, 64, gocv.MatTypeCV8UC1)
			defer m.Close()
			c := scenario.Calibration()
			c.UMPerPx = -1
			return figure.OverlayPlot(&figure.Overlay{Frame: m, Calibration: c})
		}, "um_per_px must be positive, got -1"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f, err := c.draw()
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want one containing %q", err, c.want)
			}
			if f != nil {
				t.Errorf("a figure came back with the error")
			}
		})
	}
}

// The gap axes start on the side the flow comes from, whichever way the
// flow runs and whichever wall moves: the origin of the drawn axes, in the
// figure's CSV, sits a tenth of the width in from that side, on the
// stationary wall.
func TestOverlayAxesFollowFlow(t *testing.T) {
	const w, h, grey = 320, 240, 90
	frame, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8UC1, bytes.Repeat([]byte{grey}, w*h))
	if err != nil {
		t.Fatal(err)
	}
	defer frame.Close()
	for _, c := range []struct {
		name     string
		flowSign float64
		axisXPx  float64 // where the y axis should be drawn
	}{
		{"flow to +x", 1, 0.1 * w},
		{"flow to -x", -1, 0.9 * w},
	} {
		t.Run(c.name, func(t *testing.T) {
			cal := scenario.Calibration()
			// Moving wall at the bottom of the image this time.
			cal.StationaryWallPx = [2][2]float64{{0, 40}, {319, 40}}
			cal.MovingWallPx = [2][2]float64{{0, 200}, {319, 200}}
			cal.GapPx, cal.GapUM, cal.UMPerPx, cal.FlowSign = 160, 320, 2, c.flowSign
			fig, err := figure.OverlayPlot(&figure.Overlay{Frame: frame, Calibration: cal})
			if err != nil {
				t.Fatal(err)
			}
			rows := readCSV(t, fig.CSV)
			found := false
			for _, r := range rows[1:] {
				if r[0] != "y_axis_tick" {
					continue
				}
				found = true
				x, _ := strconv.ParseFloat(r[1], 64)
				// axisTol: the axis starts on the wall line at the inset, px.
				const axisTol = 1e-6
				if math.Abs(x-c.axisXPx) > axisTol {
					t.Errorf("y axis tick at x = %g px, want %g", x, c.axisXPx)
				}
			}
			if !found {
				t.Errorf("no y axis in the overlay's CSV: %v", rows)
			}
		})
	}
}

// readCSV parses a figure's CSV.
func readCSV(t *testing.T, b []byte) [][]string {
	t.Helper()
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("CSV: %v", err)
	}
	if len(rows) < 2 {
		t.Fatalf("CSV has %d rows", len(rows))
	}
	return rows
}
