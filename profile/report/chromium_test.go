package report_test

import (
	"bytes"
	"context"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"testing"
	"time"

	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
)

// chromiumPath is Debian's chromium package.
const chromiumPath = "/usr/bin/chromium"

// chromiumTimeout bounds one headless run; a cold start on a busy 2-core
// machine takes a few seconds.
const chromiumTimeout = 90 * time.Second

// chromium runs headless Chromium on page with extra arguments, offline.
func chromium(t *testing.T, page string, args ...string) []byte {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), chromiumTimeout)
	defer cancel()
	base := []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-dev-shm-usage", "--user-data-dir=" + t.TempDir()}
	cmd := exec.CommandContext(ctx, chromiumPath, append(append(base, args...), "file://"+page)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("chromium %v: %v\n%s", args, err, errb.String())
	}
	return out.Bytes()
}

func near(v uint32, want uint8, slack int) bool {
	d := int(v) - int(want)
	return d >= -slack && d <= slack
}

var loaded = regexp.MustCompile(`data-figures-loaded="(\d+)/(\d+)"`)

// TestChromiumRendersReport opens report.html in headless Chromium, checks
// that every figure decoded (the page's own script counts the images with a
// natural width) and screenshots the page. REPORT_SCREENSHOT=path keeps the
// screenshot for a look.
func TestChromiumRendersReport(t *testing.T) {
	if _, err := os.Stat(chromiumPath); err != nil {
		t.Skipf("Chromium not installed at %s (Debian package chromium; cmd/scripts/deps.sh --test installs it): %v", chromiumPath, err)
	}
	dir, _ := writeReport(t, fullData(t))
	page, err := filepath.Abs(filepath.Join(dir, report.FileName))
	if err != nil {
		t.Fatal(err)
	}
	dom := chromium(t, page, "--virtual-time-budget=10000", "--dump-dom")
	m := loaded.FindSubmatch(dom)
	if m == nil {
		t.Fatalf("the page's load script did not run: no data-figures-loaded in the DOM (%d bytes)", len(dom))
	}
	ok, all := string(m[1]), string(m[2])
	if ok != all || all != strconv.Itoa(len(figureStems)) {
		t.Errorf("Chromium loaded %s of %s figures, want all %d", ok, all, len(figureStems))
	}

	shot := filepath.Join(t.TempDir(), "report.png")
	if keep := os.Getenv("REPORT_SCREENSHOT"); keep != "" {
		shot = keep
	}
	chromium(t, page, "--hide-scrollbars", "--window-size=1200,4000", "--screenshot="+shot)
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
