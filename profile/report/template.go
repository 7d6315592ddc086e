package report

import "html/template"

// pageTemplate is report.html: one file, styles inline, figures as data:
// URIs, nothing fetched from elsewhere. The small script marks the body
// with the number of figures that decoded, for automated checks.
var pageTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="{{.Tool}}">
<title>{{.Name}} — gaptrace report</title>
<style>
:root { --ink: #1d2330; --muted: #5b6472; --rule: #d9dde3; --band: #f4f6f8; --accent: #0072b2; --flag: #d55e00; --ok: #009e73; }
* { box-sizing: border-box; }
html { font-size: 15px; }
body { margin: 0; color: var(--ink); background: #fff; font-family: "Liberation Sans", "Helvetica Neue", Arial, sans-serif; line-height: 1.45; }
header { background: #1d2330; color: #fff; padding: 28px 0 22px; }
.wrap { max-width: 1080px; margin: 0 auto; padding: 0 28px; }
header .kicker { text-transform: uppercase; letter-spacing: .12em; font-size: .75rem; color: #9fb3c8; margin: 0 0 6px; }
header h1 { margin: 0; font-size: 1.9rem; font-weight: 600; }
header .meta { margin: 10px 0 0; color: #c9d3de; font-size: .9rem; }
nav { border-bottom: 1px solid var(--rule); background: var(--band); font-size: .88rem; }
nav .wrap { display: flex; flex-wrap: wrap; gap: 4px 22px; padding-top: 9px; padding-bottom: 9px; }
nav a { color: var(--accent); text-decoration: none; }
nav a:hover { text-decoration: underline; }
section { padding: 26px 0 6px; }
h2 { font-size: 1.3rem; font-weight: 600; margin: 0 0 14px; padding-bottom: 6px; border-bottom: 2px solid var(--ink); }
h3 { font-size: 1.02rem; margin: 22px 0 8px; }
p { margin: 0 0 10px; }
.finding { border: 1px solid var(--rule); border-left: 6px solid var(--flag); border-radius: 4px; padding: 12px 16px; margin: 0 0 12px; background: #fff; }
.finding.plain { border-left-color: var(--ok); }
.finding .tag { display: inline-block; font-size: .72rem; font-weight: 700; letter-spacing: .08em; text-transform: uppercase; padding: 1px 7px; border-radius: 3px; margin-right: 8px; color: #fff; background: var(--flag); vertical-align: 1px; }
.finding.plain .tag { background: var(--ok); }
.finding .headline { font-weight: 600; margin: 0 0 6px; }
.finding ul { margin: 0; padding-left: 20px; }
.finding li { margin: 2px 0; }
.warnings { border: 1px solid #e6c08a; background: #fff7ea; border-radius: 4px; padding: 10px 16px 10px 34px; }
.none { color: var(--muted); font-style: italic; }
.figs { display: grid; grid-template-columns: repeat(2, minmax(0, 1fr)); gap: 22px 28px; }
figure { margin: 0; }
figure.wide { grid-column: 1 / -1; }
figure img { display: block; width: 100%; height: auto; border: 1px solid var(--rule); background: #fff; }
figure.single img { max-width: 520px; }
figcaption { font-size: .86rem; color: var(--muted); margin-top: 7px; }
figcaption b { color: var(--ink); }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-size: .86rem; margin: 0 0 8px; }
th, td { padding: 5px 10px; border-bottom: 1px solid var(--rule); text-align: left; vertical-align: top; }
thead th { background: var(--band); border-bottom: 2px solid #b9c0ca; font-weight: 600; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
table.kv th { font-weight: normal; color: var(--muted); width: 15em; background: none; }
.cols { display: grid; grid-template-columns: repeat(2, minmax(0, 1fr)); gap: 8px 36px; }
pre { background: var(--band); border: 1px solid var(--rule); border-radius: 4px; padding: 12px 14px; font-size: .82rem; overflow-x: auto; line-height: 1.35; }
.cautions li { margin: 0 0 7px; }
.note { font-size: .86rem; color: var(--muted); max-width: 46em; }
.wrapall { overflow-wrap: anywhere; font-variant-numeric: tabular-nums; }
pre.notes { white-space: pre-wrap; font-family: inherit; font-size: .9rem; }
footer { border-top: 1px solid var(--rule); margin-top: 30px; padding: 14px 0 30px; color: var(--muted); font-size: .82rem; }
@media (max-width: 760px) { .figs, .cols { grid-template-columns: 1fr; } }
@media print { header { background: none; color: var(--ink); } header .meta, header .kicker { color: var(--muted); } nav { display: none; } figure { break-inside: avoid; } }
</style>
</head>
<body>
<header><div class="wrap">
<p class="kicker">Velocity across the gap · wall slip · shear bands · after the stop</p>
<h1>{{.Name}}</h1>
<p class="meta">{{.Tool}} · {{range $i, $r := .Input}}{{if $i}} · {{end}}{{index $r 0}}: {{index $r 1}}{{end}}</p>
</div></header>
<nav><div class="wrap">
<a href="#findings">Findings</a><a href="#warnings">Warnings</a><a href="#figures">Figures</a><a href="#tables">Tables</a><a href="#experiment">Experiment and calibration</a><a href="#record">Lab record</a><a href="#cautions">Cautions</a>
</div></nav>
<main class="wrap">

<section id="findings">
<h2>Findings</h2>
{{range .Findings}}<div class="finding{{if .Plain}} plain{{end}}">
<p class="headline"><span class="tag">{{if .Plain}}as imposed{{else}}note{{end}}</span>{{.Headline}}</p>
<ul>{{range .Lines}}<li>{{.}}</li>{{end}}</ul>
</div>
{{else}}<p class="none">The run holds no shear phase and no time after a stop: there is nothing to report on the flow.</p>
{{end}}<p class="none">Uncertainties are one combined standard uncertainty in the sense of the GUM (JCGM 100:2008), rounded to two significant digits, with the value to the same digit: the root sum of squares of the scatter between tracks (a bootstrap over whole tracks), the wall positions (from the wall fit's residuals and the wall model), the scale and the gap, the time base, the motion all tracers share (measured on the recording) and the tracking's own bias, each propagated by the law of propagation of uncertainty (GUM eq. 10) through the same fit that gives the value; summary.json lists each component as the budget of each quantity. A wall without detected slip gets an upper limit instead.</p>
</section>

<section id="warnings">
<h2>Warnings</h2>
{{if .Warnings}}<ul class="warnings">{{range .Warnings}}<li>{{.}}</li>{{end}}</ul>{{else}}<p class="none">None.</p>{{end}}
</section>

<section id="figures">
<h2>Figures</h2>
<div class="figs">
{{range .Figures}}<figure class="{{if .Wide}}wide{{else}}single{{end}}" id="{{.Stem}}">
<img src="{{.DataURI}}" alt="{{.Title}}">
<figcaption><b>Figure {{.Number}}. {{.Title}}.</b> {{.Caption}} <span class="file">Files: {{.Stem}}.png, {{.Stem}}.svg, {{.Stem}}.pdf; plotted data {{.Stem}}.csv.</span></figcaption>
</figure>
{{end}}</div>
{{if .Failed}}<p class="none">Could not be drawn (see the warnings): {{range $i, $n := .Failed}}{{if $i}}; {{end}}{{$n}}{{end}}.</p>{{end}}
{{if .NotShown}}<p class="none">Not drawn for want of data: {{range $i, $n := .NotShown}}{{if $i}}; {{end}}{{$n}}{{end}}.</p>{{end}}
</section>

<section id="tables">
<h2>Tables</h2>
<h3>Shear phases</h3>
{{if .Shear}}<div class="scroll"><table>
<thead><tr>{{range .ShearHead}}<th>{{.}}</th>{{end}}</tr></thead>
<tbody>{{range .Shear}}<tr>{{range .}}<td class="num">{{.}}</td>{{end}}</tr>{{end}}</tbody>
</table></div>{{else}}<p class="none">No shear phase.</p>{{end}}
<h3>Shear bands</h3>
{{if .Bands}}<table>
<thead><tr><th>phase</th><th>band</th><th>from (µm)</th><th>to (µm)</th><th>local rate (s⁻¹)</th></tr></thead>
<tbody>{{range .Bands}}<tr>{{range .}}<td class="num">{{.}}</td>{{end}}</tr>{{end}}</tbody>
</table>
<p class="none">Bands are counted from the stationary wall up; a phase with one band has none.</p>{{else}}<p class="none">No bands.</p>{{end}}
<h3>After the stop</h3>
{{if .AfterStop}}<table class="kv"><tbody>{{range .AfterStop}}<tr><th>{{index . 0}}</th><td class="num">{{index . 1}}</td></tr>{{end}}</tbody></table>
{{else}}<p class="none">The input holds no time after a shear phase.</p>{{end}}
<h3>Time line</h3>
{{if .Phases}}<table>
<thead><tr><th>phase</th><th>from</th><th>to</th><th>set by</th></tr></thead>
<tbody>{{range .Phases}}<tr>{{range .}}<td class="num">{{.}}</td>{{end}}</tr>{{end}}</tbody>
</table>{{else}}<p class="none">No phases.</p>{{end}}
</section>

<section id="experiment">
<h2>Experiment and calibration</h2>
<div class="cols">
<div>
<h3>Calibration</h3>
{{if .Calibration}}<table class="kv"><tbody>{{range .Calibration}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>{{end}}</tbody></table>{{else}}<p class="none">No calibration.</p>{{end}}
</div>
<div>
<h3>Tracking</h3>
<table class="kv"><tbody>{{range .Tracking}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>{{end}}</tbody></table>
<h3>Recording</h3>
<table class="kv"><tbody>{{range .Input}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>{{end}}</tbody></table>
</div>
</div>
{{if .Geometry}}<div class="cols">
<div>
<h3>Geometry</h3>
<table class="kv"><tbody>{{range .Geometry}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>{{end}}</tbody></table>
</div>
<div>
<h3>Imposed motion</h3>
{{if .Program}}<table>
<thead><tr><th>step</th><th>time</th><th>as given</th><th>wall speed (µm/s)</th><th>nominal rate (s⁻¹)</th><th>nominal strain</th></tr></thead>
<tbody>{{range .Program}}<tr>{{range .}}<td class="num">{{.}}</td>{{end}}</tr>{{end}}</tbody>
</table>
{{if .Convention}}<p class="note">{{.Convention}}</p>{{end}}{{else}}<p class="none">No motion program in the experiment file.</p>{{end}}
</div>
</div>
{{end}}<h3>Experiment file</h3>
{{if .YAML}}<pre>{{.YAML}}</pre>{{else}}<p class="none">Not given.</p>{{end}}
</section>

<section id="record">
<h2>Lab record</h2>
<table class="kv"><tbody>{{range .Record}}<tr><th>{{index . 0}}</th><td class="wrapall">{{index . 1}}</td></tr>{{end}}</tbody></table>
{{if .Notes}}<h3>Notes</h3>
<pre class="notes">{{.Notes}}</pre>{{end}}
</section>

<section id="cautions">
<h2>Cautions</h2>
<h3>What the measurement cannot see</h3>
<ul class="cautions">{{range .Limits}}<li>{{.}}</li>{{end}}</ul>
<h3>Safety</h3>
<ul class="cautions">{{range .Safety}}<li>{{.}}</li>{{end}}</ul>
</section>
</main>
<footer><div class="wrap">Made by {{.Tool}}. Each figure is also written beside this page as PNG ({{.DPI}} dpi), SVG and PDF, with the data it plots as CSV.</div></footer>
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
