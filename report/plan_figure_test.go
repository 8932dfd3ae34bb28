package report

import (
	"bytes"
	"math"
	"reflect"
	"strconv"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"

	"gonum.org/v1/plot/vg"
)

// The cases must be what their names say, or the tests below do not
// test what they claim to.
func TestPlanCasesAreWhatTheySay(t *testing.T) {
	tests := []struct {
		c         planCase
		status    []measure.Status
		exhausted bool
	}{
		{planCases[0], []measure.Status{measure.StatusUnclear, measure.StatusUnclear}, false},
		{planCases[1], []measure.Status{measure.NotReached}, false},
		{planCases[2], []measure.Status{measure.StatusUnclear}, false},
		{planCases[3], nil, true},
		{planCases[4], []measure.Status{measure.Adequate}, false},
		{planCases[5], []measure.Status{measure.StatusUnclear}, false},
	}
	for _, tc := range tests {
		t.Run(tc.c.name, func(t *testing.T) {
			_, p := storedPlan(t, tc.c.dir)
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
			s, _ := storedPlan(t, c.dir)
			figs := storedPlanFigures(t, c.dir)
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
				checkPNG(t, f.File, f.Data(FormatPNG), f.Width, f.Height)
				if f.Alt == "" {
					t.Errorf("%s has no alt text", f.File)
				}
			}
		})
	}
}

// Figures are a pure function of the study and the plan. The first
// rendering is the one TestPlanFigures checks; TestWritePlan compares a
// third with it.
func TestPlanFiguresDeterministic(t *testing.T) {
	_, p := storedPlan(t, planCases[0].dir)
	a := storedPlanFigures(t, planCases[0].dir)
	b, err := PlanFigures(p)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a {
		if !bytes.Equal(a[i].Data(FormatPNG), b[i].Data(FormatPNG)) {
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
			v := planView{steps: steps(tc.ns, tc.vs), window: tc.window, windowTop: tc.top, answer: tc.answer,
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
