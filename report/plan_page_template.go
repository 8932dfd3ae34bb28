package report

// planPageParts are the plan page's own parts of pageLayout: the answer
// first, then how the search got there. Its style rules add only what its
// tables need to the shared sheet.
const planPageParts = `{{define "page kind"}}deltaprobe plan{{end}}
{{define "page style"}}
td.list { overflow-wrap: anywhere; min-width: 5rem; }
.method { font-size: 0.92em; color: #333; }
{{end}}
{{define "page header"}}<p class="lede">From what sample size on is the delta-method normal approximation adequate? A sequential Monte Carlo search by deltaprobe plan.</p>
<nav><a href="#answer">Answer</a> <a href="#scope">Scope</a> <a href="#search">The search</a> <a href="#notes">Notes</a> <a href="#figures">Figures</a> <a href="#evaluations">Evaluations</a> <a href="#study">Study file</a> <a href="#provenance">Provenance</a></nav>
{{end}}
{{define "page main"}}<section id="answer">
<h2>Smallest adequate n</h2>
<div class="scroll">
<table class="verdicts">
<thead><tr><th scope="col">transform</th><th scope="col">smallest_<wbr/>n</th><th scope="col">status</th><th scope="col">limiting</th><th scope="col">n checked</th><th scope="col">replicates used</th><th scope="col">window</th><th scope="col">oscillations</th><th scope="col">undecided n above</th></tr></thead>
<tbody>
{{range .Answers}}<tr><td class="name"><a href="#{{.Anchor}}">{{.Name}}</a></td><td class="num">{{.Smallest}}</td><td class="status {{.StatusClass}}">{{.Status}}</td><td>{{.Limiting}}</td><td class="num">{{.Checked}}</td><td class="num">{{.Replicates}}</td><td class="num">{{.Window}}</td><td class="list">{{.Oscillations}}</td><td class="list">{{.Undecided}}</td></tr>
{{end}}</tbody>
</table>
</div>
{{template "explanations" .Answers}}<p class="method">Guarantee: {{.Method}}.</p>
<p class="note"><code>smallest_n</code> is the smallest adequate n: the smallest n at which {{.AllCriteria}}, with no n checked above it failing, the window above it included; one n where the evaluations decided it, otherwise the range [n_low, n_high] where it lies. <code>limiting</code> is the criterion that sets it. The names are those of <code>verdicts.csv</code>. “Replicates used” adds up the replicates behind each decision for that transform; transforms share the replicates simulated at an n, so these do not add up to the plan’s total. “Oscillations” lists n that failed above an earlier passing n, which sent the search higher; “undecided n above” lists n above the answer that neither passed nor failed within the replicates allowed. A criterion passes at n when its interval lies inside its band, fails when the interval lies wholly outside, and is unclear otherwise. The bands of this study:</p>
{{template "bullets" .Criteria}}</section>
<section id="scope" class="scope">
<p><strong>What this search does and does not show.</strong> It checks the delta-method approximation only under the model this study states: the family and parameter values below, the sample sizes searched, this estimator and these transforms. Data that depart from that model – another distribution, other parameter values, dependence, missing values, another estimator – may behave differently. Every number here is a Monte Carlo estimate and carries Monte Carlo error, and the answer vouches only for the n that were checked.</p>
{{template "caution"}}</section>
<section id="search">
<h2>The search</h2>
{{template "key values" .Glance}}<p class="note">For each transform the search doubles n from the bottom of the range until {{.AllCriteria}}, bisects on whole numbers between the last n that did not pass and the first that did, and then checks the window of integers just above the answer. Coverage of discrete data oscillates in n, so a pass at one n does not vouch for the next; a failure found above the answer starts the search again above it.</p>
</section>
<section id="notes">
<h2>Notes</h2>
{{template "warnings" .Notes}}</section>
<section id="figures">
<h2>Figures</h2>
<p>One figure per transform, 1600 pixels wide: tap or click one to open it at full size.</p>
{{template "figure sections" .Sections}}</section>
<section id="evaluations">
<h2>Evaluations</h2>
<p>Every column of <a href="plan.csv">plan.csv</a>, under the same names, to four significant digits (the file has eight); the measures are those at the last look taken at each n. The answers per transform are in <a href="verdicts.csv">verdicts.csv</a>.</p>
{{template "summary table" .Steps}}</section>
{{end}}
{{define "page footer"}}Written by deltaprobe plan. The same study file and seed give the same numbers, and a later deltaprobe run at the same n and seed reproduces them.{{end}}`
