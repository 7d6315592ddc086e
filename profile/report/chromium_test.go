package report_test

import (
	"image/png"
	"os"
	"path/filepath"
	"testing"

	"gaptrace/profile/internal/headless"
	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
)

func near(v uint32, want uint8, slack int) bool {
	d := int(v) - int(want)
	return d >= -slack && d <= slack
}

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
	headless.Chromium(t, page, "--hide-scrollbars", "--window-size=1200,4000", "--screenshot="+shot)
	f, err := os.Open(shot)
	if err != nil {
		t.Fatalf("no screenshot: %v", err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if b := img.Bounds(); b.Dx() != 1200 || b.Dy() != 4000 {
		t.Errorf("screenshot is %v, want 1200 x 4000", b.Size())
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
