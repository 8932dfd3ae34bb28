package measure_test

import (
	"context"
	"math"
	"strings"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study/studytest"
)

// 1/Ȳ of normal data has no finite moments (Ȳ has positive density at 0;
// references: derived), so at small n the run must flag heavy tails and
// must not pass the variance criterion by luck.
func TestReciprocalOfNormalMeanIsFlaggedHeavyTailed(t *testing.T) {
	s := studytest.Parse(t, `seed = 4
replicates = 20000
sample_sizes = [4, 16]
[model]
family = "normal"
mean = 1.0
sd = 2.0
[[transform]]
name = "inverse"
expr = "1 / mean"
`)
	res, err := runner.Run(context.Background(), s, runner.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	rows := measure.Summarize(res)
	for _, row := range rows {
		if row.Check(measure.VarianceCheck).Verdict == measure.Pass {
			t.Errorf("n=%d: the variance criterion passed for an estimator without a variance", row.N)
		}
		// The kurtosis-aware MCSE must widen with the tail: far beyond
		// the normal-theory sqrt(2/(R−1)) relative error.
		if rel := row.Get(measure.EmpVarMCSE) / row.Get(measure.EmpVar); rel < 10*math.Sqrt(2.0/float64(row.Count(measure.Replicates)-1)) {
			t.Errorf("n=%d: relative MCSE of emp_var %.3g, not widened by the heavy tail", row.N, rel)
		}
	}
	warned := false
	for _, w := range measure.Warnings(res, rows) {
		warned = warned || strings.Contains(w, "heavy tails")
	}
	if !warned {
		t.Errorf("no heavy-tail warning: %v", measure.Warnings(res, rows))
	}
}
