package report

import (
	"context"
	"sync"
	"testing"

	"deltaprobe/sim/plan"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// The tests run real, small studies through sim rather than keep a
// result file: normal data and a few thousand replicates take well under
// a second, and the report is then checked against what sim produces now.

// studyFuel is small but has what the page must cope with: a title and
// comment that need escaping, a name that is not a safe file name, two
// names that meet once made safe, and an estimate that is adequate only
// from some n on.
const studyFuel = `# Test study: a < b & "c" must reach the page escaped.
title = "Reciprocal <and> log & co"
description = "Normal data; 100 / mean and log(mean)."
seed = 42
replicates = 2000
sample_sizes = [5, 10, 20, 40, 80]
level = 0.95

` + fuelModel + `
[[transform]]
name = "litres _ 100 km"
expr = "log(mean)"
`

// fuelModel is the model of studyFuel and planTwo, and their first
// transform.
const fuelModel = `[model]
family = "normal"
mean = 14.0
sd = 3.5

[[transform]]
name = "litres / 100 km"
expr = "100 / mean"
`

// studyHeavy has a reciprocal of a mean near zero: heavy tails, values
// beyond the pivot histogram's range, huge variance ratios.
const studyHeavy = `title = "Heavy tails"
seed = 7
replicates = 1000
sample_sizes = [4, 6, 8, 11, 16, 23, 32, 45, 64, 91, 128, 181, 256, 362]
level = 0.9

[model]
family = "normal"
mean = 0.6
sd = 1.0

[[transform]]
name = "1/mean"
expr = "1 / mean"
`

// studyOne has a single sample size: the smallest layout.
const studyOne = `title = "One n"
seed = 3
replicates = 500
sample_sizes = [30]

[model]
family = "normal"
mean = 2.0
sd = 1.0

[[transform]]
name = "sq"
expr = "mean^2"
`

// once holds what a test binary computes once per key.
type once[K comparable, V any] struct {
	mu   sync.Mutex
	done map[K]V
}

// get returns what compute gave for key, calling it the first time only.
func (o *once[K, V]) get(key K, compute func() V) V {
	o.mu.Lock()
	defer o.mu.Unlock()
	if v, ok := o.done[key]; ok {
		return v
	}
	if o.done == nil {
		o.done = map[K]V{}
	}
	v := compute()
	o.done[key] = v
	return v
}

var results once[string, *runner.Result]

// runStudy parses and runs src once per test binary.
func runStudy(t testing.TB, src string) *runner.Result {
	t.Helper()
	return results.get(src, func() *runner.Result {
		s, err := study.Parse("test.toml", []byte(src))
		if err != nil {
			t.Fatalf("parsing test study: %v", err)
		}
		r, err := runner.Run(context.Background(), s, runner.Options{Workers: 2})
		if err != nil {
			t.Fatalf("running test study: %v", err)
		}
		return r
	})
}

// The plans are small studies too, planned through sim: a few thousand
// replicates per n, a fraction of a second each.

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

` + fuelModel + `
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

var plans once[planCase, plannedStudy]

// runPlan parses and plans a case once per test binary.
func runPlan(t testing.TB, c planCase) (*study.Study, *plan.Result) {
	t.Helper()
	ps := plans.get(c, func() plannedStudy {
		s, err := study.Parse("plan.toml", []byte(c.src))
		if err != nil {
			t.Fatalf("parsing test plan: %v", err)
		}
		p, err := plan.Run(context.Background(), s, c.budget, runner.Options{Workers: 2})
		if err != nil {
			t.Fatalf("running test plan: %v", err)
		}
		return plannedStudy{s, p}
	})
	return ps.s, ps.p
}

// renderTwice renders the same thing twice, failing the test on an error.
func renderTwice[T any](t *testing.T, render func() (T, error)) (T, T) {
	t.Helper()
	a, err := render()
	if err != nil {
		t.Fatal(err)
	}
	b, err := render()
	if err != nil {
		t.Fatal(err)
	}
	return a, b
}
