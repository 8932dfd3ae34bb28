package report

import (
	"bytes"
	"context"
	"math"
	"reflect"
	"strconv"
	"sync"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"

	"gonum.org/v1/plot/vg"
)

// The plan tests, like the run tests, plan small studies through sim
// rather than keep result files: a few thousand replicates per n, a
// fraction of a second each.

// planTwo has what the plan's page must cope with: a title and comment
// that need escaping, a name that is not a safe file name, two
// transforms, and answers with a window above them.
const planTwo = `# Test plan: a < b & "c" must reach the page escaped.
title = "Plan <and> search & co"
description = "Normal data; 100 / mean and log(mean)."
seed = 11

[plan]
n_min = 4
n_max = 120
max_replicates = 3000
batch = 1000

[model]
family = "normal"
mean = 14.0
sd = 3.5

[[transform]]
name = "litres / 100 km"
expr = "100 / mean"

[[transform]]
name = "log mean"
expr = "log(mean)"
`

// planNotReached stops below the n the exponential rate needs: every n
// fails on bias, so there is no answer, no window and no close-up.
const planNotReached = `title = "Not reached"
seed = 12

[plan]
n_min = 5
n_max = 20
max_replicates = 2000
batch = 1000

[model]
family = "exponential"
rate = 1.5

[[transform]]
name = "rate"
expr = "rate"
`

// planBinary is two groups of binary outcomes, whose coverage moves in
// steps as n grows.
const planBinary = `title = "Risk difference"
seed = 13

[plan]
n_min = 10
n_max = 300
max_replicates = 4000
batch = 1000

[[arm]]
name = "a"
family = "bernoulli"
p = 0.3

[[arm]]
name = "b"
family = "bernoulli"
p = 0.2

[[transform]]
name = "rd"
expr = "a.p - b.p"
`

type planCase struct {
	name   string
	src    string
	budget int64 // 0: no cap
}

// planCases are the plans every figure and page test runs over. The
// budget of the last is far below what planTwo needs, so the cap is hit.
var planCases = []planCase{
	{"two transforms", planTwo, 0},
	{"not reached", planNotReached, 0},
	{"binary arms", planBinary, 0},
	{"budget exhausted", planTwo, 15000},
}

type plannedStudy struct {
	s *study.Study
	p *plan.Result
}

var (
	plansMu sync.Mutex
	plans   = map[planCase]plannedStudy{}
)

// runPlan parses and plans a case once per test binary.
func runPlan(t testing.TB, c planCase) (*study.Study, *plan.Result) {
	t.Helper()
	plansMu.Lock()
	defer plansMu.Unlock()
	if ps, ok := plans[c]; ok {
		return ps.s, ps.p
	}
	s, err := study.Parse("plan.toml", []byte(c.src))
	if err != nil {
		t.Fatalf("parsing test plan: %v", err)
	}
	p, err := plan.Run(context.Background(), s, c.budget, runner.Options{Workers: 2})
	if err != nil {
		t.Fatalf("running test plan: %v", err)
	}
	plans[c] = plannedStudy{s, p}
	return s, p
}

// The cases must be what their names say, or the tests below do not
// test what they claim to.
func TestPlanCasesAreWhatTheySay(t *testing.T) {
	tests := []struct {
		c         planCase
		status    []measure.Status
		exhausted bool
	}{
		{planCases[0], []measure.Status{measure.Adequate, measure.Adequate}, false},
		{planCases[1], []measure.Status{measure.NotReached}, false},
		{planCases[2], []measure.Status{measure.Adequate}, false},
		{planCases[3], nil, true},
	}
	for _, tc := range tests {
		t.Run(tc.c.name, func(t *testing.T) {
			_, p := runPlan(t, tc.c)
			if p.Exhausted != tc.exhausted {
				t.Errorf("budget exhausted = %v, want %v", p.Exhausted, tc.exhausted)
			}
			for i, want := range tc.status {
				if got := p.Verdicts[i].Status; got != want {
					t.Errorf("transform %d: status %s, want %s", i, got, want)
				}
			}
		})
	}
}

func TestPlanFigures(t *testing.T) {
	for _, c := range planCases {
		t.Run(c.name, func(t *testing.T) {
			s, p := runPlan(t, c)
			figs, err := PlanFigures(s, p)
			if err != nil {
				t.Fatal(err)
			}
			if len(figs) != len(s.Transforms) {
				t.Fatalf("%d figures for %d transforms, want one each", len(figs), len(s.Transforms))
			}
			names := make([]string, len(s.Transforms))
			for i, tr := range s.Transforms {
				names[i] = tr.Name
			}
			stems := SafeNames(names)
			for i, f := range figs {
				if want := stems[i] + "-plan.png"; f.File != want || f.Transform != i || f.Kind != KindPlan {
					t.Errorf("figure %d: file %q transform %d kind %q, want %q, %d, %q", i, f.File, f.Transform, f.Kind, want, i, KindPlan)
				}
				// 160 pixels an inch, 10 inches wide; the panels alone
				// take 10 inches of height, the heading and key more.
				if f.Width != 1600 || f.Height <= 1600 {
					t.Errorf("%s reports %d×%d, want 1600 wide and more than 1600 tall", f.File, f.Width, f.Height)
				}
				checkPNG(t, f.File, f.PNG, f.Width, f.Height)
				if f.Alt == "" {
					t.Errorf("%s has no alt text", f.File)
				}
			}
		})
	}
}

// Figures are a pure function of the study and the plan.
func TestPlanFiguresDeterministic(t *testing.T) {
	s, p := runPlan(t, planCases[0])
	a, err := PlanFigures(s, p)
	if err != nil {
		t.Fatal(err)
	}
	b, err := PlanFigures(s, p)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a {
		if !bytes.Equal(a[i].PNG, b[i].PNG) {
			t.Errorf("%s differs between two renderings of the same plan", a[i].File)
		}
	}
}

// The three verdicts differ in shape, not colour alone, so a greyscale
// print or a colour-blind reader can tell them apart.
func TestVerdictLooksDifferInShape(t *testing.T) {
	vs := []measure.Verdict{measure.Pass, measure.Fail, measure.Unclear}
	for i, a := range vs {
		for _, b := range vs[i+1:] {
			la, lb := lookOf(a), lookOf(b)
			if reflect.TypeOf(la.glyph) == reflect.TypeOf(lb.glyph) {
				t.Errorf("%s and %s share the marker %T", a, b, la.glyph)
			}
			if la.color == lb.color {
				t.Errorf("%s and %s share a colour", a, b)
			}
		}
	}
}

func TestPlanTicks(t *testing.T) {
	// A search from 5 to 400 with its evaluations crowded at 130–147.
	ns := []int{5, 10, 20, 40, 80, 120, 130, 132, 133, 134, 135, 136, 137, 140, 147, 160}
	tests := []struct {
		name      string
		perDecade float64 // points
		must      []int
		labelled  []int // must carry a label
	}{
		{"roomy", 400, []int{133, 5, 400}, []int{133, 5, 10, 20, 40, 80}},
		{"tight", 120, []int{133, 5, 400}, []int{133, 5}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			pt := planTicks{ns: ns, must: tc.must, perDecade: vg.Points(tc.perDecade)}
			ticks := pt.Ticks(4, 420)
			st := textStyle(sans, fontSmall)
			labels := map[int]bool{}
			var placed []float64
			seen := map[int]bool{}
			for _, tk := range ticks {
				n := int(tk.Value)
				seen[n] = true
				if tk.Label == "" {
					continue
				}
				if tk.Label != strconv.Itoa(n) {
					t.Errorf("tick at %g labelled %q", tk.Value, tk.Label)
				}
				for _, q := range placed {
					apart := math.Abs(math.Log10(tk.Value/q)) * tc.perDecade
					need := float64(st.Width(tk.Label)+st.Width(strconv.Itoa(int(q))))/2 + 5
					if apart < need-1e-9 {
						t.Errorf("labels %d and %g only %.1f points apart, need %.1f", n, q, apart, need)
					}
				}
				placed = append(placed, tk.Value)
				labels[n] = true
			}
			for _, n := range tc.labelled {
				if !labels[n] {
					t.Errorf("%d is not labelled; labels %v", n, labels)
				}
			}
			for _, n := range ns {
				if !seen[n] {
					t.Errorf("evaluated n = %d has no tick", n)
				}
			}
		})
	}
}

func TestZoomTicks(t *testing.T) {
	tests := []struct {
		lo, hi float64
		answer int
	}{
		{131.4, 147.6, 133},
		{25.4, 30.6, 27},
		{189.4, 211.6, 191},
	}
	for _, tc := range tests {
		ticks := zoomTicks{answer: tc.answer}.Ticks(tc.lo, tc.hi)
		var labelled []float64
		minor := 0
		for _, tk := range ticks {
			if tk.Value != math.Round(tk.Value) {
				t.Errorf("tick at %g is not a whole number", tk.Value)
			}
			if tk.Label != "" {
				labelled = append(labelled, tk.Value)
			} else {
				minor++
			}
		}
		if len(labelled) == 0 || labelled[0] != float64(tc.answer) {
			t.Errorf("[%g, %g]: answer %d not labelled first: %v", tc.lo, tc.hi, tc.answer, labelled)
		}
		// A round label gives way to the answer's when it is nearer than
		// half the spacing of the round labels.
		step := math.Inf(1)
		for i := 2; i < len(labelled); i++ {
			step = math.Min(step, labelled[i]-labelled[i-1])
		}
		for _, v := range labelled[1:] {
			if math.Abs(v-float64(tc.answer)) < step/2 {
				t.Errorf("[%g, %g]: label %g crowds the answer's (round labels %g apart)", tc.lo, tc.hi, v, step)
			}
		}
		if want := int(math.Floor(tc.hi)-math.Ceil(tc.lo)) + 1; len(ticks) != want {
			t.Errorf("[%g, %g]: %d ticks, want one per integer (%d)", tc.lo, tc.hi, len(ticks), want)
		}
	}
}

// steps builds evaluations at the given n with the given verdicts.
func steps(ns []int, vs []measure.Verdict) []plan.Step {
	out := make([]plan.Step, len(ns))
	for i, n := range ns {
		out[i] = plan.Step{Transform: "t", Step: i + 1, N: n, Replicates: 1000, Row: verdictRow(n, vs[i])}
	}
	return out
}

func TestZoomRange(t *testing.T) {
	P, F := measure.Pass, measure.Fail
	tests := []struct {
		name     string
		ns       []int
		vs       []measure.Verdict
		answer   int
		window   int
		top      int
		lo, hi   int
		wantZoom bool
	}{
		{"bisected to the integer below", []int{5, 10, 20, 15, 12, 13, 14, 16, 17}, []measure.Verdict{F, F, P, P, F, P, P, P, P}, 13, 3, 16, 12, 16, true},
		{"answer at the bottom of the range", []int{5, 6, 7, 8}, []measure.Verdict{P, P, P, P}, 5, 3, 8, 4, 9, true},
		{"nearest evaluation below is far", []int{5, 10, 20, 40, 41, 42, 43}, []measure.Verdict{F, F, F, P, P, P, P}, 40, 3, 43, 39, 43, true},
		{"no answer", []int{5, 10}, []measure.Verdict{F, F}, 0, 0, 0, 0, 0, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			v := planView{steps: steps(tc.ns, tc.vs), window: tc.window, windowTop: tc.top,
				verdict: measure.TransformVerdict{SmallestN: tc.answer, Status: measure.Adequate}}
			lo, hi, ok := v.zoomRange()
			if ok != tc.wantZoom || ok && (lo != tc.lo || hi != tc.hi) {
				t.Errorf("zoomRange = %d, %d, %v; want %d, %d, %v", lo, hi, ok, tc.lo, tc.hi, tc.wantZoom)
			}
		})
	}
}

// verdictRow is a row at n whose overall verdict is v, every measure missing.
func verdictRow(n int, v measure.Verdict) measure.Row {
	r := measure.NewRow("t", n)
	r.Verdict = v
	return r
}
