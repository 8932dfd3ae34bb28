package family

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"deltaprobe/sim/stream"
)

// testRand returns a generator with a fixed seed, so every Monte Carlo
// check below sees the same draws on every run.
func testRand(seed uint64) *stream.PCG {
	return stream.New(seed, 0x9e3779b97f4a7c15)
}

// mustModel builds a family's model or fails the test.
func mustModel(t testing.TB, family string, values map[string]float64) Model {
	t.Helper()
	f, ok := Lookup(family)
	if !ok {
		t.Fatalf("family %q not registered", family)
	}
	m, err := f.New(values)
	if err != nil {
		t.Fatalf("%s.New(%v): %v", family, values, err)
	}
	return m
}

// trial draws and fits one arm's replicates as a runner's worker does:
// one sample and one fitter of its own, reused for every replicate.
type trial struct {
	m      Model
	sample Sample
	fitter Fitter
	cov    []float64 // the plug-in covariance of the latest fit
}

// newTrial returns a trial of m for samples of at most maxN observations.
func newTrial(m Model, maxN int) *trial {
	p := len(m.Truth)
	return &trial{
		m:      m,
		sample: Sample{Data: make([]float64, m.Sampler.SampleLen(maxN))},
		fitter: m.Estimator.NewFitter(maxN),
		cov:    make([]float64, p*p),
	}
}

// fit draws a sample of n observations with rng and fits it, writing θ̂
// into theta; it reports what Fit reports.
func (tr *trial) fit(rng *stream.PCG, n int, theta []float64) bool {
	tr.m.Sampler.Draw(rng, n, &tr.sample)
	return tr.fitter.Fit(&tr.sample, theta, tr.cov)
}

// estimates returns the names of θ's entries for a family.
func estimates(t testing.TB, family string) []string {
	t.Helper()
	f, ok := Lookup(family)
	if !ok {
		t.Fatalf("family %q not registered", family)
	}
	return f.Estimates
}

// ksCritical001 is the 0.1% critical value of √N·D for the one-sample
// Kolmogorov–Smirnov statistic, from the first term of the asymptotic
// Kolmogorov tail P(√N·D > c) ≈ 2·exp(−2c²) (from memory):
// c = √(−log(0.0005)/2) ≈ 1.949.
var ksCritical001 = math.Sqrt(-math.Log(0.001/2) / 2)

// ksCheck fails the test when the sample xs (sorted in place) departs from
// the continuous CDF beyond the 0.1% Kolmogorov–Smirnov critical value.
func ksCheck(t *testing.T, name string, xs []float64, cdf func(float64) float64) {
	t.Helper()
	slices.Sort(xs)
	n := float64(len(xs))
	var d float64
	for i, x := range xs {
		f := cdf(x)
		d = math.Max(d, math.Max(f-float64(i)/n, float64(i+1)/n-f))
	}
	if stat := math.Sqrt(n) * d; stat > ksCritical001 {
		t.Errorf("%s: KS √N·D = %.3f > %.3f (0.1%% critical value), N = %d", name, stat, ksCritical001, len(xs))
	}
}

// chiSquareCheck fails the test when the observed integer counts depart
// from the probability mass function beyond the 0.1% point of the
// chi-square distribution (critical value from gonum distuv.ChiSquared).
// Cells are the integers lo…hi with the tails below lo and above hi added
// to the end cells (through cdf); adjacent cells are pooled from the left
// until each expects at least 5 draws, and a short last pool joins the one
// before it (common practice).
func chiSquareCheck(t *testing.T, name string, draws []int, pmf, cdf func(float64) float64) {
	t.Helper()
	lo, hi := slices.Min(draws), slices.Max(draws)
	counts := make([]float64, hi-lo+1)
	for _, k := range draws {
		counts[k-lo]++
	}
	n := float64(len(draws))
	var obs, exp []float64
	var o, e float64
	for k := lo; k <= hi; k++ {
		o += counts[k-lo]
		e += n * pmf(float64(k))
		if k == lo {
			e += n * cdf(float64(lo-1))
		}
		if k == hi {
			e += n * (1 - cdf(float64(hi)))
		}
		if e >= 5 {
			obs, exp = append(obs, o), append(exp, e)
			o, e = 0, 0
		}
	}
	if e > 0 || o > 0 {
		if len(obs) == 0 {
			obs, exp = append(obs, 0), append(exp, 0)
		}
		obs[len(obs)-1] += o
		exp[len(exp)-1] += e
	}
	if len(obs) < 2 {
		// One pooled cell carries no information; the draws must then all
		// be in a cell the distribution gives almost all its mass.
		if lo != hi || pmf(float64(lo)) < 1-5/n {
			t.Errorf("%s: draws lo=%d hi=%d give a single cell", name, lo, hi)
		}
		return
	}
	var x2 float64
	for i := range obs {
		d := obs[i] - exp[i]
		x2 += d * d / exp[i]
	}
	df := float64(len(obs) - 1)
	crit := distuv.ChiSquared{K: df}.Quantile(0.999)
	if x2 > crit {
		t.Errorf("%s: chi-square %.1f > %.1f (0.1%% point, %g df), N = %d", name, x2, crit, df, len(draws))
	}
}

// meanSE returns the mean of xs and the Monte Carlo standard error of that
// mean, sd/√N.
func meanSE(xs []float64) (mean, se float64) {
	n := float64(len(xs))
	for _, x := range xs {
		mean += x
	}
	mean /= n
	var ss float64
	for _, x := range xs {
		ss += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(ss / (n - 1) / n)
}
