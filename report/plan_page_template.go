package report

// planPageHTML is the template of a plan's index.html. Like pageHTML it
// is well-formed XML (void elements closed, no named entities), and it
// takes its style sheet from pageHTML, adding only what the plan's
// tables need.
const planPageHTML = `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8" />
<meta name="viewport" content="width=device-width, initial-scale=1" />
<meta name="generator" content="deltaprobe" />
<title>{{.Title}} – deltaprobe plan</title>
<style>
{{.Style}}
td.list { overflow-wrap: anywhere; min-width: 5rem; }
.method { font-size: 0.92em; color: #333; }
</style>
</head>
<body>
<header>
<h1>{{.Title}}</h1>
{{if .Description}}<p class="lede">{{.Description}}</p>
{{end}}<p class="lede">From what sample size on is the delta-method normal approximation adequate? A sequential Monte Carlo search by deltaprobe plan.</p>
<nav><a href="#answer">Answer</a> <a href="#scope">Scope</a> <a href="#search">The search</a> <a href="#notes">Notes</a> <a href="#figures">Figures</a> <a href="#evaluations">Evaluations</a> <a href="#study">Study file</a> <a href="#provenance">Provenance</a></nav>
</header>
<main>
<section id="answer">
<h2>Smallest adequate n</h2>
<div class="scroll">
<table class="verdicts">
<thead><tr><th scope="col">transform</th><th scope="col">smallest adequate n</th><th scope="col">status</th><th scope="col">limiting criterion</th><th scope="col">n checked</th><th scope="col">replicates used</th><th scope="col">window</th><th scope="col">oscillations</th><th scope="col">undecided n above</th></tr></thead>
<tbody>
{{range .Answers}}<tr><td class="name"><a href="#{{.Anchor}}">{{.Name}}</a></td><td class="num">{{.Smallest}}</td><td class="status {{.StatusClass}}">{{.Status}}</td><td>{{.Limiting}}</td><td class="num">{{.Checked}}</td><td class="num">{{.Replicates}}</td><td class="num">{{.Window}}</td><td class="list">{{.Oscillations}}</td><td class="list">{{.Undecided}}</td></tr>
{{end}}</tbody>
</table>
</div>
<ul class="why">
{{range .Answers}}<li><strong>{{.Name}}</strong>: {{.Why}}</li>
{{end}}</ul>
<p class="method">Each decision holds its confidence however many batches it took: {{.Method}}.</p>
<p class="note">“Smallest adequate n” is the smallest n at which all three criteria pass, with no n checked above it failing, the window above it included. “Replicates used” adds up the replicates behind each decision for that transform; transforms share the replicates simulated at an n, so these do not add up to the plan’s total. “Oscillations” lists n that failed above an earlier passing n, which sent the search higher; “undecided n above” lists n above the answer that neither passed nor failed within the replicates allowed. A criterion passes at n when its interval lies inside its band, fails when the interval lies wholly outside, and is unclear otherwise. The bands of this study:</p>
<ul class="note">
{{range .Criteria}}<li>{{.}}</li>
{{end}}</ul>
</section>
<section id="scope" class="scope">
<p><strong>What this search does and does not show.</strong> It checks the delta-method approximation only under the model this study states: the family and parameter values below, the sample sizes searched, this estimator and these transforms. Data that depart from that model – another distribution, other parameter values, dependence, missing values, another estimator – may behave differently. Every number here is a Monte Carlo estimate and carries Monte Carlo error, and the answer vouches only for the n that were checked.</p>
<p>It does not replace review by a qualified statistician, the applicable regulatory or sponsor guidance, or the study’s own pre-specified analysis plan. Do not base a sample-size decision on it alone.</p>
</section>
<section id="search">
<h2>The search</h2>
<dl class="kv">
{{range .Glance}}<dt>{{.Key}}</dt><dd>{{.Value}}</dd>
{{end}}</dl>
<p class="note">For each transform the search doubles n from the bottom of the range until all three criteria pass, bisects on whole numbers between the last n that did not pass and the first that did, and then checks the window of integers just above the answer. Coverage of discrete data oscillates in n, so a pass at one n does not vouch for the next; a failure found above the answer starts the search again above it.</p>
</section>
<section id="notes">
<h2>Notes</h2>
{{if .Notes}}<ul class="warn">
{{range .Notes}}<li>{{.}}</li>
{{end}}</ul>
{{else}}<p>None.</p>
{{end}}</section>
<section id="figures">
<h2>Figures</h2>
<p>One figure per transform, 1600 pixels wide: tap or click one to open it at full size.</p>
{{range .Sections}}<h3 id="{{.Anchor}}">{{.Name}} <span class="expr">= {{.Expr}}</span></h3>
{{range .Figures}}<figure>
<a href="{{.File}}"><img src="{{.File}}" width="{{.Width}}" height="{{.Height}}" alt="{{.Alt}}" /></a>
<figcaption>{{.Caption}}</figcaption>
</figure>
{{end}}{{end}}</section>
<section id="evaluations">
<h2>Evaluations</h2>
<p>Every column of <a href="plan.csv">plan.csv</a>, under the same names, to four significant digits (the file has eight); the measures are those at the last look taken at each n. The answers per transform are in <a href="verdicts.csv">verdicts.csv</a>.</p>
<div class="scroll">
<table class="summary">
<caption>{{.Steps.Caption}}</caption>
<thead><tr>{{range .Steps.Columns}}<th scope="col">{{.}}</th>{{end}}</tr></thead>
<tbody>
{{range .Steps.Rows}}<tr>{{range .}}<td class="{{.Class}}">{{.Text}}</td>{{end}}</tr>
{{end}}</tbody>
</table>
</div>
</section>
{{template "study and provenance" .}}
</main>
<footer>
<p>Written by deltaprobe plan. The same study file and seed give the same numbers, and a later deltaprobe run at the same n and seed reproduces them.</p>
</footer>
</body>
</html>
`
