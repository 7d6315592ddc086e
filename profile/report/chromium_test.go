package report_test

import (
	"bytes"
	"fmt"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gaptrace/profile/internal/headless"
	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
)

func near(v uint32, want uint8, slack int) bool {
	d := int(v) - int(want)
	return d >= -slack && d <= slack
}

// shotHeightPx is the height of the screenshot, px: the whole page of the
// full scenario down to the detection figure, whose bars are sky blue (the
// findings, budgets and notes above it grew with the uncertainty and
// start-up sections).
const shotHeightPx = 9000

// TestChromiumRendersReport opens report.html in headless Chromium, checks
// that every figure decoded (the page's own script counts the images with a
// natural width) and screenshots the page. REPORT_SCREENSHOT=path keeps the
// screenshot for a look.
func TestChromiumRendersReport(t *testing.T) {
	headless.SkipWithout(t)
	dir, _ := writeReport(t, fullData(t))
	page, err := filepath.Abs(filepath.Join(dir, report.FileName))
	if err != nil {
		t.Fatal(err)
	}
	ok, all, ran := headless.FiguresLoaded(t, page)
	if !ran {
		t.Fatal("the page's load script did not run: no data-figures-loaded in the DOM")
	}
	if ok != all || all != len(figureStems) {
		t.Errorf("Chromium loaded %d of %d figures, want all %d", ok, all, len(figureStems))
	}

	shot := filepath.Join(t.TempDir(), "report.png")
	if keep := os.Getenv("REPORT_SCREENSHOT"); keep != "" {
		shot = keep
	}
	headless.Chromium(t, page, "--hide-scrollbars", "--window-size=1200,"+strconv.Itoa(shotHeightPx), "--screenshot="+shot)
	f, err := os.Open(shot)
	if err != nil {
		t.Fatalf("no screenshot: %v", err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 1200 || b.Dy() != shotHeightPx {
		t.Errorf("screenshot is %v, want 1200 x %d", b.Size(), shotHeightPx)
	}
	// The page is not blank: the header band is dark, and the figures put
	// their data colours on the screen: Okabe & Ito sky blue, which the
	// page's own styles do not use (the histogram bars are filled with it).
	if r, g, b, _ := img.At(20, 20).RGBA(); r>>8 > 80 || g>>8 > 80 || b>>8 > 80 {
		t.Errorf("header pixel (20, 20) is (%d, %d, %d), want the dark header band", r>>8, g>>8, b>>8)
	}
	// colourSlack: downscaling and anti-aliasing mix a line's colour with
	// white; minBluePixels: a fraction of the histogram's bars.
	const colourSlack, minBluePixels = 24, 2000
	blue := 0
	bounds := img.Bounds()
	for y := bounds.Min.Y; y < bounds.Max.Y; y++ {
		for x := bounds.Min.X; x < bounds.Max.X; x++ {
			r, g, b, _ := img.At(x, y).RGBA()
			if near(r>>8, figure.SkyBlue.R, colourSlack) && near(g>>8, figure.SkyBlue.G, colourSlack) && near(b>>8, figure.SkyBlue.B, colourSlack) {
				blue++
			}
		}
	}
	t.Logf("%d sky-blue pixels on the screenshot", blue)
	if blue < minBluePixels {
		t.Errorf("the screenshot shows %d pixels of the data sky blue, want at least %d: figures not on screen", blue, minBluePixels)
	}
}

// figureSize matches the sizes the check page writes: stem.ext=WxH.
var figureSize = regexp.MustCompile(`([a-z_0-9]+)\.(png|svg)=(\d+)x(\d+)`)

// TestChromiumOpensFigureFiles opens every figure file that Write puts
// beside the report, PNG and SVG, in headless Chromium (through a page of
// <img> elements next to them) and checks each decodes at its size: a
// PNG's natural size is its pixels, a single- or double-column width at
// the figures' DPI; an SVG's is its width and height in pt at CSS's 96 px
// per 72 pt (CSS Values and Units Level 3, 5.2), the same print size as
// the PNG's.
func TestChromiumOpensFigureFiles(t *testing.T) {
	headless.SkipWithout(t)
	dir, _ := writeReport(t, fullData(t))
	var page strings.Builder
	page.WriteString("<!DOCTYPE html><html><body>\n")
	for _, s := range figureStems {
		for _, ext := range []string{"png", "svg"} {
			fmt.Fprintf(&page, "<img id=%q src=%q>\n", s+"."+ext, s+"."+ext)
		}
	}
	page.WriteString(`<script>
window.addEventListener("load", function () {
  var out = [];
  for (var i = 0; i < document.images.length; i++) {
    var im = document.images[i];
    out.push(im.id + "=" + (im.complete ? im.naturalWidth : 0) + "x" + (im.complete ? im.naturalHeight : 0));
  }
  document.body.setAttribute("data-sizes", out.join(" "));
});
</script></body></html>`)
	check := filepath.Join(dir, "check.html")
	if err := os.WriteFile(check, []byte(page.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	dom := string(headless.Chromium(t, check, "--virtual-time-budget=10000", "--allow-file-access-from-files", "--dump-dom"))
	got := map[string][2]int{}
	for _, m := range figureSize.FindAllStringSubmatch(dom, -1) {
		w, _ := strconv.Atoi(m[3])
		h, _ := strconv.Atoi(m[4])
		got[m[1]+"."+m[2]] = [2]int{w, h}
	}
	wide := map[string]bool{"figure_space_time": true, "figure_rate_map": true, "figure_frame": true, "figure_detection": true}
	for _, s := range figureStems {
		cfg, err := png.DecodeConfig(bytes.NewReader(must(os.ReadFile(filepath.Join(dir, s+".png")))))
		if err != nil {
			t.Fatal(err)
		}
		wantCM := figure.SingleColumnCM
		if wide[s] {
			wantCM = figure.DoubleColumnCM
		}
		p, ok := got[s+".png"]
		if !ok || p[0] == 0 {
			t.Errorf("Chromium did not load %s.png (%v)", s, p)
			continue
		}
		if p != [2]int{cfg.Width, cfg.Height} || math.Abs(float64(p[0])-wantCM/2.54*figure.DPI) > 1 {
			t.Errorf("%s.png opens at %d x %d px, want %d x %d and %.0f px wide (%.1f cm at %d dpi)",
				s, p[0], p[1], cfg.Width, cfg.Height, wantCM/2.54*figure.DPI, wantCM, figure.DPI)
		}
		v, ok := got[s+".svg"]
		if !ok || v[0] == 0 {
			t.Errorf("Chromium did not load %s.svg (%v)", s, v)
			continue
		}
		// cssPxPerInch: CSS's reference pixel, 96 per inch.
		const cssPxPerInch = 96
		wantW, wantH := float64(cfg.Width)/figure.DPI*cssPxPerInch, float64(cfg.Height)/figure.DPI*cssPxPerInch
		if math.Abs(float64(v[0])-wantW) > 1.5 || math.Abs(float64(v[1])-wantH) > 1.5 {
			t.Errorf("%s.svg opens at %d x %d CSS px, want %.1f x %.1f (the PNG's print size)", s, v[0], v[1], wantW, wantH)
		}
		t.Logf("%s: PNG %d x %d px, SVG %d x %d CSS px (%.1f x %.1f mm)", s, p[0], p[1], v[0], v[1],
			float64(v[0])/cssPxPerInch*25.4, float64(v[1])/cssPxPerInch*25.4)
	}
}
