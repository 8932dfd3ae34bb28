package runner

import (
	"encoding/json"
	"math"
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

// A block record keeps its mean width as an eighth field; a 7-field
// record, written before the width was kept, reads with an unknown (NaN)
// width rather than a false 0, and the rest as before.
func TestBlockRecordWidth(t *testing.T) {
	b := BlockStat{Block: 3, N: 1000, Mean: 1.5, M2: 2, M3: 0.1, M4: 9, PluginVar: 0.25, Width: 0.75}
	raw, err := json.Marshal(b)
	if err != nil {
		t.Fatal(err)
	}
	var back BlockStat
	if err := json.Unmarshal(raw, &back); err != nil || back != b {
		t.Errorf("round trip of %s: %+v, %v", raw, back, err)
	}
	var old BlockStat
	if err := json.Unmarshal([]byte(`[3,1000,1.5,2,0.1,9,0.25]`), &old); err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(old.Width) || old.PluginVar != 0.25 || old.N != 1000 {
		t.Errorf("7-field record read as %+v", old)
	}
}
