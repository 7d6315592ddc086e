package report_test

import (
	"bytes"
	"encoding/csv"
	"encoding/xml"
	"errors"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"

	"gaptrace/profile/report"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/report/internal/scenario"
	"gaptrace/profile/summary"
)

// fullData is the made-up scenario with every figure; close the returned
// function's Mat with the cleanup.
func fullData(t testing.TB) *report.Data {
	frame, tracks := scenario.Frame()
	t.Cleanup(func() { frame.Close() })
	return &report.Data{
		Summary:        scenario.Summary(),
		Experiment:     scenario.Experiment(),
		ExperimentYAML: scenario.YAML,
		Profiles:       []*figure.PhaseProfile{scenario.Profile()},
		SpaceTime:      scenario.SpaceTime(),
		RateMap:        scenario.RateMap(),
		Slip:           scenario.Slip(),
		AfterStop:      scenario.AfterStop(),
		Overlay:        &figure.Overlay{Frame: frame, Calibration: scenario.Calibration(), Tracks: tracks},
		OverlayFrameS:  2.0,
		OverlayWindowS: [2]float64{1.945, 2.0},
		Detection:      scenario.Detection(),
		Cautions:       []string{"The top 40 µm of the gap were in the shadow of the moving plate's chamfer."},
		Record: &report.Record{
			Input:       &report.Digest{Bytes: 123456789, SHA256: strings.Repeat("0123456789abcdef", 4), Files: 1},
			CommandLine: []string{"gaptrace", "run", "-e", "k3.yaml", "-o", "out dir", "runs/k3-slide-04.avi"},
			WorkDir:     "~/k3-runs",
			AnalysedAt:  time.Date(2026, 3, 4, 10, 20, 30, 0, time.UTC),
		},
	}
}

var figureStems = []string{"figure_profile_1", "figure_slip", "figure_after_stop", "figure_space_time",
	"figure_rate_map", "figure_frame", "figure_detection"}

// pxPerCM at the PNG resolution.
const pxPerCM = figure.DPI / 2.54

func TestWriteAllFiles(t *testing.T) {
	dir := t.TempDir()
	names, err := report.Write(dir, fullData(t))
	if err != nil {
		t.Fatal(err)
	}
	var want []string
	for _, s := range figureStems {
		want = append(want, s+".png", s+".svg", s+".pdf", s+".csv")
	}
	want = append(want, report.FileName)
	if !slices.Equal(names, want) {
		t.Fatalf("Write returned %v, want %v", names, want)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(entries) != len(want) {
		var got []string
		for _, e := range entries {
			got = append(got, e.Name())
		}
		t.Errorf("folder holds %v, want only the %d files written (no temporary files)", got, len(want))
	}
	wide := map[string]bool{"figure_space_time": true, "figure_rate_map": true, "figure_frame": true, "figure_detection": true}
	for _, s := range figureStems {
		b, err := os.ReadFile(filepath.Join(dir, s+".png"))
		if err != nil {
			t.Fatal(err)
		}
		cfg, err := png.DecodeConfig(bytes.NewReader(b))
		if err != nil {
			t.Errorf("%s.png does not decode: %v", s, err)
			continue
		}
		wantCM := figure.SingleColumnCM
		if wide[s] {
			wantCM = figure.DoubleColumnCM
		}
		if got := float64(cfg.Width) / pxPerCM; math.Abs(got-wantCM) > 0.05 {
			t.Errorf("%s.png is %.2f cm wide at %d dpi, want %.1f cm", s, got, figure.DPI, wantCM)
		}
		if _, err := png.Decode(bytes.NewReader(b)); err != nil {
			t.Errorf("%s.png: %v", s, err)
		}
		svg, err := os.ReadFile(filepath.Join(dir, s+".svg"))
		if err != nil {
			t.Fatal(err)
		}
		if err := parsesAsXML(svg); err != nil {
			t.Errorf("%s.svg is not XML: %v", s, err)
		}
		pdf, err := os.ReadFile(filepath.Join(dir, s+".pdf"))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.HasPrefix(pdf, []byte("%PDF-")) || !bytes.Contains(pdf[max(0, len(pdf)-64):], []byte("%%EOF")) {
			t.Errorf("%s.pdf is not a complete PDF file", s)
		}
		rows, err := csv.NewReader(bytes.NewReader(must(os.ReadFile(filepath.Join(dir, s+".csv"))))).ReadAll()
		if err != nil || len(rows) < 2 {
			t.Errorf("%s.csv: %d rows, %v", s, len(rows), err)
		}
	}
}

func must[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

func parsesAsXML(b []byte) error {
	dec := xml.NewDecoder(bytes.NewReader(b))
	root := ""
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return err
		}
		if se, ok := tok.(xml.StartElement); ok && root == "" {
			root = se.Name.Local
		}
	}
	if root != "svg" {
		return errors.New("root element is " + root + ", not svg")
	}
	return nil
}

// writeReport writes d and returns report.html.
func writeReport(t *testing.T, d *report.Data) (dir, html string) {
	t.Helper()
	dir = t.TempDir()
	if _, err := report.Write(dir, d); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, report.FileName))
	if err != nil {
		t.Fatal(err)
	}
	return dir, string(b)
}

// reference is an attribute or CSS value that can point at another resource.
var reference = regexp.MustCompile(`(?i)\b(src|href|xlink:href|action|poster|data)\s*=\s*("[^"]*"|'[^']*'|[^\s>]+)|url\(\s*([^)]*)\)|@import`)

func TestSelfContained(t *testing.T) {
	_, html := writeReport(t, fullData(t))
	imgs := 0
	for _, m := range reference.FindAllStringSubmatch(html, -1) {
		if m[0] == "@import" {
			t.Errorf("report.html imports a style sheet")
			continue
		}
		v := strings.Trim(m[2]+m[3], `"' `)
		switch {
		case strings.HasPrefix(v, "data:"):
			imgs++
		case strings.HasPrefix(v, "#"):
		default:
			t.Errorf("report.html refers outside itself: %s", m[0][:min(len(m[0]), 80)])
		}
	}
	if imgs != len(figureStems) {
		t.Errorf("report.html embeds %d data: URIs, want %d figures", imgs, len(figureStems))
	}
	for _, stem := range figureStems {
		if !strings.Contains(html, `id="`+stem+`"`) {
			t.Errorf("report.html has no figure %s", stem)
		}
	}
}

func TestContentInWords(t *testing.T) {
	_, html := writeReport(t, fullData(t))
	for _, want := range []string{
		// Verdicts with numbers and uncertainties, as computed from
		// scenario.Summary: uncertainties to two significant digits, values to match.
		"Wall slip at the moving wall: 300.0 ± 9.4 µm/s, 25.00 ± 0.78 % of the wall speed",
		"Wall slip at the stationary wall: 50.0 ± 6.1 µm/s, 4.17 ± 0.51 % of the wall speed",
		"Navier slip length 20.0 ± 3.4 µm.", "<td class=\"num\">20.0 ± 3.4 / 1500 ± 21</td>",
		"Bulk shear rate 1.062 ± 0.012 s⁻¹ against a nominal 1.50 s⁻¹; wall speed 1200 µm/s;",
		"split into 2 shear bands",
		"band 1 from 0 to 300 ± 11 µm at 2.500 ± 0.040 s⁻¹",
		"<th>bulk rate (s⁻¹)</th>", "<th>local rate (s⁻¹)</th>",
		"failed along a plane inside the gap at 520 µm",
		"began 0.15 s after the stop",
		// Calibration and experiment.
		"2.00 µm/px (from the gap over the wall distance in pixels)", "<td>plates</td>",
		"<td class=\"num\">0.5 – 2.5 s</td><td class=\"num\">wall_speed_um_per_s: 1200</td><td class=\"num\">1200</td><td class=\"num\">1.50</td><td class=\"num\">3.00</td>",
		"0.230 °", "Nominal rate: the moving plate&#39;s speed over the gap",
		// Warnings and cautions, general, of the geometry and of the run.
		"12 tracks crossed the moving wall line", "meniscus", "out of the image plane", "Laser",
		"Sliding-plate drives push with large force", "your qualified safety staff prevail", "shadow of the moving plate",
		// The lab record.
		"<td class=\"wrapall\">K-3 soft gel, batch 2 (made up)</td>", "<td class=\"wrapall\">23.5 °C</td>",
		"<td class=\"wrapall\">course demonstrator</td>", "Loaded with a spatula, trimmed flush with the plates.\nLight sheet at low power.",
		"123456789 bytes (118 MiB)", strings.Repeat("0123456789abcdef", 4),
		"gaptrace run -e k3.yaml -o &#39;out dir&#39; runs/k3-slide-04.avi", "2026-03-04 10:20:30 UTC", "gaptrace 0.1.0",
		"SVG and PDF, with the data it plots as CSV",
	} {
		if !strings.Contains(html, want) {
			t.Errorf("report.html lacks %q", want)
		}
	}
}

func TestUnknownNumbers(t *testing.T) {
	d := &report.Data{Summary: scenario.Summary()}
	sp := &d.Summary.ShearPhases[0]
	sp.SlipMovingUMPerS, sp.SlipMovingErrUMPerS = summary.Null, summary.Null
	sp.SlipLengthMovingUM, sp.BulkRateErrPerS = summary.Null, summary.Num(math.Inf(1))
	sp.SlipFraction = summary.Null
	d.Summary.AfterStop.PlaneUM = summary.Null
	d.Summary.AfterStop.OnsetAfterStopS = summary.Null
	d.Summary.Calibration.TiltDeg = math.NaN()
	_, html := writeReport(t, d)
	for _, bad := range []string{"NaN", "Inf", "null"} {
		if strings.Contains(html, bad) {
			i := strings.Index(html, bad)
			t.Errorf("report.html prints %q: ...%s...", bad, html[max(0, i-60):min(len(html), i+20)])
		}
	}
	for _, want := range []string{
		"Wall slip at the moving wall: not determined.",
		"failed along a plane inside the gap at not determined",
		"The onset of the motion was not determined.",
		"Bulk shear rate 1.06 s⁻¹",
		"<td>not determined</td>", // the tilt
	} {
		if !strings.Contains(html, want) {
			t.Errorf("report.html lacks %q", want)
		}
	}
}

func TestMissingFiguresAreNamed(t *testing.T) {
	dir, html := writeReport(t, &report.Data{Summary: scenario.Summary()})
	if !strings.Contains(html, "Not drawn for want of data: Velocity profile, shear phase 1; Wall slip and bulk rate; "+
		"Displacement after the stop; Space-time map of the local velocity; Space-time map of the local shear rate;") {
		t.Errorf("report.html does not list the missing figures")
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("with no figure data the folder holds %d files, want report.html alone", len(entries))
	}
}

func TestEscaping(t *testing.T) {
	d := &report.Data{Summary: scenario.Summary(), ExperimentName: `<script>alert("x")</script> & co`,
		ExperimentYAML: "name: <b>bold</b>\n"}
	d.Summary.Warnings = []string{`<img src="http://example.invalid/x.png">`}
	_, html := writeReport(t, d)
	for _, raw := range []string{`<script>alert`, `<b>bold`, `<img src="http`} {
		if strings.Contains(html, raw) {
			t.Errorf("report.html holds unescaped %q", raw)
		}
	}
	if !strings.Contains(html, "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt; &amp; co") {
		t.Errorf("report.html does not show the escaped experiment name")
	}
}

func TestBadInput(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "a-file")
	os.WriteFile(file, nil, 0o644)
	bad := scenario.AfterStop()
	bad.GapUM = -1
	cases := []struct {
		name, dir string
		d         *report.Data
		want      string
	}{
		{"nil data", dir, nil, "no data"},
		{"no summary", dir, &report.Data{}, "no summary"},
		{"no folder", filepath.Join(dir, "missing"), &report.Data{Summary: scenario.Summary()}, "output folder"},
		{"file as folder", file, &report.Data{Summary: scenario.Summary()}, "is not a folder"},
		{"too many profiles", dir, &report.Data{Summary: scenario.Summary(),
			Profiles: []*figure.PhaseProfile{scenario.Profile(), scenario.Profile()}}, "2 velocity profiles for 1 shear phases"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := report.Write(c.dir, c.d)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("Write: error %v, want one containing %q", err, c.want)
			}
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error is not one line: %q", err)
			}
		})
	}
	if _, err := os.Stat(filepath.Join(dir, report.FileName)); err == nil {
		t.Errorf("a failed Write left %s behind", report.FileName)
	}
}

// A figure whose data cannot be drawn is left out and the report says why.
func TestBadFigureDataIsReported(t *testing.T) {
	d := fullData(t)
	d.AfterStop.GapUM = -1
	dir, html := writeReport(t, d)
	if _, err := os.Stat(filepath.Join(dir, "figure_after_stop.png")); err == nil {
		t.Errorf("figure_after_stop.png written from bad data")
	}
	want := "Figure not drawn, Displacement after the stop: figure: after-stop gap -1 um, must be positive"
	if !strings.Contains(html, want) {
		t.Errorf("report.html lacks the warning %q", want)
	}
	if _, err := os.Stat(filepath.Join(dir, "figure_slip.png")); err != nil {
		t.Errorf("the other figures were not written: %v", err)
	}
}
