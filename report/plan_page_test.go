package report

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/study"
)

func TestWritePlan(t *testing.T) {
	for _, c := range planCases {
		t.Run(c.name, func(t *testing.T) {
			s, p := storedPlan(t, c.dir)
			dir := t.TempDir()
			if err := WritePlan(dir, p); err != nil {
				t.Fatal(err)
			}
			for _, name := range []string{"plan.csv", "verdicts.csv"} {
				b, err := os.ReadFile(filepath.Join(dir, name))
				if err != nil {
					t.Fatal(err)
				}
				if _, err := csv.NewReader(bytes.NewReader(b)).ReadAll(); err != nil {
					t.Errorf("%s does not parse as CSV: %v", name, err)
				}
			}
			page, err := os.ReadFile(filepath.Join(dir, PageFile))
			if err != nil {
				t.Fatal(err)
			}
			checkPlanPage(t, dir, page, s, p)
			sameFiles(t, dir, storedPlanFigures(t, c.dir))
		})
	}
}

func checkPlanPage(t *testing.T, dir string, page []byte, s *study.Study, p *plan.Result) {
	t.Helper()
	exhausted := "no"
	if p.Exhausted {
		exhausted = "yes"
	}
	doc, rows := checkPageBasics(t, dir, page, pageWant{
		transforms: len(s.Transforms), images: len(s.Transforms), imageSuffix: "-plan.png",
		title: s.Title, source: string(s.Source),
		says: []string{
			p.Method,
			s.SHA256,
			"deltaprobe " + p.Tool,
			strconv.FormatUint(s.Seed, 10),
			strconv.FormatInt(p.Total, 10),
			"Budget cap reached" + exhausted,
		},
	})

	for i, tr := range s.Transforms {
		cells := rows[i].find(named("td"))
		if len(cells) != 9 {
			t.Fatalf("answer row %d has %d cells, want 9", i, len(cells))
		}
		v := p.Verdicts[i]
		checked := 0
		for _, st := range p.Steps {
			if st.Transform == tr.Name {
				checked++
			}
		}
		answer := "-"
		switch {
		case v.Status == measure.Adequate:
			answer = strconv.Itoa(v.SmallestN)
		case v.Low > 0 && v.High > 0:
			answer = fmt.Sprintf("%d–%d", v.Low, v.High)
		case v.Low > 0:
			answer = fmt.Sprintf("%d–", v.Low)
		}
		for k, want := range map[int]string{
			0: tr.Name,
			1: answer,
			2: statusText(v.Status),
			4: strconv.Itoa(checked),
		} {
			if got := cells[k].text.String(); got != want {
				t.Errorf("%s: answer column %d is %q, want %q", tr.Name, k, got, want)
			}
		}
		if len(p.Undecided[i]) > 0 && cells[8].text.String() != joinInts(p.Undecided[i]) {
			t.Errorf("%s: undecided %q, want %q", tr.Name, cells[8].text.String(), joinInts(p.Undecided[i]))
		}
	}

	// The evaluations table is plan.csv: its columns, a row per step.
	evals := doc.find(hasClass("table", "summary"))
	if len(evals) != 1 {
		t.Fatalf("%d evaluation tables, want 1", len(evals))
	}
	var headers []string
	for _, th := range evals[0].find(named("th")) {
		headers = append(headers, th.text.String())
	}
	if cols := PlanColumns(p.Study.Criteria); strings.Join(headers, ",") != strings.Join(cols, ",") {
		t.Errorf("evaluation table columns %q, want plan.csv's %q", headers, cols)
	}
	if n := len(evals[0].find(named("tr"))) - 1; n != len(p.Steps) {
		t.Errorf("evaluation table has %d rows for %d steps", n, len(p.Steps))
	}
}

// The page depends on the study and the plan alone.
func TestPlanPageDeterministic(t *testing.T) {
	_, p := storedPlan(t, planCases[0].dir)
	figs := storedPlanFigures(t, planCases[0].dir)
	a, b := renderTwice(t, func() ([]byte, error) { return PlanPage(p, figs) })
	if !bytes.Equal(a, b) {
		t.Error("two renderings of the same page differ")
	}
}

// The study's title and source reach the page escaped, never as markup;
// the style sheet is the run page's, as it is.
func TestPlanPageEscapes(t *testing.T) {
	_, p := storedPlan(t, planCases[0].dir)
	page, err := PlanPage(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	checkEscaped(t, page, "Plan &lt;and&gt; search &amp; co")
	var css bytes.Buffer
	if err := pageTemplate.ExecuteTemplate(&css, "style sheet", nil); err != nil {
		t.Fatal(err)
	}
	if css.Len() < 1000 || !bytes.Contains(page, css.Bytes()) {
		t.Error("the plan page does not carry the run page's style sheet unchanged")
	}
}

func TestPlanExplain(t *testing.T) {
	P, F, U := measure.Pass, measure.Fail, measure.Unclear
	spec := study.PlanSpec{NMin: 5, NMax: 400, MaxReplicates: 20000}
	withRows := func(st []plan.Step, rows map[int]measure.Row) []plan.Step {
		for i := range st {
			if r, ok := rows[st[i].N]; ok {
				st[i].Row = r
			}
		}
		return st
	}
	tests := []struct {
		name string
		v    planView
		want []string
	}{
		{
			"adequate, coverage below the band just under it",
			planView{
				steps: withRows(steps([]int{5, 10, 20, 15, 16, 17, 18}, []measure.Verdict{F, F, P, F, P, P, P}),
					map[int]measure.Row{15: row(15, covLow, varOK, biasOK), 16: row(16, covOK, varOK, biasOK)}),
				verdict: measure.TransformVerdict{SmallestN: 16, Status: measure.Adequate, Limiting: "coverage"},
				window:  3, windowTop: 19,
			},
			[]string{"Smallest adequate n = 16", "the window n = 17–19 included", "Not at n = 15, the largest n below it checked: coverage is below its band: 0.905", "interval 0.901 to 0.909; band 0.925 to 0.975"},
		},
		{
			"adequate at the bottom of the range, with undecided n above",
			planView{
				steps:   steps([]int{5, 6, 7, 8}, []measure.Verdict{P, U, P, U}),
				verdict: measure.TransformVerdict{SmallestN: 5, Status: measure.Adequate, Limiting: "none"},
				window:  3, windowTop: 8, undecided: []int{6, 8},
			},
			[]string{"Smallest adequate n = 5", "smallest n searched", "2 n above it stayed undecided within 20000 replicates (6, 8)"},
		},
		{
			"oscillation",
			planView{
				steps:   steps([]int{5, 10, 20, 21, 22, 23}, []measure.Verdict{F, P, F, P, P, P}),
				verdict: measure.TransformVerdict{SmallestN: 21, Status: measure.Adequate, Limiting: "coverage"},
				window:  3, windowTop: 24, oscill: []int{20},
			},
			[]string{"Smallest adequate n = 21", "Not at n = 20", "not monotone in n: n = 20 failed above an earlier passing n"},
		},
		{
			"not reached",
			planView{
				steps:    withRows(steps([]int{5, 10, 20}, []measure.Verdict{F, F, F}), map[int]measure.Row{20: row(20, covOK, varHigh, biasBig)}),
				verdict:  measure.TransformVerdict{Status: measure.NotReached, Limiting: "variance"},
				largestN: 20,
			},
			[]string{"Not adequate at any n checked, up to 400", "At n = 20, the largest checked, the variance ratio is above its band: 1.250", "; and the standardised bias is above its band: 0.200"},
		},
		{
			"undecided",
			planView{
				steps:    withRows(steps([]int{5, 10}, []measure.Verdict{F, U}), map[int]measure.Row{10: row(10, covEdge, varOK, biasOK)}),
				verdict:  measure.TransformVerdict{Status: measure.StatusUnclear, Limiting: "coverage"},
				largestN: 10,
			},
			[]string{"Undecided", "At n = 10, the largest checked, no criterion fails, but coverage is not clearly inside its band: 0.925 (interval 0.920 to 0.930 crosses 0.925)", "20000 replicates per n could not settle it"},
		},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := planExplain(tc.v, spec)
			for _, w := range tc.want {
				if !strings.Contains(got, w) {
					t.Errorf("planExplain = %q\nwant it to contain %q", got, w)
				}
			}
		})
	}
}

// A plan that power decides states the recipe and, beside its answer,
// the delta method's own answer from the power formula.
func TestPlanPageStatesThePowerFormula(t *testing.T) {
	_, p := storedPlan(t, "plan-power")
	n, ok := p.DeltaPowerN["offset"]
	if !ok || n == 0 {
		t.Fatalf("plan-power holds no delta-method n: %v", p.DeltaPowerN)
	}
	dir := t.TempDir()
	if err := WritePlan(dir, p); err != nil {
		t.Fatal(err)
	}
	page, err := os.ReadFile(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}
	body := strings.Join(strings.Fields(parsePage(t, page).text.String()), " ")
	for _, must := range []string{
		"The delta method's power formula (reject_delta) reaches 0.8 at n = " + strconv.Itoa(n) + ".",
		"offset: t quantile with n − 1 df, standard error sd / √(n − 1); test of H0: offset = 0",
		"both deciding criteria pass",
	} {
		if !strings.Contains(body, must) {
			t.Errorf("plan page does not say %q", must)
		}
	}
}
