package runner

import (
	"encoding/json"
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

// A tree node keeps its mean width as its ninth field, round-trips it,
// and joins it weighted by the defined replicates like the plug-in
// variance; a record without it is refused.
func TestNodeRecordWidth(t *testing.T) {
	nd := Node{Lo: 4, Level: 2, N: 1000, Mean: 1.5, M2: 2, M3: 0.1, M4: 9, PluginVar: 0.25, Width: 0.75}
	raw, err := json.Marshal(nd)
	if err != nil {
		t.Fatal(err)
	}
	var back Node
	if err := json.Unmarshal(raw, &back); err != nil || back != nd {
		t.Errorf("round trip of %s: %+v, %v", raw, back, err)
	}
	var old Node
	if err := json.Unmarshal([]byte(`[4,2,1000,1.5,2,0.1,9,0.25]`), &old); err == nil {
		t.Errorf("an 8-field record (no width) was accepted as %+v", old)
	}
	left := Node{Lo: 0, Level: 0, N: 300, Mean: 1, M2: 1, Width: 1}
	right := Node{Lo: 1, Level: 0, N: 100, Mean: 1, M2: 1, Width: 3}
	// (300·1 + 100·3)/400 = 1.5, exactly representable.
	if got := joinNodes(left, right).Width; got != 1.5 {
		t.Errorf("joined width %v, want 1.5", got)
	}
}
