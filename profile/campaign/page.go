package campaign

import (
	"bytes"
	"encoding/base64"
	"html/template"
	"math"
	"os"
	"path/filepath"
	"strconv"

	"gaptrace/calib/atomicfile"
	"gaptrace/profile/report/figure"
	"gaptrace/profile/summary"
)

// Figure file stems under OUTROOT/figures; each is written as .png and .svg.
const (
	SlipFigure         = "campaign_slip"
	SlipFractionFigure = "campaign_slip_fraction"
	BulkRateFigure     = "campaign_bulk_rate"
)

// Write collects the campaign table from the row folders under l and
// writes OUTROOT/campaign.csv, the figures under OUTROOT/figures and
// OUTROOT/campaign.html, each file atomically. Figures that have no data
// (no row analysed yet) are left out and the page says so.
func Write(m *Manifest, l Layout) (*Table, error) {
	t := Collect(m, l)
	var csvBuf bytes.Buffer
	if err := t.WriteCSV(&csvBuf); err != nil {
		return t, err
	}
	if err := atomicfile.WriteBytes(filepath.Join(l.Root, TableFile), csvBuf.Bytes()); err != nil {
		return t, err
	}
	figs := t.Figures()
	if err := os.MkdirAll(filepath.Join(l.Root, FigureDir), 0o755); err != nil {
		return t, err
	}
	for _, f := range figs {
		if f.fig == nil {
			continue
		}
		for ext, b := range map[string][]byte{".png": f.fig.PNG, ".svg": f.fig.SVG} {
			if err := atomicfile.WriteBytes(filepath.Join(l.Root, FigureDir, f.Stem+ext), b); err != nil {
				return t, err
			}
		}
	}
	var page bytes.Buffer
	if err := t.renderPage(&page, m, l, figs); err != nil {
		return t, err
	}
	return t, atomicfile.WriteBytes(filepath.Join(l.Root, PageFile), page.Bytes())
}

// Points are the figures' data: the records of analysed rows, grouped by
// the gap of their analysis.
func (t *Table) Points() []figure.CampaignPoint {
	var pts []figure.CampaignPoint
	status := t.Column(ColStatus)
	for i, rec := range t.Records {
		if rec[status] != "ok" {
			continue
		}
		f := func(c string) float64 { return t.Float(i, c) }
		pts = append(pts, figure.CampaignPoint{
			Group:           GapGroup(t.GapUM[i]),
			NominalRatePerS: f("nominal_rate_per_s"),
			WallStressPa:    f("wall_stress_pa"), WallStressErrPa: f("wall_stress_err_pa"),
			SlipStationaryUMPerS: f("slip_stationary_um_per_s"), SlipStationaryErrUMPerS: f("slip_stationary_err_um_per_s"),
			SlipMovingUMPerS: f("slip_moving_um_per_s"), SlipMovingErrUMPerS: f("slip_moving_err_um_per_s"),
			SlipFraction: f("slip_fraction"), SlipFractionErr: f("slip_fraction_err"),
			BulkRatePerS: f("bulk_rate_per_s"), BulkRateErrPerS: f("bulk_rate_err_per_s"),
		})
	}
	return pts
}

// GapGroup is the series label of an analysis with the given gap, um, to
// four significant digits (gaps set on a rheometer differ by more).
func GapGroup(gapUM float64) string {
	if !finite(gapUM) {
		return "gap unknown"
	}
	return "gap " + strconv.FormatFloat(gapUM, 'g', 4, 64) + " µm"
}

// shownFigure is one figure of the page, or the reason it is missing.
type shownFigure struct {
	Stem, Title, Caption string
	Missing              string // why it was not drawn
	fig                  *figure.Figure
}

// DataURI is the figure's PNG as a data: URI.
func (f shownFigure) DataURI() template.URL {
	// Our own PNG bytes: safe by construction.
	return template.URL("data:image/png;base64," + base64.StdEncoding.EncodeToString(f.fig.PNG))
}

// Figures renders the campaign's figures; a figure that cannot be drawn
// comes back with the reason in Missing.
func (t *Table) Figures() []shownFigure {
	pts := t.Points()
	stress := figure.UseStress(pts)
	slipX := "the nominal shear rate"
	if stress {
		slipX = "the wall shear stress from the rheometer's log"
	}
	figs := []shownFigure{
		{Stem: SlipFigure, Title: "Wall slip across the campaign",
			Caption: "Slip velocity at the stationary wall (top) and at the moving wall (bottom) against " + slipX +
				", one series per gap; the dashed line is no slip. A slip velocity that depends on the wall stress alone, whatever the gap, is a property of the wall and the sample."},
		{Stem: SlipFractionFigure, Title: "Slip fraction against rate, per gap",
			Caption: "Share of the wall's speed taken up by slip at both walls, against the nominal rate. At a given wall stress, slip takes a larger share of a narrower gap."},
		{Stem: BulkRateFigure, Title: "Bulk shear rate against nominal rate",
			Caption: "Shear rate of the bulk measured from the profile against the rate the instrument imposed; the dashed line is no slip (bulk rate equal to the nominal rate)."},
	}
	draw := []func() (*figure.Figure, error){
		func() (*figure.Figure, error) { return figure.CampaignSlipPlot(pts, stress) },
		func() (*figure.Figure, error) { return figure.CampaignSlipFractionPlot(pts) },
		func() (*figure.Figure, error) { return figure.CampaignBulkRatePlot(pts) },
	}
	for i := range figs {
		if len(pts) == 0 {
			figs[i].Missing = "no row analysed yet"
			continue
		}
		f, err := draw[i]()
		if err != nil {
			figs[i].Missing = err.Error()
			continue
		}
		figs[i].fig = f
	}
	return figs
}

// pageData fills the page template.
type pageData struct {
	Title, Tool                       string
	Rows, OK, Failed, Incomplete, Not int
	Figures                           []shownFigure
	Drawn                             int
	Problems                          [][2]string // name, status
	Columns                           []string
	Records                           [][]string
	Reports                           map[string]string // name -> relative link to its report
}

func (t *Table) renderPage(w *bytes.Buffer, m *Manifest, l Layout, figs []shownFigure) error {
	d := pageData{Title: filepath.Base(filepath.Clean(l.Root)), Tool: "gaptrace " + summary.Version,
		Rows: len(m.Rows), Figures: figs, Columns: t.Columns, Records: t.Records,
		Reports: map[string]string{}}
	d.OK, d.Failed, d.Incomplete, d.Not = t.Counts()
	for _, f := range figs {
		if f.fig != nil {
			d.Drawn++
		}
	}
	for i, st := range t.Statuses {
		name := m.Rows[i].Name
		if st.State != Complete {
			d.Problems = append(d.Problems, [2]string{name, st.String()})
			continue
		}
		if _, err := os.Stat(filepath.Join(l.RowDir(name), "report.html")); err == nil {
			d.Reports[name] = name + "/report.html"
		}
	}
	return pageTemplate.Execute(w, d)
}

// formatCell shortens a number of the table for the page: 4 significant
// digits (the CSV keeps summary.json's); other text unchanged.
func formatCell(s string) string {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(v, 0) || math.IsNaN(v) {
		return s
	}
	return strconv.FormatFloat(v, 'g', 4, 64)
}

var pageTemplate = template.Must(template.New("campaign").Funcs(template.FuncMap{
	"cell":   formatCell,
	"report": func(links map[string]string, name string) string { return links[name] },
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="{{.Tool}}">
<title>{{.Title}} — gaptrace campaign</title>
<style>
body { margin: 0; color: #1d2330; font-family: "Liberation Sans", "Helvetica Neue", Arial, sans-serif; line-height: 1.45; font-size: 15px; }
header { background: #1d2330; color: #fff; padding: 24px 0 18px; }
.page { max-width: 1180px; margin: 0 auto; padding: 0 26px; }
header h1 { margin: 0; font-size: 1.8rem; font-weight: 600; }
header p { margin: 8px 0 0; color: #c9d3de; font-size: .9rem; }
h2 { font-size: 1.25rem; font-weight: 600; margin: 26px 0 12px; padding-bottom: 5px; border-bottom: 2px solid #1d2330; }
.grid { display: grid; grid-template-columns: repeat(auto-fit, minmax(340px, 1fr)); gap: 20px 26px; }
figure { margin: 0; }
figure img { display: block; width: 100%; max-width: 520px; height: auto; border: 1px solid #d9dde3; }
figcaption { font-size: .86rem; color: #5b6472; margin-top: 6px; }
figcaption b { color: #1d2330; }
.missing { color: #5b6472; font-style: italic; }
.trouble { border-left: 6px solid #d55e00; padding: 6px 14px; background: #fff7ea; }
.wide { overflow-x: auto; }
table { border-collapse: collapse; font-size: .8rem; }
th, td { padding: 4px 8px; border-bottom: 1px solid #d9dde3; text-align: left; white-space: nowrap; }
thead th { background: #f4f6f8; position: sticky; top: 0; }
footer { color: #5b6472; font-size: .82rem; margin: 28px 0; }
</style>
</head>
<body>
<header><div class="page">
<h1>Campaign {{.Title}}</h1>
<p>{{.Rows}} recordings (manifest.csv beside this page) · {{.OK}} analysed · {{.Failed}} failed · {{.Incomplete}} incomplete · {{.Not}} not run · {{.Tool}}</p>
</div></header>
<main class="page">
<h2>Figures</h2>
<div class="grid">
{{range $i, $f := .Figures}}<figure id="{{$f.Stem}}">
{{if $f.Missing}}<p class="missing">{{$f.Title}}: not drawn ({{$f.Missing}}).</p>{{else}}<img src="{{$f.DataURI}}" alt="{{$f.Title}}">
<figcaption><b>{{$f.Title}}.</b> {{$f.Caption}} Error bars are one standard uncertainty from each recording's summary. Files: figures/{{$f.Stem}}.png, .svg.</figcaption>{{end}}
</figure>
{{end}}</div>
<h2>Recordings without numbers</h2>
{{if .Problems}}<ul class="trouble">{{range .Problems}}<li><b>{{index . 0}}</b>: {{index . 1}}</li>{{end}}</ul>
<p class="missing">The log of each row's run is in logs/NAME.log. Run the batch again to retry them; finished rows are kept.</p>
{{else}}<p class="missing">None: every recording was analysed.</p>{{end}}
<h2>Campaign table</h2>
<p class="missing">One line per shear phase of each recording, as in campaign.csv (numbers here to 4 significant digits; empty: unknown). The name links to the recording's own report.</p>
<div class="wide"><table>
<thead><tr>{{range .Columns}}<th>{{.}}</th>{{end}}</tr></thead>
<tbody>{{$links := .Reports}}{{range .Records}}<tr>{{range $j, $v := .}}{{if eq $j 0}}{{with report $links $v}}<td><a href="{{.}}">{{$v}}</a></td>{{else}}<td>{{$v}}</td>{{end}}{{else}}<td>{{cell $v}}</td>{{end}}{{end}}</tr>
{{end}}</tbody>
</table></div>
<footer>Made by {{.Tool}} from the recordings' summary.json files. The cautions for the experiments themselves are in each recording's report.</footer>
</main>
<script>
window.addEventListener("load", function () {
  var imgs = document.images, ok = 0;
  for (var i = 0; i < imgs.length; i++) { if (imgs[i].complete && imgs[i].naturalWidth > 0) { ok++; } }
  document.body.setAttribute("data-figures-loaded", ok + "/" + imgs.length);
});
</script>
</body>
</html>
`))
