package report

import (
	"bytes"
	"fmt"
	"html/template"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// PageFile is the name of the HTML report inside the output folder.
const PageFile = "index.html"

// The page is one static file beside its figures: no scripts, no styles
// or fonts from elsewhere, nothing fetched. Its markup is well-formed XML
// as well as HTML, so a plain XML parser can check it.

// studyPage is what the run's page and the plan's show of their study
// alike: its title and description, the study at a glance, the bands, a
// section of figures per transform, the study file as run and the
// provenance.
type studyPage struct {
	// AllCriteria counts the deciding criteria in words ("all three
	// criteria pass").
	AllCriteria string
	Title       string
	Description string
	Glance      []keyValue
	Criteria    []string
	Sections    []transformSection
	Source      string
	SourceName  string
	AsRun       []keyValue // the values the run used that a flag can set
	Provenance  []keyValue
}

// pageData is what the run's page shows.
type pageData struct {
	studyPage
	// CriterionNames head the verdict table's per-criterion columns, each
	// allowed to break after its underscore (columnHeading).
	CriterionNames []template.HTML
	Verdicts       []verdictLine
	Warnings       []string
	Tables         []summaryTable
	Incomplete     bool
}

type keyValue struct{ Key, Value string }

// answerLine is a transform's row of a page's first table, and the
// sentence under the table that explains it.
type answerLine struct {
	Name, Expr, Anchor string
	Smallest           string
	Status             string
	StatusClass        string
	Limiting           string
	Why                string
}

// verdictLine is a transform's row of the run page's verdict table.
type verdictLine struct {
	answerLine
	Bounds       string   // where the smallest adequate n lies
	PerCriterion []string // by criterion, in table order
}

type transformSection struct {
	Name, Expr, Anchor string
	Figures            []figureRef
}

type figureRef struct {
	File, Alt, Caption string
	Width, Height      int
	Image              bool         // File is an image a browser shows (PNG or SVG), not a PDF
	Label              string       // File's format, for a link when it is not an image
	Also               []figureLink // the figure's files in its other formats
}

// figureLink is a link to a figure's file in one format.
type figureLink struct {
	File, Label string
}

// newFigureRef is what the page needs of f under caption.
func newFigureRef(f Figure, caption string) figureRef {
	ref := figureRef{File: f.File, Alt: f.Alt, Caption: caption, Width: f.Width, Height: f.Height}
	for _, ff := range f.Files {
		label := strings.ToUpper(string(ff.Format))
		if ff.Name == f.File {
			ref.Image = ff.Format == FormatPNG || ff.Format == FormatSVG
			ref.Label = label
			continue
		}
		ref.Also = append(ref.Also, figureLink{File: ff.Name, Label: label})
	}
	return ref
}

type summaryTable struct {
	Caption string
	Columns []string
	Rows    [][]summaryCell
}

type summaryCell struct {
	Text, Class string
}

// The summary is split into tables, one per measure group, each
// under a dozen columns, so each fits a printed page and a reader finds a
// quantity among its kin. Together they hold every column of summary.csv,
// under the same names.
var summaryGroups = []struct {
	caption string
	group   measure.Group
	verdict bool // ends with the verdict column
}{
	{"Sizes and replicates", measure.Counts, false},
	{"Estimate and bias", measure.Estimate, true},
	{"Variance", measure.Variance, false},
	{"Intervals and shape", measure.Intervals, true},
	{"Test of the null", measure.Tests, true}, // only when a transform has a null
}

// groupColumns lists a page table's columns: the transform and n, the
// group's measures in table order, and the verdict if asked.
func groupColumns(g measure.Group, verdict bool) []string {
	cols := []string{"transform", "n"}
	for _, m := range measure.Measures() {
		if m.Group == g {
			cols = append(cols, m.Name)
		}
	}
	if verdict {
		cols = append(cols, "verdict")
	}
	return cols
}

var pageTemplate = newPageTemplate(runPageParts)

// newPageTemplate is pageLayout with the shared parts and a page's own.
func newPageTemplate(ownParts string) *template.Template {
	t := template.Must(template.New("page").Funcs(template.FuncMap{"heading": columnHeading}).Parse(pageLayout))
	return template.Must(template.Must(t.Parse(pageParts)).Parse(ownParts))
}

// Page renders index.html for r, with figs (from Figures) as the images
// it shows; they are referenced by file name, beside the page.
func Page(r *runner.Result, figs []Figure) ([]byte, error) {
	return renderPage(pageTemplate, buildPage(r, figs))
}

// renderPage executes a page's template on its data.
func renderPage(t *template.Template, data any) ([]byte, error) {
	var buf bytes.Buffer
	if err := t.Execute(&buf, data); err != nil {
		return nil, fmt.Errorf("rendering %s: %w", PageFile, err)
	}
	return buf.Bytes(), nil
}

// newStudyPage fills in what comes from the study alone. The study at a
// glance is its model, then glance, then its intervals; the study as run
// states its seed, and its replicates when replicates is set (a plan
// chooses its own); the provenance is the tool, the study file and its
// digest, the seed, the generator and the build, then provenance.
func newStudyPage(st study.Info, tool string, build runner.Build, replicates bool, glance, provenance []keyValue) studyPage {
	p := studyPage{
		Title:       st.Title,
		Description: st.Description,
		Source:      st.Source,
		SourceName:  st.File,
	}
	if p.Title == "" {
		p.Title = st.File
	}
	p.Glance = []keyValue{{"Model", describeModel(st.Arms)}}
	if c := censoringText(st); c != "" {
		fitWords := "The fit is the MLE"
		if censoredMisfit(st) {
			fitWords = "The fit is the fitted family's MLE"
		}
		p.Glance = append(p.Glance, keyValue{"Censoring", c + ". " + fitWords + " under non-informative censoring, its variance the inverse observed information (the sandwich where variance = \"robust\"); the predictions use " + censoredPredictionWords(st) + "."})
	}
	p.Glance = append(p.Glance, glance...)
	if note := fitNote(st); note != "" {
		p.Glance = append(p.Glance, keyValue{"Fit", note})
	}
	p.Glance = append(p.Glance, keyValue{"Intervals", intervalGlance(st)})
	p.AllCriteria = decidingWords(len(measure.Deciding(st.Criteria)))
	p.AsRun = []keyValue{{"Seed", seedText(st)}}
	if replicates {
		p.AsRun = append(p.AsRun, keyValue{"Replicates", replicatesText(st)})
	}
	build = build.Known()
	commit := build.Commit
	switch build.Modified {
	case "true":
		commit += " (the tree had uncommitted changes)"
	case "false":
		commit += " (a clean tree)"
	default:
		commit += " (whether the tree was modified: " + build.Modified + ")"
	}
	p.Provenance = append([]keyValue{
		{"Tool", "deltaprobe " + tool},
		{"Study file", st.File},
		{"Study file SHA-256", st.SHA256},
		{"Seed", seedText(st)},
		{"Random generator", build.Generator},
		{"Build commit", commit},
		{"Go version", build.GoVersion},
		{"Platform", build.Platform},
	}, provenance...)
	return p
}

// seedText is the seed a study ran with, and the file's when -seed
// overrode it.
func seedText(st study.Info) string {
	s := strconv.FormatUint(st.Seed, 10)
	if st.Overridden("seed") {
		s += fmt.Sprintf(" (from -seed; the file says %d)", st.FileSeed)
	}
	return s
}

// replicatesText is the replicates per n a study ran with, and the
// file's when -replicates overrode them.
func replicatesText(st study.Info) string {
	s := fmt.Sprintf("%d per sample size", st.Replicates)
	if st.Overridden("replicates") {
		s += fmt.Sprintf(" (from -replicates; the file says %d)", st.FileReplicates)
	}
	return s
}

// criterionRules says, criterion by criterion, when it passes, naming
// the interval that decides it as interval.
func criterionRules(bands study.Criteria, interval string) []string {
	var out []string
	for _, c := range measure.Deciding(bands) {
		b := c.Band(bands)
		band := fmtG(b[0]) + "–" + fmtG(b[1])
		if b[0] == -b[1] {
			band = "±" + fmtG(b[1])
		}
		out = append(out, strings.NewReplacer("{interval}", interval, "{band}", band).Replace(c.Rule))
	}
	return out
}

// newAnswerLine is transform info's answer v, explained by why; stem is
// the transform's file-name stem, which its anchor on the page shares.
func newAnswerLine(info study.TransformInfo, stem string, v measure.TransformVerdict, why string) answerLine {
	return answerLine{
		Name: info.Name, Expr: info.Expr, Anchor: "t-" + stem,
		Smallest:    boundsText(v),
		Status:      statusText(v.Status),
		StatusClass: string(v.Status),
		Limiting:    dash(v.Limiting),
		Why:         why,
	}
}

// addSection adds the section of the transform that line answers for,
// index t, with those of figs that show it, each under caption(f).
func (p *studyPage) addSection(line answerLine, t int, figs []Figure, caption func(Figure) string) {
	sec := transformSection{Name: line.Name, Expr: line.Expr, Anchor: line.Anchor}
	for _, f := range figs {
		if f.Transform == t {
			sec.Figures = append(sec.Figures, newFigureRef(f, caption(f)))
		}
	}
	p.Sections = append(p.Sections, sec)
}

func buildPage(r *runner.Result, figs []Figure) pageData {
	rows := measure.Summarize(r)
	vs := measure.Verdicts(rows)
	st := r.Study
	glance := []keyValue{
		{"Sample sizes", joinInts(st.SampleSizes)},
		{"Replicates", replicatesText(st)},
	}
	glance = slices.Insert(glance, 1, armSizesGlance(st, st.SampleSizes)...)
	provenance := []keyValue{
		{"Replicates", replicatesText(st)},
		{"Block size", strconv.Itoa(r.BlockSize)},
		{"Workers", strconv.Itoa(r.Workers)},
		{"Simulation time", fmt.Sprintf("%.2f s", r.Elapsed)},
		{"Last block finished", dashIfEmpty(r.Finished)},
		{"Run complete", yesNo(r.Complete)},
		{"Result layout", strconv.Itoa(r.Layout)},
	}
	d := pageData{
		studyPage:  newStudyPage(st, r.Tool, r.Build, true, glance, provenance),
		Warnings:   measure.Warnings(r, rows),
		Tables:     summaryTables(rows),
		Incomplete: !r.Complete,
	}
	for _, c := range measure.Deciding(st.Criteria) {
		d.CriterionNames = append(d.CriterionNames, columnHeading(c.Column()))
	}
	dec := measure.GridDecisions(st)
	d.Criteria = criterionRules(st.Criteria, fmt.Sprintf("interval (z = %.3f)", dec.Z))
	d.Criteria = append(d.Criteria, "Guarantee: "+dec.Method()+".")
	stems := transformStems(st.Transforms)
	nn := len(st.SampleSizes)
	for t, info := range st.Transforms {
		var v measure.TransformVerdict
		if t < len(vs) {
			v = vs[t]
		}
		trows := rows[t*nn : (t+1)*nn]
		line := verdictLine{answerLine: newAnswerLine(info, stems[t], v, explain(trows, v))}
		line.Bounds = boundsText(v)
		for _, c := range measure.Deciding(st.Criteria) {
			line.PerCriterion = append(line.PerCriterion, dash(formatN(v.PerCriterion[c.Index()])))
		}
		d.Verdicts = append(d.Verdicts, line)
		d.addSection(line.answerLine, t, figs, func(f Figure) string { return figureCaption(f.Kind) })
	}
	return d
}

func figureCaption(kind string) string {
	switch kind {
	case KindTrends:
		return "Each criterion against n. Grey bands are the study's accepted bands; bars are the Monte Carlo intervals the verdicts use, at the family-wise level stated with the criteria; the dash-dot line marks the smallest adequate n. One-sided misses and the KS distance of the Wald pivot are there to show why, and decide nothing."
	case KindShapes:
		return "The standardised estimate, (estimate − truth) / delta-method sd, at each n: as a histogram under the N(0, 1) density, and as quantiles against N(0, 1) quantiles. A shift shows bias, a spread unlike the curve a wrong variance, a bend in the quantiles skewness or heavy tails. Undefined replicates are left out."
	}
	return ""
}

func statusText(s measure.Status) string {
	switch s {
	case measure.Adequate:
		return "adequate"
	case measure.NotReached:
		return "not reached"
	case measure.StatusUnclear:
		return "unclear"
	}
	return string(s)
}

func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no: only the blocks that finished are counted"
}

func joinInts(xs []int) string {
	parts := make([]string, len(xs))
	for i, x := range xs {
		parts[i] = strconv.Itoa(x)
	}
	return strings.Join(parts, ", ")
}

// describeModel writes the arms as "normal (mean = 14, sd = 3.5)", with
// parameters in name order so the page does not depend on map order.
func describeModel(arms []study.ArmInfo) string {
	var parts []string
	for _, a := range arms {
		keys := make([]string, 0, len(a.Values))
		for k := range a.Values {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		vals := make([]string, len(keys))
		for i, k := range keys {
			vals[i] = k + " = " + strconv.FormatFloat(a.Values[k], 'g', -1, 64)
		}
		s := a.Family + " (" + strings.Join(vals, ", ") + ")"
		if a.Design != "" {
			s = regressionText(a)
		}
		if a.Fit != "" && a.Fit != a.Family {
			s += ", fitted as " + a.Fit
		}
		if a.Robust() {
			s += ", robust variance"
		}
		if a.Name != "" {
			s = a.Name + ": " + s
			if a.Allocation != 1 {
				s += fmt.Sprintf(", allocation %g", a.Allocation)
			}
		}
		parts = append(parts, s)
	}
	return strings.Join(parts, "; ")
}

func summaryTables(rows []measure.Row) []summaryTable {
	var out []summaryTable
	tested := false
	for _, r := range rows {
		tested = tested || !math.IsNaN(r.Get(measure.Null))
	}
	for _, g := range summaryGroups {
		if g.group == measure.Tests && !tested {
			continue
		}
		cols := groupColumns(g.group, g.verdict)
		tb := summaryTable{Caption: g.caption, Columns: cols}
		for _, r := range rows {
			cells := make([]summaryCell, len(cols))
			for i, col := range cols {
				cells[i] = summaryCellFor(r, col)
			}
			tb.Rows = append(tb.Rows, cells)
		}
		out = append(out, tb)
	}
	return out
}

// summaryCellFor formats one value of summary.csv for reading: four
// significant digits (summary.csv keeps eight), a dash where the value
// does not exist.
func summaryCellFor(r measure.Row, col string) summaryCell {
	num := func(x float64) summaryCell {
		switch {
		case math.IsNaN(x):
			return summaryCell{Text: "–", Class: "num"}
		case math.IsInf(x, 1):
			return summaryCell{Text: "∞", Class: "num"}
		case math.IsInf(x, -1):
			return summaryCell{Text: "−∞", Class: "num"}
		}
		return summaryCell{Text: strings.ReplaceAll(strconv.FormatFloat(x, 'g', 4, 64), "-", "−"), Class: "num"}
	}
	switch col {
	case "transform":
		return summaryCell{Text: r.Transform, Class: "name"}
	case "n":
		return summaryCell{Text: strconv.Itoa(r.N), Class: "num"}
	case "verdict":
		return summaryCell{Text: string(r.Verdict), Class: "v-" + string(r.Verdict)}
	}
	for _, m := range measure.Measures() {
		switch {
		case m.Name != col:
		case m.Count:
			return summaryCell{Text: strconv.FormatInt(r.Count(m), 10), Class: "num"}
		default:
			return num(r.Get(m))
		}
	}
	return summaryCell{Text: "?"}
}

func dashIfEmpty(s string) string {
	if s == "" {
		return "–"
	}
	return s
}

// columnHeading is a CSV column name as a table heading that may break
// after each underscore, so a narrow page (print) need not cut the table.
func columnHeading(name string) template.HTML {
	return template.HTML(strings.ReplaceAll(template.HTMLEscapeString(name), "_", "_<wbr/>"))
}
