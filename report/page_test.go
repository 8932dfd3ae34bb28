package report

import (
	"bytes"
	"encoding/xml"
	"errors"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
)

// element is a node of the page as encoding/xml reads it.
type element struct {
	name     string
	attrs    map[string]string
	children []*element
	text     strings.Builder // all text inside, descendants included
}

// parsePage reads the page as XML, strictly: the template is written to
// be well-formed, so an unclosed or misnested tag is an error here.
func parsePage(t *testing.T, page []byte) *element {
	t.Helper()
	d := xml.NewDecoder(bytes.NewReader(page))
	d.Strict = true
	root := &element{name: "#document"}
	stack := []*element{root}
	for {
		tok, err := d.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("index.html is not well-formed: %v", err)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			e := &element{name: tok.Name.Local, attrs: map[string]string{}}
			for _, a := range tok.Attr {
				e.attrs[a.Name.Local] = a.Value
			}
			top := stack[len(stack)-1]
			top.children = append(top.children, e)
			stack = append(stack, e)
		case xml.EndElement:
			stack = stack[:len(stack)-1]
		case xml.CharData:
			for _, e := range stack {
				e.text.Write(tok)
			}
		}
	}
	if len(stack) != 1 {
		t.Fatalf("index.html leaves %d elements open", len(stack)-1)
	}
	return root
}

// find returns every element below e for which match holds, in order.
func (e *element) find(match func(*element) bool) []*element {
	var out []*element
	for _, c := range e.children {
		if match(c) {
			out = append(out, c)
		}
		out = append(out, c.find(match)...)
	}
	return out
}

func named(name string) func(*element) bool {
	return func(e *element) bool { return e.name == name }
}

func hasClass(name, class string) func(*element) bool {
	return func(e *element) bool {
		return e.name == name && strings.Contains(" "+e.attrs["class"]+" ", " "+class+" ")
	}
}

func TestWritePage(t *testing.T) {
	for _, tc := range runCases {
		t.Run(tc.name, func(t *testing.T) {
			r := storedRun(t, tc.dir)
			dir := t.TempDir()
			if err := Write(dir, r); err != nil {
				t.Fatal(err)
			}
			page, err := os.ReadFile(filepath.Join(dir, PageFile))
			if err != nil {
				t.Fatal(err)
			}
			checkPage(t, dir, page, r)
			sameFiles(t, dir, storedFigures(t, tc.dir))
		})
	}
}

// pageWant is what checkPageBasics expects of a page.
type pageWant struct {
	transforms  int      // rows of the first table, and sentences under it
	images      int      // figures shown
	imageSuffix string   // how every figure's file name ends
	title       string   // the study's title, "" for none
	source      string   // the study file as run
	says        []string // what the page's text must hold besides its caution
}

// checkPageBasics checks what every page of the report must be, a run's
// or a plan's: well-formed; nothing from the network and no scripts; a
// viewport; its figures beside it, each with alt text; every link to a
// single anchor on the page or to a file beside it; the answer table
// first, with a sentence per transform under it; the caution, the study
// file as run and the study's title. It returns the page and the answer
// table's rows.
func checkPageBasics(t *testing.T, dir string, page []byte, want pageWant) (*element, []*element) {
	t.Helper()
	doc := parsePage(t, page)
	text := string(page)

	// Nothing from the network, no scripts.
	for _, bad := range []string{"http://", "https://", "<script", "//cdn", "@import", "url("} {
		if strings.Contains(strings.ToLower(text), bad) {
			t.Errorf("index.html contains %q", bad)
		}
	}
	if !strings.Contains(text, `name="viewport"`) {
		t.Error("index.html has no viewport meta")
	}

	// Every image exists beside the page and is a figure of ours.
	imgs := doc.find(named("img"))
	if len(imgs) != want.images {
		t.Errorf("%d images for %d transforms, want %d", len(imgs), want.transforms, want.images)
	}
	for _, img := range imgs {
		src := img.attrs["src"]
		if src == "" || strings.ContainsAny(src, "/\\:") || !strings.HasSuffix(src, want.imageSuffix) {
			t.Errorf("image source %q is not a figure beside the page", src)
			continue
		}
		if _, err := os.Stat(filepath.Join(dir, src)); err != nil {
			t.Errorf("image %q: %v", src, err)
		}
		if img.attrs["alt"] == "" {
			t.Errorf("image %q has no alt text", src)
		}
	}
	// Every link goes to a single anchor on the page or a file beside it.
	for _, a := range doc.find(named("a")) {
		href := a.attrs["href"]
		if strings.HasPrefix(href, "#") {
			if len(doc.find(func(e *element) bool { return e.attrs["id"] == href[1:] })) != 1 {
				t.Errorf("link %q has no single target", href)
			}
			continue
		}
		if strings.ContainsAny(href, "/\\:") {
			t.Errorf("link %q leaves the folder", href)
		}
		if _, err := os.Stat(filepath.Join(dir, href)); err != nil {
			t.Errorf("link %q: %v", href, err)
		}
	}

	// The answer table comes first, one row per transform, with one
	// explaining sentence each under it.
	tables := doc.find(named("table"))
	if len(tables) == 0 || !hasClass("table", "verdicts")(tables[0]) {
		t.Fatal("the first table is not the answer table")
	}
	rows := tables[0].find(named("tr"))[1:]
	if len(rows) != want.transforms {
		t.Fatalf("answer table has %d rows for %d transforms", len(rows), want.transforms)
	}
	whys := doc.find(hasClass("ul", "why"))
	if len(whys) != 1 || len(whys[0].find(named("li"))) != want.transforms {
		t.Error("want one explaining sentence per transform")
	}

	// The caution, the study file as run, and what else the page says.
	body := doc.text.String()
	caution := []string{
		"only under the model this study states",
		"qualified statistician",
		"regulatory or sponsor guidance",
		"pre-specified analysis plan",
	}
	for _, must := range append(caution, want.says...) {
		if !strings.Contains(body, must) {
			t.Errorf("page does not say %q", must)
		}
	}
	pres := doc.find(named("pre"))
	if len(pres) != 1 || pres[0].text.String() != want.source {
		t.Error("the study file is not on the page exactly as run")
	}
	if want.title != "" {
		if h1 := doc.find(named("h1"))[0].text.String(); h1 != want.title {
			t.Errorf("heading %q, want the study title %q", h1, want.title)
		}
	}
	return doc, rows
}

func checkPage(t *testing.T, dir string, page []byte, r *runner.Result) {
	t.Helper()
	warnings := measure.Warnings(r, measure.Summarize(r))
	doc, rows := checkPageBasics(t, dir, page, pageWant{
		transforms: len(r.Study.Transforms), images: 2 * len(r.Study.Transforms), imageSuffix: ".png",
		title: r.Study.Title, source: r.Study.Source,
		says: append([]string{r.Study.SHA256, "deltaprobe " + r.Tool}, warnings...),
	})

	vs := measure.Verdicts(measure.Summarize(r))
	for i, tr := range r.Study.Transforms {
		cells := rows[i].find(named("td"))
		if got := cells[0].text.String(); got != tr.Name {
			t.Errorf("verdict row %d names %q, want %q", i, got, tr.Name)
		}
		// The smallest adequate n where decided, else its bounds.
		want := dash(formatN(vs[i].SmallestN))
		switch v := vs[i]; {
		case v.SmallestN == 0 && v.Low > 0 && v.High > 0:
			want = formatN(v.Low) + "–" + formatN(v.High)
		case v.SmallestN == 0 && v.Low > 0:
			want = formatN(v.Low) + "–"
		}
		if got := cells[1].text.String(); got != want {
			t.Errorf("%s: smallest adequate n %q, want %q", tr.Name, got, want)
		}
	}

	// Every column of summary.csv, once per summary table it belongs to.
	var headers []string
	for _, tb := range doc.find(hasClass("table", "summary")) {
		for _, th := range tb.find(named("th")) {
			headers = append(headers, th.text.String())
		}
		if n := len(tb.find(named("tr"))) - 1; n != len(r.Study.Transforms)*len(r.Study.SampleSizes) {
			t.Errorf("summary table has %d rows, want %d", n, len(r.Study.Transforms)*len(r.Study.SampleSizes))
		}
	}
	tested := false // the test table is on the page only when a transform has a null
	for _, tr := range r.Study.Transforms {
		tested = tested || tr.Null != nil
	}
	for _, col := range SummaryColumns {
		if !tested && slices.Contains(groupColumns(measure.Tests, false)[2:], col) {
			continue
		}
		found := false
		for _, h := range headers {
			found = found || h == col
		}
		if !found {
			t.Errorf("summary column %q is not on the page", col)
		}
	}
}

// The page depends on the result alone.
func TestPageDeterministic(t *testing.T) {
	r := storedRun(t, "run-small")
	figs := storedFigures(t, "run-small")
	a, b := renderTwice(t, func() ([]byte, error) { return Page(r, figs) })
	if !bytes.Equal(a, b) {
		t.Error("two renderings of the same page differ")
	}
}

// The study's title and source reach the page escaped, never as markup.
func TestPageEscapes(t *testing.T) {
	r := storedRun(t, "run-small")
	page, err := Page(r, nil)
	if err != nil {
		t.Fatal(err)
	}
	checkEscaped(t, page, "Fleet &lt;and&gt; target margin &amp; co")
}

// checkEscaped checks that a stored study's title and source, which hold
// markup, reached page escaped, the title as escapedTitle.
func checkEscaped(t *testing.T, page []byte, escapedTitle string) {
	t.Helper()
	text := string(page)
	for _, raw := range []string{"<and>", `a < b & "c"`} {
		if strings.Contains(text, raw) {
			t.Errorf("page carries %q unescaped", raw)
		}
	}
	if !strings.Contains(text, escapedTitle) {
		t.Error("title not escaped as expected")
	}
}

// row builds a summary row whose checks have the given verdicts and
// intervals; the values quoted are the centres of the intervals.
func row(n int, checks ...measure.Check) measure.Row {
	r := measure.NewRow("t", n)
	r.Verdict = measure.Pass
	for i, c := range checks {
		r.Checks[i] = c
		switch c.Verdict {
		case measure.Fail:
			r.Verdict = measure.Fail
		case measure.Unclear:
			if r.Verdict != measure.Fail {
				r.Verdict = measure.Unclear
			}
		}
	}
	for i, cr := range measure.Criteria() {
		r.Set(cr.Measure, (r.Checks[i].Low+r.Checks[i].High)/2)
	}
	return r
}

var (
	covBand  = [2]float64{0.925, 0.975}
	varBand  = [2]float64{0.9, 1.1}
	biasBand = [2]float64{-0.1, 0.1}
	covOK    = measure.Check{Low: 0.94, High: 0.96, Band: covBand, Verdict: measure.Pass}
	varOK    = measure.Check{Low: 0.97, High: 1.03, Band: varBand, Verdict: measure.Pass}
	biasOK   = measure.Check{Low: -0.02, High: 0.02, Band: biasBand, Verdict: measure.Pass}
	covLow   = measure.Check{Low: 0.901, High: 0.909, Band: covBand, Verdict: measure.Fail}
	covEdge  = measure.Check{Low: 0.92, High: 0.93, Band: covBand, Verdict: measure.Unclear}
	varHigh  = measure.Check{Low: 1.2, High: 1.3, Band: varBand, Verdict: measure.Fail}
	biasBig  = measure.Check{Low: 0.15, High: 0.25, Band: biasBand, Verdict: measure.Fail}
)

func TestExplain(t *testing.T) {
	tests := []struct {
		name string
		rows []measure.Row
		v    measure.TransformVerdict
		want []string // phrases the sentence must hold
	}{
		{
			"adequate throughout",
			[]measure.Row{row(5, covOK, varOK, biasOK), row(10, covOK, varOK, biasOK)},
			measure.TransformVerdict{SmallestN: 5, Status: measure.Adequate, Limiting: "none"},
			[]string{"Smallest adequate n = 5, the smallest n studied", "Smaller samples were not checked"},
		},
		{
			"coverage below the band before",
			[]measure.Row{row(5, covLow, varOK, biasOK), row(10, covLow, varOK, biasOK), row(20, covOK, varOK, biasOK)},
			measure.TransformVerdict{SmallestN: 20, Status: measure.Adequate, Limiting: "coverage"},
			[]string{"Smallest adequate n = 20", "at n = 10 coverage is below its band: 0.905", "interval 0.901 to 0.909", "band 0.925 to 0.975"},
		},
		{
			"two criteria hold it back",
			[]measure.Row{row(5, covLow, varHigh, biasBig), row(10, covOK, varOK, biasOK)},
			measure.TransformVerdict{SmallestN: 10, Status: measure.Adequate, Limiting: "coverage"},
			[]string{"at n = 5 coverage is below its band", "; and the delta-method variance is too large: 1.250 times", "; and the bias is 0.200 delta-method sd, beyond ±0.100"},
		},
		{
			"an earlier pass does not count",
			[]measure.Row{row(5, covOK, varOK, biasOK), row(10, covLow, varOK, biasOK), row(20, covOK, varOK, biasOK)},
			measure.TransformVerdict{SmallestN: 20, Status: measure.Adequate, Limiting: "coverage"},
			[]string{"at n = 10 coverage is below", "n = 5 passes too, but adequacy needs every larger n"},
		},
		{
			"not reached",
			[]measure.Row{row(5, covLow, varOK, biasOK), row(10, covLow, varOK, biasOK)},
			measure.TransformVerdict{Status: measure.NotReached, Limiting: "coverage"},
			[]string{"Not adequate at any n of the grid", "At the largest, n = 10, coverage is below its band"},
		},
		{
			"unclear",
			[]measure.Row{row(5, covLow, varOK, biasOK), row(10, covEdge, varOK, biasOK)},
			measure.TransformVerdict{Status: measure.StatusUnclear, Limiting: "coverage"},
			[]string{"Undecided", "no criterion fails", "coverage is not clearly inside its band: 0.925", "crosses the band's edge at 0.925", "More replicates"},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := explain(tc.rows, tc.v)
			for _, w := range tc.want {
				if !strings.Contains(got, w) {
					t.Errorf("explain = %q\nwant it to contain %q", got, w)
				}
			}
		})
	}
}

func TestFmt3(t *testing.T) {
	tests := []struct {
		in   float64
		want string
	}{
		{0.90475, "0.905"}, {-0.0499, "−0.050"}, {-0.0001, "0.000"}, {12.3456, "12.346"},
	}
	for _, tc := range tests {
		if got := fmt3(tc.in); got != tc.want {
			t.Errorf("fmt3(%v) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

// A study that states its interval and a test: the page says the recipe
// in words, shows the test's table, and its verdict table has a column
// for each deciding criterion only (coverage and power here).
func TestPageStatesTheRecipe(t *testing.T) {
	r := storedRun(t, "run-tested")
	dir := t.TempDir()
	if err := Write(dir, r); err != nil {
		t.Fatal(err)
	}
	page, err := os.ReadFile(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}
	doc := parsePage(t, page)
	body := strings.Join(strings.Fields(doc.text.String()), " ")
	for _, must := range []string{
		"z: t quantile with n − 1 df, standard error 1 / √(n − 3); test of H0: z = 0",
		"Test of the null",
		"both deciding criteria pass",
	} {
		if !strings.Contains(body, must) {
			t.Errorf("page does not say %q", must)
		}
	}
	var heads []string
	for _, th := range doc.find(hasClass("table", "verdicts"))[0].find(named("th")) {
		heads = append(heads, th.text.String())
	}
	if want := []string{"transform", "smallest_n", "status", "limiting", "n_coverage", "n_power", "expression"}; !slices.Equal(heads, want) {
		t.Errorf("verdict table columns %q, want %q", heads, want)
	}
}
