package runner

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

func closeRel(a, b, tol float64) bool {
	return math.Abs(a-b) <= tol*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// Streaming and merged moments agree with gonum's two-pass stat
// functions, an independent implementation.
func TestMomentsAgainstGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	samples := map[string][]float64{}
	var skewed, shifted, small []float64
	for i := 0; i < 5000; i++ {
		skewed = append(skewed, rng.ExpFloat64())
		shifted = append(shifted, 1e6+rng.NormFloat64())
	}
	small = []float64{1, 2, 4}
	samples["exponential"] = skewed
	samples["large offset"] = shifted
	samples["three values"] = small
	for name, xs := range samples {
		for _, split := range []int{0, 1, len(xs) / 3, len(xs) - 1} {
			// Merging the moments of a split equals the moments of the
			// whole; both agree with gonum.
			a, b, whole := momentsOf(xs[:split]), momentsOf(xs[split:]), momentsOf(xs)
			a.Merge(b)
			n := float64(len(xs))
			// gonum's Skew and ExKurtosis use bias-corrected
			// estimators; convert ours (g1, g2) to theirs (G1, G2).
			g1 := (a.M3 / n) / math.Pow(a.M2/n, 1.5)
			g2 := (a.M4/n)/math.Pow(a.M2/n, 2) - 3
			for _, m := range []Moments{a, whole} {
				if m.N != int64(len(xs)) {
					t.Fatalf("%s split %d: N = %d", name, split, m.N)
				}
				if !closeRel(m.Mean, stat.Mean(xs, nil), 1e-12) {
					t.Errorf("%s split %d: mean %v, gonum %v", name, split, m.Mean, stat.Mean(xs, nil))
				}
				if !closeRel(m.Var(), stat.Variance(xs, nil), 1e-9) {
					t.Errorf("%s split %d: var %v, gonum %v", name, split, m.Var(), stat.Variance(xs, nil))
				}
			}
			if len(xs) > 3 {
				G1 := g1 * math.Sqrt(n*(n-1)) / (n - 2)
				G2 := (n - 1) / ((n - 2) * (n - 3)) * ((n+1)*g2 + 6)
				if !closeRel(G1, stat.Skew(xs, nil), 1e-6) {
					t.Errorf("%s split %d: skew %v, gonum %v", name, split, G1, stat.Skew(xs, nil))
				}
				if !closeRel(G2, stat.ExKurtosis(xs, nil), 1e-6) {
					t.Errorf("%s split %d: kurtosis %v, gonum %v", name, split, G2, stat.ExKurtosis(xs, nil))
				}
			}
		}
	}
}

// Histogram quantiles of a large normal sample match the N(0, 1)
// quantiles (gonum distuv.UnitNormal) within their Monte Carlo error
// plus a bin width; the KS distance is of the order 1/√N.
func TestHistogramQuantilesAndKS(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	h := newHistogram()
	const n = 200000
	for i := 0; i < n; i++ {
		h.Add(rng.NormFloat64())
	}
	h.Add(math.NaN())
	h.Add(math.Inf(1))
	if h.NaN != 1 || h.Above < 1 || h.Total() != n+1 {
		t.Fatalf("counts: NaN %d above %d total %d", h.NaN, h.Above, h.Total())
	}
	for _, p := range []float64{0.025, 0.25, 0.5, 0.75, 0.975} {
		want := distuv.UnitNormal.Quantile(p)
		// Asymptotic SE of a sample quantile: sqrt(p(1−p)/n)/φ(q)
		// (common practice; e.g. Serfling 1980, §2.3, from memory).
		se := math.Sqrt(p*(1-p)/n) / distuv.UnitNormal.Prob(want)
		if got := h.Quantile(p); math.Abs(got-want) > 4*se+1.0/BinsPerUnit {
			t.Errorf("quantile %v: got %v, want %v ± %v", p, got, want, 4*se)
		}
	}
	// The KS statistic of a correct model exceeds 1.95/√N with
	// probability about 0.001 (Kolmogorov limit, from memory).
	if ks := h.KSNormal(); ks > 1.95/math.Sqrt(n) {
		t.Errorf("KS distance %v exceeds the 0.1%% critical value %v", ks, 1.95/math.Sqrt(n))
	}
	shifted := newHistogram()
	for i := 0; i < n; i++ {
		shifted.Add(rng.NormFloat64() + 0.5)
	}
	// exact: sup |Φ(x − 0.5) − Φ(x)| = 2Φ(0.25) − 1 ≈ 0.197 (derived).
	want := 2*distuv.UnitNormal.CDF(0.25) - 1
	if ks := shifted.KSNormal(); math.Abs(ks-want) > 0.01 {
		t.Errorf("KS of a shifted normal: %v, want %v", ks, want)
	}
}
