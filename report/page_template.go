package report

// The run's index.html and the plan's are one layout, pageLayout, with
// each page's own parts filled in; the style sheet, the study file as
// run, the provenance, and the lists and tables both pages show are the
// same named templates in both. Every template is written as well-formed
// XML (void elements closed, no named entities) so that tests can parse
// the pages with encoding/xml; html/template escapes every value put into
// them.

// pageLayout is the document both pages share. A page fills it in by
// defining "page kind" (named in the window title), "page style" (style
// rules of its own, after the shared sheet), "page header" (under the
// title), "page main" (its sections before the study file) and "page
// footer". What the two pages share beyond it is in pageParts.
const pageLayout = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8" />
<meta name="viewport" content="width=device-width, initial-scale=1" />
<meta name="generator" content="deltaprobe" />
<title>{{.Title}} – {{template "page kind"}}</title>
<style>
{{template "style sheet"}}{{template "page style"}}</style>
</head>
<body>
<header>
<h1>{{.Title}}</h1>
{{if .Description}}<p class="lede">{{.Description}}</p>
{{end}}{{template "page header"}}</header>
<main>
{{template "page main" .}}{{template "study and provenance" .}}
</main>
<footer>
<p>{{template "page footer"}}</p>
</footer>
</body>
</html>
`

// pageParts are the parts both pages show alike.
const pageParts = `{{define "style sheet"}}:root { color-scheme: light; }
html { -webkit-text-size-adjust: 100%; text-size-adjust: 100%; }
body {
  margin: 0 auto; padding: 1rem 1.25rem 3rem; max-width: 64rem;
  font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Liberation Sans", "DejaVu Sans", sans-serif;
  font-size: 1rem; line-height: 1.5; color: #1a1a1a; background: #fff;
}
h1 { font-size: 1.6rem; line-height: 1.25; margin: 1rem 0 0.25rem; }
h2 { font-size: 1.25rem; margin: 2.25rem 0 0.5rem; padding-bottom: 0.2rem; border-bottom: 1px solid #bbb; }
h3 { font-size: 1.05rem; margin: 1.75rem 0 0.5rem; }
p, ul, dl { margin: 0.5rem 0; }
code, pre, .expr { font-family: ui-monospace, "Liberation Mono", "DejaVu Sans Mono", monospace; font-size: 0.92em; }
a { color: #0b4f8a; }
.lede { color: #444; }
nav { font-size: 0.92em; color: #444; margin: 0.75rem 0 0; }
nav a { margin-right: 0.9rem; white-space: nowrap; }
.scroll { overflow-x: auto; -webkit-overflow-scrolling: touch; margin: 0.5rem 0; }
table { border-collapse: collapse; font-size: 0.9em; }
caption { text-align: left; font-weight: 600; padding: 0.25rem 0; }
th, td { padding: 0.3rem 0.6rem; border-bottom: 1px solid #ddd; vertical-align: top; text-align: left; }
th { font-weight: 600; border-bottom: 1px solid #888; }
thead th { white-space: nowrap; }
.verdicts thead th { white-space: normal; min-width: 4.5rem; }
td.expr { overflow-wrap: anywhere; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.name { overflow-wrap: break-word; max-width: 22rem; }
.note { font-size: 0.92em; color: #333; }
table.summary { font-size: 0.85em; }
.summary td, .summary th { padding: 0.2em 0.5em; }
.status { font-weight: 600; }
.not_reached, .v-fail { color: #8a2c00; }
.unclear, .v-unclear { color: #6b4e00; }
.why li { margin: 0.4rem 0; }
.scope { border-left: 3px solid #888; padding: 0.4rem 0 0.4rem 0.9rem; margin: 1.25rem 0; }
.scope p { margin: 0.3rem 0; }
.warn li { margin: 0.25rem 0; }
figure { margin: 1rem 0 1.75rem; }
figure img { display: block; max-width: 100%; height: auto; border: 1px solid #e4e4e4; }
figcaption { font-size: 0.9em; color: #444; margin-top: 0.4rem; max-width: 48rem; }
dl.kv { display: grid; grid-template-columns: max-content 1fr; gap: 0.2rem 1rem; }
dl.kv dt { font-weight: 600; }
dl.kv dd { margin: 0; overflow-wrap: anywhere; }
pre { overflow-x: auto; background: #f6f6f6; border: 1px solid #e4e4e4; padding: 0.75rem; line-height: 1.4; }
footer { margin-top: 2.5rem; font-size: 0.85em; color: #555; }
@media (max-width: 36rem) {
  body { padding: 0.75rem 0.75rem 2rem; }
  h1 { font-size: 1.35rem; }
  dl.kv { grid-template-columns: 1fr; }
  dl.kv dd { margin-bottom: 0.4rem; }
}
@media print {
  @page { margin: 1.5cm; }
  body { max-width: none; padding: 0; font-size: 10pt; color: #000; background: #fff; }
  nav { display: none; }
  a { color: #000; text-decoration: none; }
  .scroll { overflow: visible; }
  table { font-size: 8pt; }
  table.summary { font-size: 7.5pt; }
  th, td, .summary td, .summary th { padding: 0.1em 0.3em; }
  .verdicts thead th { min-width: 0; }
  tr, figure, .scope, dl.kv { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  figure img { border: none; max-height: 24cm; width: auto; }
  pre { background: #fff; white-space: pre-wrap; overflow-wrap: anywhere; }
}
{{end}}
{{define "caution"}}<p>It does not replace review by a qualified statistician, the applicable regulatory or sponsor guidance, or the study’s own pre-specified analysis plan. Do not base a sample-size decision on it alone.</p>
{{end}}
{{define "explanations"}}<ul class="why">
{{range .}}<li><strong>{{.Name}}</strong>: {{.Why}}</li>
{{end}}</ul>
{{end}}
{{define "bullets"}}<ul class="note">
{{range .}}<li>{{.}}</li>
{{end}}</ul>
{{end}}
{{define "key values"}}<dl class="kv">
{{range .}}<dt>{{.Key}}</dt><dd>{{.Value}}</dd>
{{end}}</dl>
{{end}}
{{define "warnings"}}{{if .}}<ul class="warn">
{{range .}}<li>{{.}}</li>
{{end}}</ul>
{{else}}<p>None.</p>
{{end}}{{end}}
{{define "figure sections"}}{{range .}}<h3 id="{{.Anchor}}">{{.Name}} <span class="expr">= {{.Expr}}</span></h3>
{{range .Figures}}<figure>
{{if .Image}}<a href="{{.File}}"><img src="{{.File}}" width="{{.Width}}" height="{{.Height}}" alt="{{.Alt}}" /></a>
{{else}}<p><a href="{{.File}}">{{.Alt}} ({{.Label}})</a></p>
{{end}}<figcaption>{{.Caption}}{{with .Also}} <span class="also">Also as {{range $i, $l := .}}{{if $i}}, {{end}}<a href="{{$l.File}}">{{$l.Label}}</a>{{end}}.</span>{{end}}</figcaption>
</figure>
{{end}}{{end}}{{end}}
{{define "summary table"}}<div class="scroll">
<table class="summary">
<caption>{{.Caption}}</caption>
<thead><tr>{{range .Columns}}<th scope="col">{{heading .}}</th>{{end}}</tr></thead>
<tbody>
{{range .Rows}}<tr>{{range .}}<td class="{{.Class}}">{{.Text}}</td>{{end}}</tr>
{{end}}</tbody>
</table>
</div>
{{end}}
{{define "study and provenance"}}<section id="study">
<h2>Study file as run</h2>
<p><code>{{.SourceName}}</code>, run with:</p>
{{template "key values" .AsRun}}<pre>{{.Source}}</pre>
</section>
<section id="provenance">
<h2>Provenance</h2>
{{template "key values" .Provenance}}</section>
{{end}}`

// runPageParts are the run page's own parts of pageLayout.
const runPageParts = `{{define "page kind"}}deltaprobe report{{end}}
{{define "page style"}}{{end}}
{{define "page header"}}<p class="lede">Is the delta-method normal approximation adequate at each sample size of this study? A Monte Carlo check by deltaprobe.</p>
<nav><a href="#verdicts">Verdicts</a> <a href="#scope">Scope</a> <a href="#warnings">Warnings</a> <a href="#figures">Figures</a> <a href="#summary">Summary</a> <a href="#study">Study file</a> <a href="#provenance">Provenance</a></nav>
{{end}}
{{define "page main"}}<section id="verdicts">
<h2>Verdicts</h2>
{{if .Incomplete}}<p><strong>This run is incomplete: the numbers use only the blocks that finished.</strong></p>
{{end}}<div class="scroll">
<table class="verdicts">
<thead><tr><th scope="col">transform</th><th scope="col">smallest_<wbr/>n</th><th scope="col">status</th><th scope="col">limiting</th>{{range .CriterionNames}}<th scope="col">{{.}}</th>{{end}}<th scope="col">expression</th></tr></thead>
<tbody>
{{range .Verdicts}}<tr><td class="name"><a href="#{{.Anchor}}">{{.Name}}</a></td><td class="num">{{.Bounds}}</td><td class="status {{.StatusClass}}">{{.Status}}</td><td>{{.Limiting}}</td>{{range .PerCriterion}}<td class="num">{{.}}</td>{{end}}<td class="expr">{{.Expr}}</td></tr>
{{end}}</tbody>
</table>
</div>
{{template "explanations" .Verdicts}}<p class="note"><code>smallest_n</code> is the smallest adequate n: the smallest n of the grid at which {{.AllCriteria}}, there and at every larger n; one n where the replicates decided it, otherwise the range of the grid where it lies (a dash when the largest n fails). <code>limiting</code> is the criterion that sets it. The <code>n_</code> columns give the same for each criterion alone; a dash means the replicates did not decide it within the grid. The names are those of <code>verdicts.csv</code>. A criterion passes at n when its Monte Carlo interval lies inside its band, fails when the interval lies wholly outside, and is unclear otherwise. The bands of this study:</p>
{{template "bullets" .Criteria}}</section>
<section id="scope" class="scope">
<p><strong>What this check does and does not show.</strong> It checks the delta-method approximation only under the model this study states: the family and parameter values below, these sample sizes, this estimator and these transforms. Data that depart from that model – another distribution, other parameter values, dependence, missing values, another estimator – may behave differently. Every number here is a Monte Carlo estimate and carries Monte Carlo error.</p>
{{template "caution"}}</section>
<section id="glance">
<h2>The study</h2>
{{template "key values" .Glance}}</section>
<section id="warnings">
<h2>Warnings</h2>
{{template "warnings" .Warnings}}</section>
<section id="figures">
<h2>Figures</h2>
<p>Two figures per transform, each 1600 pixels wide: tap or click one to open it at full size.</p>
{{template "figure sections" .Sections}}</section>
<section id="summary">
<h2>Summary</h2>
<p>Every column of <a href="summary.csv">summary.csv</a>, under the same names, to four significant digits (the file has eight). The verdicts per transform are in <a href="verdicts.csv">verdicts.csv</a>.</p>
{{range .Tables}}{{template "summary table" .}}{{end}}</section>
{{end}}
{{define "page footer"}}Written by deltaprobe. The same study file and seed give the same numbers; result.json in this folder holds the full state of the run.{{end}}`
