package figure_test

import (
	"bytes"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gocv.io/x/gocv"

	"gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/scenario"
)

// draw is one figure of the scenario.
type draw struct {
	name   string
	widthC float64
	render func(t *testing.T) (*figure.Figure, error)
}

var figures = []draw{
	{"profile", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.ProfilePlot(scenario.Profile()) }},
	{"space_time", figure.DoubleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.SpaceTimePlot(scenario.SpaceTime()) }},
	{"slip", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.SlipPlot(scenario.Slip()) }},
	{"after_stop", figure.SingleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.AfterStopPlot(scenario.AfterStop()) }},
	{"detection", figure.DoubleColumnCM, func(*testing.T) (*figure.Figure, error) { return figure.DetectionPlot(scenario.Detection()) }},
	{"frame", figure.DoubleColumnCM, func(t *testing.T) (*figure.Figure, error) {
		frame, tracks := scenario.Frame()
		defer frame.Close()
		return figure.OverlayPlot(&figure.Overlay{Frame: frame, Calibration: scenario.Calibration(), Tracks: tracks})
	}},
}

// fontSize matches the text sizes vgsvg writes (in points, unit "px").
var fontSize = regexp.MustCompile(`font-size:([0-9.]+)px`)

// TestFiguresJournalReady renders each figure of the scenario and checks
// that the PNG decodes at the column width and 300 dpi, the SVG holds text
// no smaller than MinFontPt, and the files are not blank. FIGURE_DIR=path
// keeps the files for a look.
func TestFiguresJournalReady(t *testing.T) {
	keep := os.Getenv("FIGURE_DIR")
	for _, f := range figures {
		t.Run(f.name, func(t *testing.T) {
			fig, err := f.render(t)
			if err != nil {
				t.Fatal(err)
			}
			if keep != "" {
				os.WriteFile(filepath.Join(keep, f.name+".png"), fig.PNG, 0o644)
				os.WriteFile(filepath.Join(keep, f.name+".svg"), fig.SVG, 0o644)
			}
			img, err := png.Decode(bytes.NewReader(fig.PNG))
			if err != nil {
				t.Fatalf("PNG: %v", err)
			}
			wantPx := f.widthC / 2.54 * figure.DPI
			if got := float64(img.Bounds().Dx()); math.Abs(got-wantPx) > 1 {
				t.Errorf("PNG is %g px wide, want %.0f (%.1f cm at %d dpi)", got, wantPx, f.widthC, figure.DPI)
			}
			if fig.WidthCM != f.widthC {
				t.Errorf("WidthCM %g, want %g", fig.WidthCM, f.widthC)
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
			svg := string(fig.SVG)
			if !strings.HasPrefix(strings.TrimSpace(svg), "<?xml") || !strings.Contains(svg, "<svg") {
				t.Errorf("SVG does not start as an SVG document: %.60q", svg)
			}
			sizes := fontSize.FindAllStringSubmatch(svg, -1)
			if len(sizes) == 0 {
				t.Fatalf("SVG has no text")
			}
			for _, m := range sizes {
				if pt, _ := strconv.ParseFloat(m[1], 64); pt < figure.MinFontPt {
					t.Errorf("SVG text of %g pt, below %d pt", pt, figure.MinFontPt)
					break
				}
			}
		})
	}
}

func TestFigureAxisLabels(t *testing.T) {
	want := map[string][]string{
		"profile":    {"velocity v/V", "height across the gap y/H", "no slip", "fit", "band boundary", "2.5 /s"},
		"space_time": {"time t (s)", "height y (µm)", "local velocity (µm/s)"},
		"slip":       {"slip velocity (µm/s)", "bulk shear rate (1/s)", "time t (s)", "moving wall", "nominal"},
		"after_stop": {"height y (µm)", "displacement since stop Δx (µm)", "failure plane", "noise floor", "0.2 s", "2 s"},
		"detection":  {"signal-to-noise ratio", "fractional position (px)", "threshold", "uniform"},
		"frame":      {"image x (px)", "image y (px)"},
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

// TestOverlayDrawing checks the OpenCV drawing on a uniform frame: the
// walls in their colours where the calibration puts them, a track in its
// colour, the grey frame elsewhere.
func TestOverlayDrawing(t *testing.T) {
	const w, h, grey = 320, 240, 90
	pix := bytes.Repeat([]byte{grey}, w*h)
	frame, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8UC1, pix)
	if err != nil {
		t.Fatal(err)
	}
	defer frame.Close()
	cal := scenario.Calibration()
	cal.StationaryWallPx = [2][2]float64{{0, 200}, {319, 200}}
	cal.MovingWallPx = [2][2]float64{{0, 40}, {319, 40}}
	cal.GapPx, cal.GapUM, cal.UMPerPx = 160, 320, 2
	track := []figure.PointPx{{XPx: 150, YPx: 120}, {XPx: 190, YPx: 120}}
	out, err := figure.DrawOverlay(&figure.Overlay{Frame: frame, Calibration: cal, Tracks: [][]figure.PointPx{track}})
	if err != nil {
		t.Fatal(err)
	}
	defer out.Close()
	k := out.Cols() / w
	if out.Rows() != k*h || out.Cols() != k*w || out.Channels() != 3 || k < 1 {
		t.Fatalf("overlay is %d x %d x %d, want %d-fold %d x %d x 3", out.Cols(), out.Rows(), out.Channels(), k, w, h)
	}
	b, err := out.DataPtrUint8()
	if err != nil {
		t.Fatal(err)
	}
	at := func(xPx, yPx float64) [3]uint8 { // frame px -> BGR of the enlarged image
		x, y := int((xPx+0.5)*float64(k)), int((yPx+0.5)*float64(k))
		i := 3 * (y*out.Cols() + x)
		return [3]uint8{b[i], b[i+1], b[i+2]}
	}
	bgr := func(r, g, bl uint8) [3]uint8 { return [3]uint8{bl, g, r} }
	checks := []struct {
		what string
		xPx  float64
		yPx  float64
		want [3]uint8
	}{
		{"stationary wall", 250, 200, bgr(figure.SkyBlue.R, figure.SkyBlue.G, figure.SkyBlue.B)},
		{"moving wall", 250, 40, bgr(figure.Orange.R, figure.Orange.G, figure.Orange.B)},
		{"track", 170, 120, bgr(figure.Yellow.R, figure.Yellow.G, figure.Yellow.B)},
		{"empty gap", 250, 120, bgr(grey, grey, grey)},
	}
	for _, c := range checks {
		if got := at(c.xPx, c.yPx); got != c.want {
			t.Errorf("%s at (%g, %g) px: BGR %v, want %v", c.what, c.xPx, c.yPx, got, c.want)
		}
	}
}

// The gap axes start on the side the flow comes from, whichever way the
// flow runs and whichever wall moves.
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
			out, err := figure.DrawOverlay(&figure.Overlay{Frame: frame, Calibration: cal})
			if err != nil {
				t.Fatal(err)
			}
			defer out.Close()
			k := out.Cols() / w
			b := out.ToBytes()
			for _, yPx := range []float64{90, 150} { // along the axis, between the tick labels
				x, y := int((c.axisXPx+0.5)*float64(k)), int((yPx+0.5)*float64(k))
				i := 3 * (y*out.Cols() + x)
				if got := [3]byte{b[i], b[i+1], b[i+2]}; got != [3]byte{255, 255, 255} {
					t.Errorf("y axis at (%g, %g) px: BGR %v, want white", c.axisXPx, yPx, got)
				}
			}
		})
	}
}
