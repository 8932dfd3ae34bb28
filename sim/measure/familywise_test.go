package measure_test

import (
	"context"
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study/studytest"
)

// The family-wise guarantee, checked by simulation: many independent
// studies whose measures' true values are known exactly, and the share of
// studies in which any interval behind an answer misses its true value.
// Bonferroni says that share is at most 1 − confidence.
//
// Bernoulli(p), transform p, p̂ = K/n: Var p̂ = p(1 − p)/n exactly, which
// is also the delta-method variance at the truth, so the true variance
// ratio is 1; p̂ is unbiased, so the true standardised bias is 0 (both
// derived); the true Wald coverage is Σ Binom(k; n, p)·1[p in
// p̂ ± z·√(p̂(1 − p̂)/n)], computed with gonum's distuv.Binomial.
func TestFamilyWiseGuarantee(t *testing.T) {
	const (
		p       = 0.3
		studies = 400
		level   = 0.95
	)
	sizes := []int{20, 40, 80, 160}
	zWald := math.Sqrt2 * math.Erfinv(level)
	trueCoverage := map[int]float64{}
	for _, n := range sizes {
		b := distuv.Binomial{N: float64(n), P: p}
		for k := 0; k <= n; k++ {
			ph := float64(k) / float64(n)
			half := zWald * math.Sqrt(ph*(1-ph)/float64(n))
			if ph-half <= p && p <= ph+half {
				trueCoverage[n] += b.Prob(float64(k))
			}
		}
	}
	truth := func(cr *measure.Criterion, n int) float64 {
		switch cr {
		case measure.CoverageCheck:
			return trueCoverage[n]
		case measure.VarianceCheck:
			return 1
		case measure.BiasCheck:
			return 0
		}
		t.Fatalf("no exact value for criterion %s: extend this test", cr.Name)
		return 0
	}
	// missed reports whether any interval of the study misses its truth,
	// with the intervals at quantile z.
	missed := func(res *runner.Result, z float64) bool {
		for ni, n := range sizes {
			row := measure.SummarizeCell(res, 0, ni, z)
			// The guarantee covers the deciding criteria: the default three.
			for _, cr := range measure.Deciding(res.Study.Criteria) {
				ch, v := row.Check(cr), truth(cr, n)
				if !(ch.Low <= v && v <= ch.High) {
					return true
				}
			}
		}
		return false
	}
	var misses, perDecisionMisses int
	var d measure.Decisions
	for seed := 1; seed <= studies; seed++ {
		s := studytest.Parse(t, fmt.Sprintf(`seed = %d
replicates = 1000
sample_sizes = [20, 40, 80, 160]
[model]
family = "bernoulli"
p = %v
[[transform]]
name = "p"
expr = "p"
`, seed, p))
		res, err := runner.Run(context.Background(), s, runner.Options{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		d = measure.GridDecisions(res.Study)
		if missed(res, d.Z) {
			misses++
		}
		if missed(res, 1.959963984540054) {
			perDecisionMisses++
		}
	}
	rate := float64(misses) / studies
	mcse := math.Sqrt(0.05 * 0.95 / studies)
	t.Logf("family-wise miss rate %.4f (MCSE %.4f at 0.05) with z = %.3f over %d decisions; %.4f with each at 95%%",
		rate, mcse, d.Z, d.Count, float64(perDecisionMisses)/studies)
	if rate > (1-d.Confidence)+3*mcse {
		t.Errorf("%d of %d studies had an interval missing its true value: rate %.4f, more than 1 − confidence = %.2f by over 3 MCSE",
			misses, studies, rate, 1-d.Confidence)
	}
	// Without the correction the rate is far above 1 − confidence, so the
	// check above is not passing for want of power.
	if float64(perDecisionMisses)/studies < (1-d.Confidence)+3*mcse {
		t.Errorf("per-decision 95%% intervals missed in only %d of %d studies: the study cannot tell the correction from none", perDecisionMisses, studies)
	}
}
