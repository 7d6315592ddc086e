package report_test

import (
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"

	"gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/figcheck"
)

// Journal column widths, mm (common practice of two-column journals): a
// single-column figure 85 to 90 mm wide, a double-column one 170 to 180.
var (
	singleMM = [2]float64{85, 90}
	doubleMM = [2]float64{170, 180}
)

const mmPerPt = 25.4 / 72

var popplerSize = regexp.MustCompile(`Page size:\s+([0-9.]+) x ([0-9.]+) pts`)

// TestPDFFigures reads each figure's PDF beside the report with poppler's
// pdfinfo, pdffonts and pdftotext (an independent PDF reader) where they
// are installed: the page is a journal column wide, every font embedded,
// and the text comes back as written, µm and the minus of s⁻¹ included.
// figcheck's reading of the same files gives the text sizes, 7 to 9 pt.
func TestPDFFigures(t *testing.T) {
	dir, _ := writeReport(t, fullData(t))
	wide := map[string]bool{"figure_space_time": true, "figure_rate_map": true, "figure_frame": true, "figure_detection": true}
	_, errInfo := exec.LookPath("pdfinfo")
	for _, s := range figureStems {
		path := filepath.Join(dir, s+".pdf")
		b := must(os.ReadFile(path))
		want := singleMM
		if wide[s] {
			want = doubleMM
		}
		pdf, err := figcheck.ReadPDF(b)
		if err != nil {
			t.Fatalf("%s.pdf: %v", s, err)
		}
		lo, hi := slices.Min(pdf.FontSizesPt), slices.Max(pdf.FontSizesPt)
		if lo < figure.MinFontPt || hi > figure.MaxFontPt {
			t.Errorf("%s.pdf: text from %g to %g pt", s, lo, hi)
		}
		wMM := (pdf.MediaBox[2] - pdf.MediaBox[0]) * mmPerPt
		t.Logf("%s.pdf: %.1f x %.1f mm, text %g to %g pt, %d of %d fonts embedded", s, wMM,
			(pdf.MediaBox[3]-pdf.MediaBox[1])*mmPerPt, lo, hi, pdf.Embedded, pdf.Fonts)
		if errInfo != nil {
			continue
		}
		info := string(must(exec.Command("pdfinfo", path).Output()))
		m := popplerSize.FindStringSubmatch(info)
		if m == nil {
			t.Fatalf("pdfinfo %s: no page size in %q", s, info)
		}
		wPt, _ := strconv.ParseFloat(m[1], 64)
		if mm := wPt * mmPerPt; mm < want[0] || mm > want[1] {
			t.Errorf("pdfinfo: %s.pdf is %.1f mm wide, want %v mm", s, mm, want)
		}
		fonts := strings.Split(strings.TrimSpace(string(must(exec.Command("pdffonts", path).Output()))), "\n")
		if len(fonts) < 3 {
			t.Errorf("pdffonts %s: no fonts: %q", s, fonts)
		}
		for _, l := range fonts[2:] {
			// Columns: name type [type] encoding emb sub uni object ID.
			f := strings.Fields(l)
			if len(f) < 6 || f[len(f)-5] != "yes" {
				t.Errorf("pdffonts %s: font not embedded: %q", s, l)
			}
		}
		txt := string(must(exec.Command("pdftotext", path, "-").Output()))
		wantText := map[string][]string{
			"figure_profile_1":  {"velocity v/V", "height above the stationary wall y/H", "2.5 s−1", "measured ± s.e."},
			"figure_slip":       {"slip velocity (µm/s)", "shear rate (s−1)", "stationary wall"},
			"figure_after_stop": {"displacement since the stop Δx (µm)", "failure plane"},
			"figure_space_time": {"local velocity (µm/s)", "height above the stationary wall y (µm)"},
			"figure_rate_map":   {"local shear rate (s−1)"},
			"figure_frame":      {"800 µm", "moving wall", "image x (px)"},
			"figure_detection":  {"signal-to-noise ratio", "threshold"},
		}[s]
		flat := strings.Join(strings.Fields(txt), " ")
		for _, w := range wantText {
			if !strings.Contains(flat, w) {
				t.Errorf("pdftotext %s.pdf lacks %q: %q", s, w, flat[:min(len(flat), 300)])
			}
		}
	}
	if errInfo != nil {
		t.Skipf("poppler's pdfinfo not installed (Debian package poppler-utils; cmd/scripts/deps.sh --test installs it): %v", errInfo)
	}
}
