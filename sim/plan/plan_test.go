package plan

import (
	"context"
	"fmt"
	"math"
	"slices"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
	"deltaprobe/sim/study/studytest"

	"gonum.org/v1/gonum/stat/distuv"
)

func runPlan(t *testing.T, src string) (*study.Study, *Result) {
	t.Helper()
	s := studytest.Parse(t, src)
	p, err := Run(context.Background(), s, 0, runner.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	return s, p
}

// exponentialExact holds exact finite-sample properties of λ̂ = 1/Ȳ for
// exponential data (derived: nȲ ~ Gamma(n, λ), so λ̂ = n/S is
// inverse-gamma with shape n and scale nλ).
type exponentialExact struct{ n, lambda float64 }

// varRatio is delta_var/Var λ̂ = (λ²/n) / (n²λ²/((n−1)²(n−2))).
func (e exponentialExact) varRatio() float64 {
	n := e.n
	return (n - 1) * (n - 1) * (n - 2) / (n * n * n)
}

// stdBias is (E λ̂ − λ)/sd_delta = (λ/(n−1)) / (λ/√n).
func (e exponentialExact) stdBias() float64 { return math.Sqrt(e.n) / (e.n - 1) }

// coverage of λ̂ ± z·λ̂/√n: it covers λ iff n(1 − z/√n)/λ ≤ S ≤ n(1 + z/√n)/λ
// with S ~ Gamma(n, λ) (derived; CDF from gonum distuv.Gamma).
func (e exponentialExact) coverage(z float64) float64 {
	g := distuv.Gamma{Alpha: e.n, Beta: e.lambda}
	r := z / math.Sqrt(e.n)
	lo := 0.0
	if r < 1 {
		lo = g.CDF(e.n * (1 - r) / e.lambda)
	}
	return g.CDF(e.n*(1+r)/e.lambda) - lo
}

// exKurtosis of the inverse-gamma with shape n: 6(5n − 11)/((n − 3)(n − 4))
// (standard moments of the inverse-gamma, from memory; n > 4).
func (e exponentialExact) exKurtosis() float64 {
	n := e.n
	return 6 * (5*n - 11) / ((n - 3) * (n - 4))
}

// The plan's bracket for the exponential rate holds the exact answer:
// the smallest n from which every exact measure lies inside its band at
// every larger n searched. And every decision agrees with exact theory
// where theory is clear of the band by the interval's half-width.
func TestPlanExponentialAgainstExactTheory(t *testing.T) {
	const R = 20000
	s, p := runPlan(t, fmt.Sprintf(`seed = 101
[plan]
n_min = 6
n_max = 400
max_replicates = %d
window = 5
[model]
family = "exponential"
rate = 1.5
[[transform]]
name = "rate"
expr = "rate"
`, R))
	v := p.Verdicts[0]
	if v.High == 0 {
		t.Fatalf("no upper bound (status %s); steps %+v", v.Status, p.Steps)
	}
	z := math.Sqrt2 * math.Erfinv(s.Level)
	crit := s.Criteria
	// clear reports whether every measure is inside its band by the margin
	// (+1), or some measure outside by the margin (−1), or neither (0).
	clear := func(n int) int {
		e := exponentialExact{float64(n), 1.5}
		c := e.coverage(z)
		// Monte Carlo standard errors at R replicates: binomial for the
		// coverage; sqrt((κ − 1)/R)·ratio for the variance ratio, κ the
		// kurtosis (Var s² ≈ σ⁴(κ − 1)/R); 1/√R for the standardised bias
		// times sqrt(Var λ̂/delta_var).
		seC := math.Sqrt(c * (1 - c) / R)
		seV := e.varRatio() * math.Sqrt((e.exKurtosis()+2)/R)
		seB := math.Sqrt(1/e.varRatio()) / math.Sqrt(R)
		m := p.Z
		inside := c-m*seC >= crit.Coverage[0] && c+m*seC <= crit.Coverage[1] &&
			e.varRatio()-m*seV >= crit.VarRatio[0] && e.varRatio()+m*seV <= crit.VarRatio[1] &&
			e.stdBias()+m*seB <= crit.StdBias
		outside := c+m*seC < crit.Coverage[0] || c-m*seC > crit.Coverage[1] ||
			e.varRatio()+m*seV < crit.VarRatio[0] || e.varRatio()-m*seV > crit.VarRatio[1] ||
			e.stdBias()-m*seB > crit.StdBias
		switch {
		case inside:
			return 1
		case outside:
			return -1
		}
		return 0
	}
	// The exact answer: every exact measure inside its band from here on.
	inside := func(n int) bool {
		e := exponentialExact{float64(n), 1.5}
		c := e.coverage(z)
		return c >= crit.Coverage[0] && c <= crit.Coverage[1] &&
			e.varRatio() >= crit.VarRatio[0] && e.varRatio() <= crit.VarRatio[1] &&
			math.Abs(e.stdBias()) <= crit.StdBias
	}
	exact := 0
	for n := 400; n >= 6 && inside(n); n-- {
		exact = n
	}
	t.Logf("plan: %s in [%d, %d]; exact answer %d; %d evaluations, %d replicates", v.Status, v.Low, v.High, exact, len(p.Steps), p.Total)
	if exact == 0 {
		t.Fatal("no exact answer in [6, 400]: the study no longer tests anything")
	}
	if exact < v.Low || exact > v.High {
		t.Errorf("exact answer %d outside the plan's bracket [%d, %d]", exact, v.Low, v.High)
	}
	if v.Status == measure.Adequate && v.SmallestN != exact {
		t.Errorf("plan says adequate from %d, exact answer %d", v.SmallestN, exact)
	}
	// Every decided step agrees with exact theory where theory is clear.
	for _, st := range p.Steps {
		c := clear(st.N)
		if (st.Row.Verdict == measure.Pass && c == -1) || (st.Row.Verdict == measure.Fail && c == 1) {
			t.Errorf("n=%d: plan says %s, exact theory clearly says otherwise", st.N, st.Row.Verdict)
		}
	}
}

// exactWaldCoverage enumerates the binomial: Σ_k P(K = k)·1[p in
// p̂ ± z·sqrt(p̂(1 − p̂)/n)] (Brown, Cai & DasGupta 2001, eq. 1; pmf from
// gonum distuv.Binomial).
func exactWaldCoverage(n int, p, z float64) float64 {
	b := distuv.Binomial{N: float64(n), P: p}
	var c float64
	for k := 0; k <= n; k++ {
		ph := float64(k) / float64(n)
		se := math.Sqrt(ph * (1 - ph) / float64(n))
		if ph-z*se <= p && p <= ph+z*se {
			c += b.Prob(float64(k))
		}
	}
	return c
}

// Coverage of the Wald interval for a proportion oscillates in n; the
// plan must not stop at the first passing n when a larger one fails.
func TestPlanIsNotFooledByOscillatingCoverage(t *testing.T) {
	const R = 20000
	s, p := runPlan(t, fmt.Sprintf(`seed = 202
[plan]
n_min = 10
n_max = 300
max_replicates = %d
[model]
family = "bernoulli"
p = 0.1
[[transform]]
name = "p"
expr = "p"
`, R))
	z := math.Sqrt2 * math.Erfinv(s.Level)
	band := s.Criteria.Coverage
	firstPass := 0
	for n := 10; n <= 300 && firstPass == 0; n++ {
		if c := exactWaldCoverage(n, 0.1, z); c >= band[0] && c <= band[1] {
			firstPass = n
		}
	}
	v := p.Verdicts[0]
	t.Logf("first exactly passing n %d; plan %s in [%d, %d], window +%d, oscillations %v", firstPass, v.Status, v.Low, v.High, p.Window[0], p.Oscillations[0])
	if v.High == 0 {
		t.Fatalf("status %s with no upper bound; the search found no confirmed pass", v.Status)
	}
	if v.Low <= firstPass {
		t.Errorf("plan's bracket starts at %d, no later than the first exactly passing n %d, although coverage fails again above it", v.Low, firstPass)
	}
	if len(p.Oscillations[0]) == 0 {
		t.Errorf("the plan found no oscillation, though exact coverage oscillates above n = %d", firstPass)
	}
	// Within the window the plan vouches for, no n may clearly fail.
	for m := v.High; m <= v.High+p.Window[0]; m++ {
		c := exactWaldCoverage(m, 0.1, z)
		se := math.Sqrt(c * (1 - c) / R)
		if c+p.Z*se < band[0] || c-p.Z*se > band[1] {
			t.Errorf("n=%d inside the confirmed window has exact coverage %.4f, clearly outside %v", m, c, band)
		}
	}
	// Each decided coverage check agrees with the exact coverage where
	// the exact value is clear of the band by the per-look margin.
	for _, st := range p.Steps {
		c := exactWaldCoverage(st.N, 0.1, z)
		se := math.Sqrt(c * (1 - c) / R)
		switch st.Row.Check(measure.CoverageCheck).Verdict {
		case measure.Pass:
			if c+p.Z*se < band[0] || c-p.Z*se > band[1] {
				t.Errorf("n=%d: coverage passed, exact %.4f is clearly outside", st.N, c)
			}
		case measure.Fail:
			if c-p.Z*se >= band[0] && c+p.Z*se <= band[1] {
				t.Errorf("n=%d: coverage failed, exact %.4f is clearly inside", st.N, c)
			}
		}
	}
}

func TestPlanIsDeterministic(t *testing.T) {
	src := `seed = 5
[plan]
n_min = 10
n_max = 200
max_replicates = 6000
batch = 2000
[model]
family = "bernoulli"
p = 0.2
[[transform]]
name = "logit"
expr = "logit(p)"
`
	_, a := runPlan(t, src)
	s := studytest.Parse(t, src)
	b, err := Run(context.Background(), s, 0, runner.Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(a.Steps) != len(b.Steps) {
		t.Fatalf("%d steps with 2 workers, %d with 1", len(a.Steps), len(b.Steps))
	}
	for i := range a.Steps {
		x, y := a.Steps[i], b.Steps[i]
		if x.N != y.N || x.Replicates != y.Replicates || x.Row.Get(measure.Coverage) != y.Row.Get(measure.Coverage) || x.Row.Get(measure.VarRatio) != y.Row.Get(measure.VarRatio) || x.Row.Verdict != y.Row.Verdict {
			t.Errorf("step %d differs: %+v vs %+v", i, x, y)
		}
	}
}

// A plan's blocks are a run's blocks: a later run at the same n and seed
// agrees with the plan's numbers there.
func TestPlanAgreesWithRun(t *testing.T) {
	src := `seed = 8
[plan]
n_min = 10
n_max = 80
max_replicates = 4000
batch = 2000
[model]
family = "normal"
mean = 4.0
sd = 1.0
[[transform]]
name = "inverse"
expr = "1 / mean"
`
	s, p := runPlan(t, src)
	st := p.Steps[0]
	one := *s
	one.SampleSizes = []int{st.N}
	one.Replicates = int(st.Replicates)
	res, err := runner.Run(context.Background(), &one, runner.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	row := measure.Summarize(res)[0]
	if row.Get(measure.Coverage) != st.Row.Get(measure.Coverage) || row.Get(measure.Mean) != st.Row.Get(measure.Mean) || row.Get(measure.EmpVar) != st.Row.Get(measure.EmpVar) {
		t.Errorf("run at n=%d: coverage %v mean %v var %v; plan: %v %v %v", st.N, row.Get(measure.Coverage), row.Get(measure.Mean), row.Get(measure.EmpVar), st.Row.Get(measure.Coverage), st.Row.Get(measure.Mean), st.Row.Get(measure.EmpVar))
	}
}

func TestPlanBudgetLeavesUndecided(t *testing.T) {
	s := studytest.Parse(t, `seed = 5
[plan]
n_min = 10
n_max = 400
max_replicates = 20000
[model]
family = "exponential"
rate = 1.0
[[transform]]
name = "rate"
expr = "rate"
`)
	p, err := Run(context.Background(), s, 5000, runner.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if !p.Exhausted || p.Total > 5000 {
		t.Errorf("budget 5000: exhausted %v, total %d", p.Exhausted, p.Total)
	}
	if p.Verdicts[0].Status == measure.Adequate {
		t.Errorf("a budget of 5000 replicates cannot establish adequacy here, got %+v", p.Verdicts[0])
	}
}

// A pass whose window the budget left unchecked is not an answer.
func TestPlanBudgetCutWindowIsUnclear(t *testing.T) {
	s := studytest.Parse(t, `seed = 5
[plan]
n_min = 100
n_max = 400
max_replicates = 8000
batch = 4000
[model]
family = "normal"
mean = 5.0
sd = 1.0
[[transform]]
name = "mean"
expr = "mean"
`)
	// The first look at n_min passes (the mean of normal data is exact);
	// a budget of one look leaves the window unchecked.
	p, err := Run(context.Background(), s, 4000, runner.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	// The case arises only if that first look passes, which seed 5 gives
	// today; a change to the simulation may take it away, and the test
	// must then say so rather than pass without testing anything.
	if got := p.Steps[0].Row.Verdict; got != measure.Pass {
		t.Fatalf("fixed-seed precondition no longer holds: with seed 5 the first look at n = 100 gave %s, not pass, so the window is never reached; change the seed in this test's study to one whose first look passes", got)
	}
	if v := p.Verdicts[0]; v.Status != measure.StatusUnclear || v.SmallestN != 0 {
		t.Errorf("budget cut before the window: got %s at %d, want unclear", v.Status, v.SmallestN)
	}
}

// The plan's verdicts.csv agrees with itself: when adequate, the limiting
// criterion's own n is smallest_n and no criterion needs more.
func TestPlanVerdictsAreConsistent(t *testing.T) {
	adequate := 0
	// Only adequate verdicts are checked for their limiting criterion;
	// with these fixed seeds at least one is, and if none were, the test
	// would check that of nothing, so it says so below.
	defer func() {
		if adequate == 0 && !t.Failed() {
			t.Fatalf("fixed-seed precondition no longer holds: no transform of these studies is adequate, so the limiting criterion is checked for none; change a seed or widen an n range")
		}
	}()
	for _, src := range []string{`seed = 6
[plan]
n_min = 5
n_max = 400
max_replicates = 20000
[model]
family = "exponential"
rate = 0.4
[[transform]]
name = "rate"
expr = "rate"
[[transform]]
name = "log_rate"
expr = "log(rate)"
`, `seed = 7
[plan]
n_min = 10
n_max = 300
max_replicates = 10000
[model]
family = "bernoulli"
p = 0.5
[[transform]]
name = "p"
expr = "p"
`} {
		_, p := runPlan(t, src)
		for _, v := range p.Verdicts {
			// Every verdict: a bracket in order, smallest_n only when it closes.
			if v.High > 0 && v.Low > v.High {
				t.Errorf("%s: bracket [%d, %d] out of order", v.Transform, v.Low, v.High)
			}
			if (v.Status == measure.Adequate) != (v.SmallestN > 0) || (v.SmallestN > 0 && (v.Low != v.SmallestN || v.High != v.SmallestN)) {
				t.Errorf("%s: %s with smallest_n %d and bracket [%d, %d]", v.Transform, v.Status, v.SmallestN, v.Low, v.High)
			}
		}
		adequate += len(slices.DeleteFunc(slices.Clone(p.Verdicts), func(v measure.TransformVerdict) bool { return v.Status != measure.Adequate }))
		for i, v := range p.Verdicts {
			if v.Status != measure.Adequate {
				continue
			}
			for c, n := range v.PerCriterion {
				if !p.Study.Criteria.Decides(measure.Criteria()[c].Key) {
					continue // reported only: it need not pass
				}
				// A criterion's own bracket may stay open (0) below the
				// answer, but may not close above it.
				if n > v.SmallestN {
					t.Errorf("%s: %s alone from %d, but adequate from %d", v.Transform, measure.Criteria()[c].Name, n, v.SmallestN)
				}
			}
			if v.Limiting != "none" {
				c := slices.IndexFunc(measure.Criteria(), func(c *measure.Criterion) bool { return c.Name == v.Limiting })
				if c < 0 || v.PerCriterion[c] != v.SmallestN {
					t.Errorf("%s: limiting %q with n %v, smallest_n %d", v.Transform, v.Limiting, v.PerCriterion, v.SmallestN)
				}
			}
			// Every failure above the first pass is reported.
			first := 0
			for _, st := range p.Steps {
				if st.Transform == v.Transform && st.Row.Verdict == measure.Pass && (first == 0 || st.N < first) {
					first = st.N
				}
			}
			for _, st := range p.Steps {
				if st.Transform == v.Transform && st.N > first && st.Row.Verdict == measure.Fail && !slices.Contains(p.Oscillations[i], st.N) {
					t.Errorf("%s: failure at n=%d above the first pass %d not reported", v.Transform, st.N, first)
				}
			}
		}
	}
}
