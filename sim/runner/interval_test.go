package runner

import (
	"testing"

	"deltaprobe/sim/study/studytest"
)

// intervalStudy uses every new piece of the per-replicate interval: a t
// quantile whose df reads the arm sizes, an analyst's se of the
// parameters and sizes, a null, and the zero-cell correction on two
// count arms.
const intervalStudy = `seed = 12
replicates = 1000
sample_sizes = [10, 40]

[[arm]]
name = "usual"
family = "bernoulli"
p = 0.04

[[arm]]
name = "routine"
family = "poisson"
mean = 0.2

[interval]
quantile = "t"
df = "usual.n + routine.n - 2"
zero_cells = "add_half"

[[transform]]
name = "log_ratio"
expr = "log(routine.mean) - log(usual.p)"
null = 0

[[transform]]
name = "logit"
expr = "logit(usual.p)"
se = "1 / sqrt(usual.n * usual.p * (1 - usual.p))"
null = -2
`

// A replicate with the t quantile, the analyst's se, the test and the
// zero-cell correction allocates nothing.
func TestIntervalReplicateAllocatesNothing(t *testing.T) {
	s := studytest.Parse(t, intervalStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 0, block: 0, count: 10})
	if allocs := testing.AllocsPerRun(200, w.replicate); allocs != 0 {
		t.Errorf("a replicate allocates %v times, want 0", allocs)
	}
}

// BenchmarkReplicateInterval times one replicate of intervalStudy at
// n = 40, beside BenchmarkReplicate's plain Wald interval.
func BenchmarkReplicateInterval(b *testing.B) {
	s := studytest.Parse(b, intervalStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 1, block: 0, count: 1})
	b.ReportAllocs()
	for b.Loop() {
		w.replicate()
	}
}
