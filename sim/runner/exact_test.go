package runner_test

// Simulation against exact finite-sample theory.
//
// Every test here runs a small study through study.Parse and runner.Run and
// holds the summary row against a value that does not come from the
// project: a distribution-theory result derived in the comment beside it,
// evaluated with gonum's distuv (an independent reference library) where a
// distribution function is needed.
//
// Tolerances are stated in Monte Carlo standard errors computed from the
// exact distribution, not from the simulation:
//   - a simulated mean of R values: |mean − E| ≤ 4·sqrt(Var/R);
//   - a simulated variance (divisor R − 1): |s² − Var| ≤ 4·sqrt(Var(s²)),
//     with Var(s²) = (μ4 − Var²·(R − 3)/(R − 1))/R for R independent draws
//     (derived: the standard variance of the sample variance, the form
//     Morris, White & Crowther 2019, Statistics in Medicine 38:2074–2102,
//     use for the empirical SE; it reduces to 2Var²/(R − 1) when μ4 = 3Var²);
//   - a count of replicates with some property (covered, missed below or
//     above, undefined, zero standard error): the count is exactly
//     Binomial(R, p) when the simulation is right, so it must not lie in
//     either tail of that binomial beyond Φ(−4) ≈ 3.2e-5, the tail mass
//     beyond 4 MCSE = 4·sqrt(p(1 − p)/R) of the normal approximation. The
//     exact tail replaces the normal one because some of these
//     probabilities are small (R·p of order 1), where ±4·sqrt(p(1 − p)/R)
//     is not a 4-sigma band.
// "4 MCSE" is common practice: about a 6e-5 false-alarm rate per check.
// Seeds are fixed, so every run gives the same numbers.

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"

	"gonum.org/v1/gonum/stat/distuv"
)

// exactTolMCSE is the tolerance of every comparison, in MCSE.
const exactTolMCSE = 4

// exactTail is Φ(−4), the one-sided tail beyond 4 MCSE (gonum distuv).
var exactTail = distuv.UnitNormal.CDF(-exactTolMCSE)

// exactZ is the normal quantile of a two-sided Wald interval at level,
// from gonum's distuv rather than the runner's own erfinv.
func exactZ(level float64) float64 {
	return distuv.UnitNormal.Quantile(1 - (1-level)/2)
}

type exactKey struct {
	transform string
	n         int
}

// exactRun parses and runs a study with two workers and returns its
// summary rows by transform name and n.
func exactRun(t *testing.T, src string) map[exactKey]measure.Row {
	t.Helper()
	s, err := study.Parse(t.Name()+".toml", []byte(src))
	if err != nil {
		t.Fatalf("parsing the study: %v", err)
	}
	res, err := runner.Run(context.Background(), s, runner.Options{Workers: 2})
	if err != nil {
		t.Fatalf("running the study: %v", err)
	}
	rows := map[exactKey]measure.Row{}
	for _, r := range measure.Summarize(res) {
		rows[exactKey{r.Transform, r.N}] = r
	}
	return rows
}

func exactRow(t *testing.T, rows map[exactKey]measure.Row, name string, n int) measure.Row {
	t.Helper()
	r, ok := rows[exactKey{name, n}]
	if !ok {
		t.Fatalf("no summary row for transform %q at n=%d", name, n)
	}
	return r
}

// exactDist holds the exact mean, variance and fourth central moment of
// τ̂ over the replicates that enter the moments.
type exactDist struct{ mean, variance, mu4 float64 }

// exactMomentsFromRaw turns raw moments E X, E X², E X³, E X⁴ into
// central ones (binomial expansion of E(X − m)² and E(X − m)⁴).
func exactMomentsFromRaw(m1, m2, m3, m4 float64) exactDist {
	return exactDist{
		mean:     m1,
		variance: m2 - m1*m1,
		mu4:      m4 - 4*m1*m3 + 6*m1*m1*m2 - 3*m1*m1*m1*m1,
	}
}

// exactMomentsDiscrete computes the moments of x(k) under weights w(k)
// (summing to 1), two-pass for accuracy.
func exactMomentsDiscrete(ks []float64, w []float64) exactDist {
	var m float64
	for i := range ks {
		m += w[i] * ks[i]
	}
	var v, q float64
	for i := range ks {
		d := ks[i] - m
		v += w[i] * d * d
		q += w[i] * d * d * d * d
	}
	return exactDist{mean: m, variance: v, mu4: q}
}

// exactCheckMoments compares row.Mean and (when withVar) row.EmpVar with
// the exact distribution d over the row's defined replicates.
func exactCheckMoments(t *testing.T, label string, row measure.Row, d exactDist, source string, withVar bool) {
	t.Helper()
	r := float64(row.Count(measure.Replicates) - row.Count(measure.Undefined))
	mcse := math.Sqrt(d.variance / r)
	exactCheckValue(t, label+" mean", row.Get(measure.Mean), d.mean, mcse, row.Get(measure.BiasMCSE), source)
	if withVar {
		vmcse := math.Sqrt((d.mu4 - d.variance*d.variance*(r-3)/(r-1)) / r)
		exactCheckValue(t, label+" emp_var", row.Get(measure.EmpVar), d.variance, vmcse, row.Get(measure.EmpVarMCSE), source)
	}
}

// exactCheckValue fails when got is more than exactTolMCSE exact MCSEs
// from want; it logs the discrepancy in MCSE units beside the tool's own
// MCSE estimate.
func exactCheckValue(t *testing.T, label string, got, want, mcse, toolMCSE float64, source string) {
	t.Helper()
	z := (got - want) / mcse
	t.Logf("%-34s sim %-12.6g exact %-12.6g mcse %-9.3g (tool %-9.3g) %+6.2f MCSE  [%s]", label, got, want, mcse, toolMCSE, z, source)
	if !(math.Abs(z) <= exactTolMCSE) {
		t.Errorf("%s = %.8g, exact %.8g (%s): off by %+.2f MCSE (MCSE %.3g from the exact distribution), beyond ±%d",
			label, got, want, source, z, mcse, exactTolMCSE)
	}
}

// exactCheckShare fails when share·R, a count of replicates, lies in a
// tail of Binomial(R, p) beyond exactTail (gonum distuv.Binomial).
func exactCheckShare(t *testing.T, label string, share float64, replicates int64, p float64, source string) {
	t.Helper()
	R := float64(replicates)
	count := math.Round(share * R)
	mcse := math.Sqrt(p * (1 - p) / R)
	z := (share - p) / mcse
	t.Logf("%-34s sim %-12.6g exact %-12.6g mcse %-9.3g                 %+6.2f MCSE  [%s]", label, share, p, mcse, z, source)
	switch {
	case p <= 0 || p >= 1:
		if count != math.Round(p*R) {
			t.Errorf("%s = %v, exact %v (%s): an impossible count %v of %v", label, share, p, source, count, R)
		}
		return
	}
	lower := distuv.Binomial{N: R, P: p}.CDF(count)         // P(X ≤ count)
	upper := distuv.Binomial{N: R, P: 1 - p}.CDF(R - count) // P(X ≥ count)
	if lower < exactTail || upper < exactTail {
		t.Errorf("%s = %.6g (%v of %v), exact %.6g (%s): binomial tail P(X ≤ k) = %.3g, P(X ≥ k) = %.3g, beyond Φ(−4) = %.3g (%+.2f MCSE)",
			label, share, count, R, p, source, lower, upper, exactTail, z)
	}
}

// exactWald classifies the interval v ± z·se against truth as the design
// defines it: "below" when it lies wholly below the truth, "above" when
// wholly above, else covering (the end points count as covering).
func exactWald(v, se, z, truth float64) (covered, below, above bool) {
	lo, hi := v-z*se, v+z*se
	switch {
	case hi < truth:
		return false, true, false
	case lo > truth:
		return false, false, true
	}
	return true, false, false
}

// Exponential(rate λ), λ̂ = 1/Ȳ. Derived: S = nȲ ~ Gamma(shape n, rate λ)
// and E S^−k = λ^k Γ(n − k)/Γ(n), so
//
//	E λ̂^k = (nλ)^k / ((n − 1)(n − 2)···(n − k))   (n > k),
//	E λ̂ = nλ/(n − 1),  Var λ̂ = n²λ²/((n − 1)²(n − 2)).
//
// The plug-in variance is λ̂²/n (Fisher information 1/λ²), so the Wald
// interval is λ̂(1 ± c), c = z/√n, and
//
//	covers  ⇔ λ̂(1 − c) ≤ λ ≤ λ̂(1 + c) ⇔ n(1 − c)/λ ≤ S ≤ n(1 + c)/λ,
//	below   ⇔ λ̂(1 + c) < λ ⇔ S > n(1 + c)/λ,
//	above   ⇔ λ̂(1 − c) > λ ⇔ S < n(1 − c)/λ (impossible when c ≥ 1),
//
// evaluated with gonum's distuv.Gamma CDF.
//
// The variance is checked only where E λ̂⁶ exists (n > 6): the MCSE of a
// sample variance needs μ4 (n > 4), and for the ±4 MCSE band to be a
// normal-theory band the squared deviations need a finite third moment
// (Berry–Esseen), i.e. E λ̂⁶ < ∞. At n = 5 the mean alone is checked.
func TestExactExponentialRate(t *testing.T) {
	const lambda = 2.0
	const replicates = 50 * study.BlockSize
	sizes := []int{5, 7, 10, 40}
	rows := exactRun(t, fmt.Sprintf(`seed = 424242
replicates = %d
sample_sizes = [5, 7, 10, 40]
[model]
family = "exponential"
rate = %v
[[transform]]
name = "rate"
expr = "rate"
`, replicates, lambda))
	z := exactZ(0.95)
	for _, n := range sizes {
		row := exactRow(t, rows, "rate", n)
		fn := float64(n)
		raw := func(k int) float64 {
			v := 1.0
			for j := 1; j <= k; j++ {
				v *= fn * lambda / (fn - float64(j))
			}
			return v
		}
		d := exactMomentsFromRaw(raw(1), raw(2), raw(3), raw(4))
		// The closed forms, as the exact reference values.
		d.mean = fn * lambda / (fn - 1)
		d.variance = fn * fn * lambda * lambda / ((fn - 1) * (fn - 1) * (fn - 2))
		label := fmt.Sprintf("exp rate n=%d", n)
		if row.Count(measure.Undefined) != 0 {
			t.Errorf("%s: %d undefined replicates; λ̂ = 1/Ȳ is finite for every sample", label, row.Count(measure.Undefined))
		}
		exactCheckMoments(t, label, row, d, "derived: nȲ ~ Gamma(n, λ), inverse-gamma moments", n > 6)

		S := distuv.Gamma{Alpha: fn, Beta: lambda}
		c := z / math.Sqrt(fn)
		hiS := fn * (1 + c) / lambda
		pAbove := 0.0
		if c < 1 {
			pAbove = S.CDF(fn * (1 - c) / lambda)
		}
		pBelow := 1 - S.CDF(hiS)
		pCover := S.CDF(hiS) - pAbove
		src := "derived: Gamma(n, λ) CDF, gonum distuv.Gamma"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), pCover, src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), pBelow, src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), pAbove, src)
	}
}

// Normal(μ, σ²) data, θ̂ = (x̄, σ̂) with σ̂² = SS/n, SS = Σ(x − x̄)².
// Derived: W = SS/σ² ~ χ²(n − 1) independent of x̄ ~ N(μ, σ²/n).
//
// Transform sd^2 = σ̂² = σ²W/n: E = σ²(n − 1)/n, Var = 2σ⁴(n − 1)/n²,
// μ4 = (σ²/n)⁴(12k² + 48k), k = n − 1 (χ²(k) has cumulants
// κr = 2^(r−1)(r − 1)!·k, and μ4 = κ4 + 3κ2²). Its plug-in variance is
// (2σ̂)²·(σ̂²/2)/n = 2σ̂⁴/n, so the interval is σ̂²(1 ± c), c = z·sqrt(2/n):
// below ⇔ W < n/(1 + c), above ⇔ W > n/(1 − c) (none when c ≥ 1).
//
// Transform mean = x̄: E = μ, Var = σ²/n, μ4 = 3σ⁴/n². The interval is
// x̄ ± z·σ̂/√n. With s² = SS/(n − 1), T = (x̄ − μ)/(s/√n) ~ t(n − 1) and
// σ̂ = s·sqrt((n − 1)/n), so (x̄ − μ)/(σ̂/√n) = T·sqrt(n/(n − 1)) and
// covers ⇔ |T| ≤ z·sqrt((n − 1)/n); below ⇔ T < −z·sqrt((n − 1)/n).
// Evaluated with gonum's distuv.ChiSquared and distuv.StudentsT.
func TestExactNormalVarianceAndMean(t *testing.T) {
	const mu, sigma = 3.0, 2.0
	const replicates = 40 * study.BlockSize
	sizes := []int{5, 10, 40}
	rows := exactRun(t, fmt.Sprintf(`seed = 8675309
replicates = %d
sample_sizes = [5, 10, 40]
[model]
family = "normal"
mean = %v
sd = %v
[[transform]]
name = "var"
expr = "sd^2"
[[transform]]
name = "mean"
expr = "mean"
`, replicates, mu, sigma))
	z := exactZ(0.95)
	s2 := sigma * sigma
	for _, n := range sizes {
		fn := float64(n)
		k := fn - 1

		row := exactRow(t, rows, "var", n)
		label := fmt.Sprintf("normal sd^2 n=%d", n)
		q := s2 / fn
		d := exactDist{mean: s2 * k / fn, variance: 2 * s2 * s2 * k / (fn * fn), mu4: q * q * q * q * (12*k*k + 48*k)}
		exactCheckMoments(t, label, row, d, "derived: SS/σ² ~ χ²(n−1)", true)
		W := distuv.ChiSquared{K: k}
		c := z * math.Sqrt(2/fn)
		pBelow := W.CDF(fn / (1 + c))
		pAbove := 0.0
		if c < 1 {
			pAbove = 1 - W.CDF(fn/(1-c))
		}
		src := "derived: χ²(n−1) CDF, gonum distuv.ChiSquared"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), 1-pBelow-pAbove, src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), pBelow, src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), pAbove, src)

		row = exactRow(t, rows, "mean", n)
		label = fmt.Sprintf("normal mean n=%d", n)
		v := s2 / fn
		exactCheckMoments(t, label, row, exactDist{mean: mu, variance: v, mu4: 3 * v * v}, "derived: x̄ ~ N(μ, σ²/n)", true)
		T := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: k}
		ct := z * math.Sqrt(k/fn)
		src = "derived: t(n−1) CDF, gonum distuv.StudentsT"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), T.CDF(ct)-T.CDF(-ct), src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), T.CDF(-ct), src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), 1-T.CDF(ct), src)
	}
}

// Bernoulli(p), p̂ = K/n with K ~ Binomial(n, p). Derived: E p̂ = p,
// Var p̂ = p(1 − p)/n exactly. The Wald interval p̂ ± z·sqrt(p̂(1 − p̂)/n)
// depends on K alone, so its exact coverage is
// Σ_k Binom(k; n, p)·1[p in interval(k)] (Brown, Cai & DasGupta 2001,
// Statistical Science 16:101–133, eq. 2 and their Figure 1 for its
// oscillation in n), with the pmf from gonum's distuv.Binomial. K = 0 and
// K = n give se = 0: a degenerate interval that misses (below, above).
// Those are also the replicates with a zero standard error, share
// (1 − p)ⁿ + pⁿ. No replicate is undefined.
//
// Every n from 10 to 40 at p = 0.1 is run: that is where the coverage
// oscillates most (it swings between about 0.65 and 0.93 there).
func TestExactBernoulliWaldCoverage(t *testing.T) {
	const p = 0.1
	const replicates = 20 * study.BlockSize
	var sizes []int
	for n := 10; n <= 40; n++ {
		sizes = append(sizes, n)
	}
	grid := strings.Trim(strings.Join(strings.Fields(fmt.Sprint(sizes)), ", "), "[]")
	rows := exactRun(t, fmt.Sprintf(`seed = 271828
replicates = %d
sample_sizes = [%s]
[model]
family = "bernoulli"
p = %v
[[transform]]
name = "p"
expr = "p"
`, replicates, grid, p))
	z := exactZ(0.95)
	for _, n := range sizes {
		row := exactRow(t, rows, "p", n)
		label := fmt.Sprintf("bernoulli p n=%d", n)
		B := distuv.Binomial{N: float64(n), P: p}
		var ks, w []float64
		var pCover, pBelow, pAbove float64
		for k := 0; k <= n; k++ {
			pk := B.Prob(float64(k))
			ph := float64(k) / float64(n)
			ks, w = append(ks, ph), append(w, pk)
			cov, below, above := exactWald(ph, math.Sqrt(ph*(1-ph)/float64(n)), z, p)
			switch {
			case cov:
				pCover += pk
			case below:
				pBelow += pk
			case above:
				pAbove += pk
			}
		}
		d := exactMomentsDiscrete(ks, w) // for μ4 only
		d.mean, d.variance = p, p*(1-p)/float64(n)
		if row.Count(measure.Undefined) != 0 {
			t.Errorf("%s: %d undefined replicates; p̂ and its se are finite for every sample", label, row.Count(measure.Undefined))
		}
		exactCheckMoments(t, label, row, d, "derived: K ~ Binomial(n, p)", true)
		src := "Σ Binom(k; n, p)·1[covers], gonum distuv.Binomial"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), pCover, src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), pBelow, src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), pAbove, src)
		exactCheckShare(t, label+" zero_se", float64(row.Count(measure.ZeroSE))/float64(row.Count(measure.Replicates)), row.Count(measure.Replicates),
			math.Pow(1-p, float64(n))+math.Pow(p, float64(n)), "derived: P(K = 0) + P(K = n)")
	}
}

// Bernoulli(p) with transform log(p): at K = 0 the estimate log 0 is not
// finite, so the replicate is undefined; derived: P(K = 0) = (1 − p)ⁿ
// exactly. Undefined replicates count as not covering, so coverage +
// undefined share ≤ 1 must hold exactly, and the coverage itself is
// Σ_{k ≥ 1} Binom(k; n, p)·1[log p in log p̂ ± z·se], se² = (1/p̂)²·p̂(1 − p̂)/n
// = (1 − p̂)/k (K = n gives se = 0, a degenerate interval above log p).
// The moments cover only the defined replicates: the exact reference is
// the distribution of log(K/n) given K ≥ 1.
func TestExactBernoulliLogUndefined(t *testing.T) {
	const p = 0.1
	const replicates = 40 * study.BlockSize
	sizes := []int{5, 10, 20}
	rows := exactRun(t, fmt.Sprintf(`seed = 314159
replicates = %d
sample_sizes = [5, 10, 20]
[model]
family = "bernoulli"
p = %v
[[transform]]
name = "log_p"
expr = "log(p)"
`, replicates, p))
	z := exactZ(0.95)
	truth := math.Log(p)
	for _, n := range sizes {
		row := exactRow(t, rows, "log_p", n)
		label := fmt.Sprintf("bernoulli log(p) n=%d", n)
		R := float64(row.Count(measure.Replicates))
		B := distuv.Binomial{N: float64(n), P: p}
		p0 := math.Pow(1-p, float64(n))
		exactCheckShare(t, label+" undefined", float64(row.Count(measure.Undefined))/R, row.Count(measure.Replicates), p0, "derived: P(K = 0) = (1−p)^n")
		if row.Get(measure.Coverage)+float64(row.Count(measure.Undefined))/R > 1+1e-15 {
			t.Errorf("%s: coverage %v + undefined share %v exceeds 1: undefined replicates must count as not covering",
				label, row.Get(measure.Coverage), float64(row.Count(measure.Undefined))/R)
		}
		var ks, w []float64
		var pCover float64
		for k := 1; k <= n; k++ {
			pk := B.Prob(float64(k))
			ph := float64(k) / float64(n)
			ks, w = append(ks, math.Log(ph)), append(w, pk/(1-p0))
			if cov, _, _ := exactWald(math.Log(ph), math.Sqrt((1-ph)/float64(k)), z, truth); cov {
				pCover += pk
			}
		}
		exactCheckMoments(t, label, row, exactMomentsDiscrete(ks, w), "derived: log(K/n) given K ≥ 1", true)
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), pCover,
			"Σ_{k≥1} Binom(k; n, p)·1[covers], gonum distuv.Binomial")
	}
}

// Poisson(μ), μ̂ = ȳ with S = nȳ ~ Poisson(nμ). Derived: E μ̂ = μ,
// Var μ̂ = μ/n, and μ4(S) = λ + 3λ² (all Poisson cumulants equal λ = nμ).
// The plug-in variance of mean is μ̂/n, so S = 0 gives se 0 (a degenerate
// interval below μ). For log(mean) the estimate at S = 0 is log 0: those
// replicates are undefined, share exp(−nμ) exactly; the plug-in variance
// is (1/μ̂)²·μ̂/n = 1/S. Coverage of both is a sum over the Poisson pmf
// (gonum distuv.Poisson), truncated where the remaining tail is below
// 1e-15.
func TestExactPoissonMeanAndLog(t *testing.T) {
	const mu = 0.5
	const replicates = 40 * study.BlockSize
	sizes := []int{2, 5, 10, 20}
	rows := exactRun(t, fmt.Sprintf(`seed = 161803
replicates = %d
sample_sizes = [2, 5, 10, 20]
[model]
family = "poisson"
mean = %v
[[transform]]
name = "mean"
expr = "mean"
[[transform]]
name = "log_mean"
expr = "log(mean)"
`, replicates, mu))
	z := exactZ(0.95)
	for _, n := range sizes {
		fn := float64(n)
		lam := fn * mu
		P := distuv.Poisson{Lambda: lam}
		kmax := 0
		for 1-P.CDF(float64(kmax)) > 1e-15 {
			kmax++
		}
		p0 := math.Exp(-lam)

		row := exactRow(t, rows, "mean", n)
		label := fmt.Sprintf("poisson mean n=%d", n)
		v := mu / fn
		exactCheckMoments(t, label, row, exactDist{mean: mu, variance: v, mu4: (lam + 3*lam*lam) / (fn * fn * fn * fn)},
			"derived: nȳ ~ Poisson(nμ)", true)
		var pCover, pBelow, pAbove float64
		for k := 0; k <= kmax; k++ {
			pk := P.Prob(float64(k))
			ph := float64(k) / fn
			cov, below, _ := exactWald(ph, math.Sqrt(ph/fn), z, mu)
			switch {
			case cov:
				pCover += pk
			case below:
				pBelow += pk
			default:
				pAbove += pk
			}
		}
		src := "Σ Pois(k; nμ)·1[covers], gonum distuv.Poisson"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), pCover, src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), pBelow, src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), pAbove, src)

		row = exactRow(t, rows, "log_mean", n)
		label = fmt.Sprintf("poisson log(mean) n=%d", n)
		exactCheckShare(t, label+" undefined", float64(row.Count(measure.Undefined))/float64(row.Count(measure.Replicates)), row.Count(measure.Replicates), p0,
			"derived: P(S = 0) = exp(−nμ)")
		var ks, w []float64
		pCover = 0
		for k := 1; k <= kmax; k++ {
			pk := P.Prob(float64(k))
			lv := math.Log(float64(k) / fn)
			ks, w = append(ks, lv), append(w, pk/(1-p0))
			if cov, _, _ := exactWald(lv, math.Sqrt(1/float64(k)), z, math.Log(mu)); cov {
				pCover += pk
			}
		}
		exactCheckMoments(t, label, row, exactMomentsDiscrete(ks, w), "derived: log(S/n) given S ≥ 1", true)
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), pCover,
			"Σ_{k≥1} Pois(k; nμ)·1[covers], gonum distuv.Poisson")
	}
}

// Gamma(shape α, rate β): the MLE satisfies α̂/β̂ = ȳ exactly (derived: the
// rate's score nα/β − Σy = 0), and ȳ ~ Gamma(nα, nβ), so shape/rate has
// E = α/β, Var = α/(nβ²) and μ4 = (6k + 3k²)/r⁴ with k = nα, r = nβ
// (gamma cumulants κj = (j − 1)!·k/r^j) whatever the accuracy of the
// shape's Newton iteration. The MLE exists for every sample whose values
// are not all equal (a probability-one event for continuous data; Choi &
// Wette 1969, Technometrics 11:683–690, from memory), so no replicate
// may be undefined.
func TestExactGammaMean(t *testing.T) {
	const alpha, beta = 2.0, 3.0
	const replicates = 20 * study.BlockSize
	sizes := []int{5, 20}
	rows := exactRun(t, fmt.Sprintf(`seed = 141421
replicates = %d
sample_sizes = [5, 20]
[model]
family = "gamma"
shape = %v
rate = %v
[[transform]]
name = "mean"
expr = "shape / rate"
`, replicates, alpha, beta))
	for _, n := range sizes {
		row := exactRow(t, rows, "mean", n)
		label := fmt.Sprintf("gamma shape/rate n=%d", n)
		if row.Count(measure.Undefined) != 0 {
			t.Errorf("%s: %d undefined replicates (%d fit failures); the gamma MLE exists for every sample of distinct values",
				label, row.Count(measure.Undefined), row.Count(measure.FitFailures))
		}
		k, r := float64(n)*alpha, float64(n)*beta
		d := exactDist{mean: alpha / beta, variance: k / (r * r), mu4: (6*k + 3*k*k) / (r * r * r * r)}
		exactCheckMoments(t, label, row, d, "derived: α̂/β̂ = ȳ ~ Gamma(nα, nβ)", true)
	}
}

// Lognormal(meanlog μ, sdlog σ): the MLE of the mean exp(μ + σ²/2) is
// X = exp(μ̂ + σ̂²/2), μ̂ ~ N(μ, σ²/n) independent of σ̂² = σ²W/n,
// W ~ χ²(n − 1). Derived from the normal and χ² moment generating
// functions:
//
//	E X^j = exp(jμ + j²σ²/(2n)) · (1 − jσ²/n)^(−(n − 1)/2),  jσ²/n < 1.
//
// This checks the sdlog estimator's divisor n as well as the mean.
func TestExactLognormalMean(t *testing.T) {
	const mu, sigma = 0.0, 0.5
	const replicates = 40 * study.BlockSize
	sizes := []int{5, 20}
	rows := exactRun(t, fmt.Sprintf(`seed = 173205
replicates = %d
sample_sizes = [5, 20]
[model]
family = "lognormal"
meanlog = %v
sdlog = %v
[[transform]]
name = "mean"
expr = "exp(meanlog + sdlog^2/2)"
`, replicates, mu, sigma))
	for _, n := range sizes {
		row := exactRow(t, rows, "mean", n)
		fn := float64(n)
		raw := func(j float64) float64 {
			return math.Exp(j*mu+j*j*sigma*sigma/(2*fn)) * math.Pow(1-j*sigma*sigma/fn, -(fn-1)/2)
		}
		d := exactMomentsFromRaw(raw(1), raw(2), raw(3), raw(4))
		exactCheckMoments(t, fmt.Sprintf("lognormal mean n=%d", n), row, d,
			"derived: normal and χ² MGFs", true)
	}
}

// Bivariate normal with ρ = 0: Pearson r satisfies
// r·sqrt(n − 2)/sqrt(1 − r²) ~ t(n − 2) (Fisher 1915, Biometrika
// 10:507–521, from memory), and r² ~ Beta(1/2, (n − 2)/2), so (derived)
// E r = 0, Var r = 1/(n − 1), E r⁴ = 3/((n − 1)(n + 1)). The plug-in se of
// r is (1 − r²)/√n, so with c = z/√n the interval r ± c(1 − r²) lies
// wholly below 0 ⇔ r + c(1 − r²) < 0 ⇔ r < −r*, r* = (sqrt(1 + 4c²) − 1)/(2c)
// (the left side increases on (−1, 0)), and by symmetry wholly above ⇔
// r > r*. Evaluated with gonum's distuv.StudentsT at
// t* = r*·sqrt(n − 2)/sqrt(1 − r*²).
func TestExactBivariateNormalNullCorrelation(t *testing.T) {
	const replicates = 40 * study.BlockSize
	sizes := []int{5, 10, 30}
	rows := exactRun(t, fmt.Sprintf(`seed = 223606
replicates = %d
sample_sizes = [5, 10, 30]
[model]
family = "bivariate_normal"
mean_x = 1
mean_y = -2
sd_x = 3
sd_y = 0.5
rho = 0
[[transform]]
name = "rho"
expr = "rho"
`, replicates))
	z := exactZ(0.95)
	for _, n := range sizes {
		row := exactRow(t, rows, "rho", n)
		fn := float64(n)
		label := fmt.Sprintf("bvn rho=0 n=%d", n)
		d := exactDist{mean: 0, variance: 1 / (fn - 1), mu4: 3 / ((fn - 1) * (fn + 1))}
		exactCheckMoments(t, label, row, d, "derived: r² ~ Beta(1/2, (n−2)/2)", true)
		c := z / math.Sqrt(fn)
		rs := (math.Sqrt(1+4*c*c) - 1) / (2 * c)
		ts := rs * math.Sqrt(fn-2) / math.Sqrt(1-rs*rs)
		T := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: fn - 2}
		src := "t(n−2) CDF, gonum distuv.StudentsT"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), T.CDF(ts)-T.CDF(-ts), src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), T.CDF(-ts), src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), 1-T.CDF(ts), src)
	}
}
