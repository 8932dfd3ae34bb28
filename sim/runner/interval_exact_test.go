package runner_test

// The interval the analyst reports ([interval], se, null) against exact
// finite-sample theory, with the tolerances of exact_test.go.

import (
	"fmt"
	"math"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/study"

	"gonum.org/v1/gonum/stat/distuv"
)

// noncentralTCDF is P(T ≤ t) for T noncentral t with ν degrees of freedom
// and noncentrality δ: T = (Z + δ)/√(V/ν), Z ~ N(0, 1) independent of
// V ~ χ²(ν), so P(T ≤ t) = E Φ(t·√(V/ν) − δ) (derived by conditioning on
// V). gonum's distuv has no noncentral t, so the expectation is taken by
// quadrature on V's probability scale: V = F⁻¹(u), u uniform on (0, 1),
// integrated by the midpoint rule on m cells (gonum distuv.ChiSquared for
// F⁻¹ and distuv.UnitNormal for Φ). The integrand is bounded and smooth
// in u but steep near u = 1, where F⁻¹ grows without bound; m = 20000
// cells give an error below 1e-6 (checked against the central case
// δ = 0, where the answer is distuv.StudentsT's CDF:
// TestNoncentralTQuadrature), a thousandth of the Monte Carlo error it is
// compared with.
func noncentralTCDF(t, nu, delta float64) float64 {
	const m = 20000
	chi := distuv.ChiSquared{K: nu}
	var sum float64
	for i := range m {
		v := chi.Quantile((float64(i) + 0.5) / m)
		sum += distuv.UnitNormal.CDF(t*math.Sqrt(v/nu) - delta)
	}
	return sum / m
}

// The quadrature against the exact central t (δ = 0), and against the
// noncentral normal limit Φ(t − δ) at large ν, so the reference used below
// is itself checked.
func TestNoncentralTQuadrature(t *testing.T) {
	for _, c := range []struct{ t, nu float64 }{{2.0, 2}, {-1.3, 4}, {2.262, 9}, {0.5, 39}} {
		got, want := noncentralTCDF(c.t, c.nu, 0), distuv.StudentsT{Mu: 0, Sigma: 1, Nu: c.nu}.CDF(c.t)
		if math.Abs(got-want) > 1e-6 {
			t.Errorf("central t(%v) CDF at %v: quadrature %v, gonum StudentsT %v", c.nu, c.t, got, want)
		}
	}
	// ν = 10⁶: T is Z + δ to within 1e-5 (derived: √(V/ν) = 1 + O(ν^−½)).
	if got, want := noncentralTCDF(1.5, 1e6, 0.7), distuv.UnitNormal.CDF(1.5-0.7); math.Abs(got-want) > 1e-3 {
		t.Errorf("noncentral t, ν = 1e6: quadrature %v, normal limit %v", got, want)
	}
}

// Normal mean with the t interval the analysis plan states: quantile
// t(n − 1), se = sd/√(n − 1) where sd is the MLE (divisor n), which is
// s/√n with s the usual divisor-(n − 1) deviation. Then
// (x̄ − μ)/se ~ t(n − 1) exactly, so the coverage equals the level at
// every n (Student 1908, Biometrika 6:1–25). Testing H0: mean = 0, the
// statistic x̄/se is noncentral t with n − 1 degrees of freedom and
// noncentrality √n·μ/σ (derived), so reject = 1 − P(T ≤ q) + P(T ≤ −q)
// (noncentralTCDF). reject_delta is the formula Φ(−q − δ) + 1 − Φ(q − δ)
// with δ = μ/(σ/√n), recomputed here with distuv.UnitNormal. The mean
// width is 2q·E sd/√(n − 1) with E sd = σ·√(2/n)·Γ(n/2)/Γ((n − 1)/2)
// (derived: n·sd²/σ² ~ χ²(n − 1)), Var sd = σ²(n − 1)/n − (E sd)².
func TestExactStudentTInterval(t *testing.T) {
	const mu, sigma, level = 0.6, 2.0, 0.95
	const replicates = 40 * study.BlockSize
	sizes := []int{3, 5, 10, 30}
	rows := exactRun(t, fmt.Sprintf(`seed = 190801
replicates = %d
sample_sizes = [3, 5, 10, 30]
[model]
family = "normal"
mean = %v
sd = %v
[interval]
quantile = "t"
df = "n - 1"
[[transform]]
name = "mean"
expr = "mean"
se = "sd / sqrt(n - 1)"
null = 0
`, replicates, mu, sigma))
	for _, n := range sizes {
		row := exactRow(t, rows, "mean", n)
		fn := float64(n)
		label := fmt.Sprintf("t interval n=%d", n)
		R := row.Count(measure.Replicates)
		q := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: fn - 1}.Quantile(1 - (1-level)/2)
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), R, level, "Student 1908: exact t pivot")
		exactCheckShare(t, label+" coverage_defined", row.Get(measure.CoverageDefined), R, level, "Student 1908: no undefined replicates")
		ncp := math.Sqrt(fn) * mu / sigma
		pReject := 1 - noncentralTCDF(q, fn-1, ncp) + noncentralTCDF(-q, fn-1, ncp)
		exactCheckShare(t, label+" reject", row.Get(measure.Reject), R, pReject, "noncentral t(n − 1, √n·μ/σ), quadrature")
		if p := row.Get(measure.Reject); math.Abs(row.Get(measure.RejectMCSE)-math.Sqrt(p*(1-p)/float64(R))) > 1e-15 {
			t.Errorf("%s: reject_mcse %v, want √(p(1 − p)/R)", label, row.Get(measure.RejectMCSE))
		}
		delta := mu / (sigma / math.Sqrt(fn))
		wantDelta := distuv.UnitNormal.CDF(-q-delta) + 1 - distuv.UnitNormal.CDF(q-delta)
		if got := row.Get(measure.RejectDelta); math.Abs(got-wantDelta) > 1e-12 {
			t.Errorf("%s: reject_delta %v, formula %v", label, got, wantDelta)
		}
		if got, want := row.Get(measure.WidthDelta), 2*q*sigma/math.Sqrt(fn); math.Abs(got-want) > 1e-12*want {
			t.Errorf("%s: width_delta %v, want 2q·σ/√n = %v", label, got, want)
		}
		lg1, _ := math.Lgamma(fn / 2)
		lg2, _ := math.Lgamma((fn - 1) / 2)
		esd := sigma * math.Sqrt(2/fn) * math.Exp(lg1-lg2)
		vsd := sigma*sigma*(fn-1)/fn - esd*esd
		scale := 2 * q / math.Sqrt(fn-1)
		exactCheckValue(t, label+" width", row.Get(measure.Width), scale*esd, scale*math.Sqrt(vsd/float64(R)), math.NaN(),
			"derived: n·sd²/σ² ~ χ²(n − 1)")
	}
}

// Bernoulli(p) with zero_cells = "add_half": at K = 0 or K = n the
// estimate is p̃ = (K + ½)/(n + 1) with variance p̃(1 − p̃)/(n + 1)
// (Haldane 1956; Anscombe 1956), otherwise K/n with p̂(1 − p̂)/n. Every
// replicate is then defined, and the coverage of p and of logit(p) (se of
// the logit: se_p/(p̃(1 − p̃)), the delta method) is the sum over K of
// Binom(K; n, p)·1[covers] (gonum distuv.Binomial).
func TestExactBernoulliAddHalf(t *testing.T) {
	const p, level = 0.08, 0.95
	const replicates = 40 * study.BlockSize
	sizes := []int{10, 25, 60}
	rows := exactRun(t, fmt.Sprintf(`seed = 1956
replicates = %d
sample_sizes = [10, 25, 60]
[model]
family = "bernoulli"
p = %v
[interval]
zero_cells = "add_half"
[[transform]]
name = "p"
expr = "p"
[[transform]]
name = "logit"
expr = "logit(p)"
`, replicates, p))
	z := exactZ(level)
	for _, n := range sizes {
		B := distuv.Binomial{N: float64(n), P: p}
		var coverP, coverLogit float64
		for k := 0; k <= n; k++ {
			ph, m := float64(k)/float64(n), float64(n)
			if k == 0 || k == n {
				ph, m = (float64(k)+0.5)/float64(n+1), float64(n+1)
			}
			se := math.Sqrt(ph * (1 - ph) / m)
			if c, _, _ := exactWald(ph, se, z, p); c {
				coverP += B.Prob(float64(k))
			}
			if c, _, _ := exactWald(math.Log(ph/(1-ph)), se/(ph*(1-ph)), z, math.Log(p/(1-p))); c {
				coverLogit += B.Prob(float64(k))
			}
		}
		src := "Σ_k Binom(k; n, p)·1[covers], gonum distuv.Binomial; Haldane 1956"
		for _, c := range []struct {
			name string
			want float64
		}{{"p", coverP}, {"logit", coverLogit}} {
			row := exactRow(t, rows, c.name, n)
			label := fmt.Sprintf("add_half %s n=%d", c.name, n)
			if u := row.Count(measure.Undefined); u != 0 {
				t.Errorf("%s: %d undefined replicates; the correction defines every one", label, u)
			}
			exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), c.want, src)
		}
	}
}

// Without the correction, logit(p̂) is undefined at K = 0 and K = n, and
// coverage_defined is the coverage among the other replicates:
// Σ_{0<k<n} Binom(k)·1[covers] / (1 − P(K = 0) − P(K = n)) (gonum
// distuv.Binomial). Its count is binomial given the defined replicates.
func TestExactCoverageDefined(t *testing.T) {
	const p, level = 0.12, 0.95
	const replicates = 40 * study.BlockSize
	rows := exactRun(t, fmt.Sprintf(`seed = 27182
replicates = %d
sample_sizes = [8, 20]
[model]
family = "bernoulli"
p = %v
[[transform]]
name = "logit"
expr = "logit(p)"
`, replicates, p))
	z := exactZ(level)
	for _, n := range []int{8, 20} {
		B := distuv.Binomial{N: float64(n), P: p}
		pDefined := 1 - B.Prob(0) - B.Prob(float64(n))
		var cover float64
		for k := 1; k < n; k++ {
			ph := float64(k) / float64(n)
			if c, _, _ := exactWald(math.Log(ph/(1-ph)), 1/math.Sqrt(float64(n)*ph*(1-ph)), z, math.Log(p/(1-p))); c {
				cover += B.Prob(float64(k))
			}
		}
		row := exactRow(t, rows, "logit", n)
		label := fmt.Sprintf("logit n=%d", n)
		R := row.Count(measure.Replicates)
		defined := R - row.Count(measure.Undefined)
		exactCheckShare(t, label+" defined", float64(defined)/float64(R), R, pDefined, "1 − P(K = 0) − P(K = n), gonum distuv.Binomial")
		exactCheckShare(t, label+" coverage_defined", row.Get(measure.CoverageDefined), defined, cover/pDefined,
			"Σ_{0<k<n} Binom(k)·1[covers] / P(defined), gonum distuv.Binomial")
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), R, cover, "Σ_{0<k<n} Binom(k)·1[covers]")
	}
}

// Exponential(rate λ) tested against H0: rate = λ0 with the plug-in Wald
// interval λ̂(1 ± c), c = z/√n. With S = nȲ ~ Gamma(n, λ) (derived):
// reject ⇔ λ̂(1 − c) > λ0 or λ̂(1 + c) < λ0 ⇔ S < n(1 − c)/λ0 (when
// c < 1) or S > n(1 + c)/λ0, evaluated with gonum's distuv.Gamma CDF.
// reject_delta is the formula at δ = (λ − λ0)/(λ/√n) (Fisher information
// 1/λ² per observation).
func TestExactExponentialRateReject(t *testing.T) {
	const lambda, null, level = 2.0, 1.5, 0.95
	const replicates = 40 * study.BlockSize
	rows := exactRun(t, fmt.Sprintf(`seed = 6021
replicates = %d
sample_sizes = [8, 20, 60]
[model]
family = "exponential"
rate = %v
[[transform]]
name = "rate"
expr = "rate"
null = %v
`, replicates, lambda, null))
	z := exactZ(level)
	for _, n := range []int{8, 20, 60} {
		fn := float64(n)
		S := distuv.Gamma{Alpha: fn, Beta: lambda}
		c := z / math.Sqrt(fn)
		pReject := 1 - S.CDF(fn*(1+c)/null)
		if c < 1 {
			pReject += S.CDF(fn * (1 - c) / null)
		}
		row := exactRow(t, rows, "rate", n)
		label := fmt.Sprintf("exp rate reject n=%d", n)
		exactCheckShare(t, label, row.Get(measure.Reject), row.Count(measure.Replicates), pReject,
			"derived: nȲ ~ Gamma(n, λ), gonum distuv.Gamma CDF")
		delta := (lambda - null) / (lambda / math.Sqrt(fn))
		want := distuv.UnitNormal.CDF(-z-delta) + 1 - distuv.UnitNormal.CDF(z-delta)
		if got := row.Get(measure.RejectDelta); math.Abs(got-want) > 1e-12 {
			t.Errorf("%s: reject_delta %v, formula Φ(−z − δ) + 1 − Φ(z − δ) = %v", label, got, want)
		}
		if got := row.Get(measure.Null); got != null {
			t.Errorf("%s: null column %v, want %v", label, got, null)
		}
	}
}

// The plug-in ratio of a normal mean: the plug-in variance is σ̂²/n with
// σ̂² = SS/n, so E plugin_var = σ²(n − 1)/n² against Var x̄ = σ²/n, and the
// true ratio is (n − 1)/n (derived: SS/σ² ~ χ²(n − 1)). Its Monte Carlo
// error combines emp_var's, relative sd √(2/(R − 1)) (normal data), and
// the mean plug-in's, relative sd √(2/((n − 1)R)); x̄ and σ̂ are
// independent (derived, normal theory), so the two add in quadrature. The
// criterion's interval, which takes plugin_var as known, must hold the
// true ratio at every n at the 4-MCSE quantile.
func TestExactPluginRatio(t *testing.T) {
	const replicates = 40 * study.BlockSize
	rows := exactRun(t, fmt.Sprintf(`seed = 5150
replicates = %d
sample_sizes = [5, 10, 40]
[model]
family = "normal"
mean = 2
sd = 3
[[transform]]
name = "mean"
expr = "mean"
[criteria]
decide = ["plugin_ratio"]
`, replicates))
	for _, n := range []int{5, 10, 40} {
		row := exactRow(t, rows, "mean", n)
		fn, R := float64(n), float64(replicates)
		want := (fn - 1) / fn
		mcse := want * math.Sqrt(2/(R-1)+2/((fn-1)*R))
		label := fmt.Sprintf("plugin_ratio n=%d", n)
		exactCheckValue(t, label, row.Get(measure.PluginRatio), want, mcse, row.Get(measure.PluginRatioMCSE), "derived: E σ̂² = σ²(n − 1)/n")
		lo, hi := measure.PluginCheck.Interval(&measure.Cell{PluginVar: row.Get(measure.PluginVar)}, &row, exactTolMCSE)
		if !(lo <= want && want <= hi) {
			t.Errorf("%s: the criterion's interval [%v, %v] at z = 4 misses the true ratio %v", label, lo, hi, want)
		}
	}
}

// Two Bernoulli arms with zero_cells = "add_half": when either arm's
// count is 0 or all its trials, both arms get 0.5 added to successes and
// failures (Haldane 1956; Anscombe 1956), so the log odds ratio is
// logit p̃₂ − logit p̃₁ with variance Σ 1/(mᵢ p̃ᵢ(1 − p̃ᵢ)), mᵢ = nᵢ + 1 when
// corrected (nᵢ otherwise). Its coverage is the double sum over
// K₁ ~ Binom(n, p₁) and K₂ ~ Binom(n, p₂) of the product of their pmfs
// (gonum distuv.Binomial) times 1[covers].
func TestExactTwoArmAddHalf(t *testing.T) {
	const p1, p2, level = 0.05, 0.15, 0.95
	const replicates = 40 * study.BlockSize
	rows := exactRun(t, fmt.Sprintf(`seed = 1956
replicates = %d
sample_sizes = [15, 40]
[[arm]]
name = "a"
family = "bernoulli"
p = %v
[[arm]]
name = "b"
family = "bernoulli"
p = %v
[interval]
zero_cells = "add_half"
[[transform]]
name = "lor"
expr = "logit(b.p) - logit(a.p)"
`, replicates, p1, p2))
	z := exactZ(level)
	truth := math.Log(p2/(1-p2)) - math.Log(p1/(1-p1))
	for _, n := range []int{15, 40} {
		B1, B2 := distuv.Binomial{N: float64(n), P: p1}, distuv.Binomial{N: float64(n), P: p2}
		var cover float64
		for k1 := 0; k1 <= n; k1++ {
			for k2 := 0; k2 <= n; k2++ {
				fix := k1 == 0 || k1 == n || k2 == 0 || k2 == n
				est := func(k int) (float64, float64) {
					if fix {
						return (float64(k) + 0.5) / float64(n+1), float64(n + 1)
					}
					return float64(k) / float64(n), float64(n)
				}
				q1, m1 := est(k1)
				q2, m2 := est(k2)
				v := math.Log(q2/(1-q2)) - math.Log(q1/(1-q1))
				se := math.Sqrt(1/(m1*q1*(1-q1)) + 1/(m2*q2*(1-q2)))
				if c, _, _ := exactWald(v, se, z, truth); c {
					cover += B1.Prob(float64(k1)) * B2.Prob(float64(k2))
				}
			}
		}
		row := exactRow(t, rows, "lor", n)
		label := fmt.Sprintf("two-arm add_half n=%d", n)
		if u := row.Count(measure.Undefined); u != 0 {
			t.Errorf("%s: %d undefined replicates", label, u)
		}
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), cover,
			"Σ_{k₁,k₂} Binom(k₁)·Binom(k₂)·1[covers], gonum distuv.Binomial; Haldane 1956")
	}
}
