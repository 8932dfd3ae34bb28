package runner_test

// Studies that fit another family than the one that drew the data, run
// through study.Parse and runner.Run and held against exact finite-sample
// theory and derived large-sample limits (the tolerances of exact_test.go).

import (
	"fmt"
	"math"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/study"

	"gonum.org/v1/gonum/stat/distuv"
)

// nbPMF is the negative binomial pmf with size r and mean m, from its
// definition Γ(y+r)/(Γ(r)·y!)·pʳ(1−p)ʸ with p = r/(r+m) (math.Lgamma;
// gonum has no negative binomial).
func nbPMF(y, r, m float64) float64 {
	a, _ := math.Lgamma(y + r)
	b, _ := math.Lgamma(r)
	c, _ := math.Lgamma(y + 1)
	return math.Exp(a - b - c + r*math.Log(r/(r+m)) + y*math.Log(m/(r+m)))
}

// nbWaldPoisson sums the pmf of the total T of n NB(mean μ, dispersion k)
// counts, which is NB with size n/k and mean nμ (a sum of independent
// negative binomials with a common p is negative binomial with the sizes
// added), over the Poisson fit's model-based Wald interval ȳ ± z√(ȳ/n),
// ȳ = T/n.
func nbWaldPoisson(mu, k float64, n int, z float64) (cover, below, above float64) {
	fn := float64(n)
	r, m := fn/k, fn*mu
	sd := math.Sqrt(m + m*m/r)
	hi := int(m + 60*sd + 60)
	for t := 0; t <= hi; t++ {
		p := nbPMF(float64(t), r, m)
		yb := float64(t) / fn
		c, b, _ := exactWald(yb, math.Sqrt(yb/fn), z, mu)
		switch {
		case c:
			cover += p
		case b:
			below += p
		default:
			above += p
		}
	}
	return cover, below, above
}

// TestMisspecPoissonFitToNegativeBinomial: counts drawn from NB(mean 2,
// dispersion 0.5) and fitted as Poisson.
//   - truth: μ* = mean (moment matching, White 1982);
//   - delta_var = (μ + kμ²)/n exactly (derived: Var ȳ = Var y/n);
//   - mean and emp_var of ȳ against the exact moments of T/n (negative
//     binomial cumulants of T with size n/k);
//   - the model-based interval's coverage, miss_below and miss_above
//     against the exact sums over T's pmf (nbWaldPoisson);
//   - that exact coverage tends to 2Φ(z/√(1 + kμ)) − 1 (derived: ȳ is
//     asymptotically N(μ, μ(1+kμ)/n) while the model's se is √(μ/n));
//   - the robust interval's coverage at n = 1000 against the level.
func TestMisspecPoissonFitToNegativeBinomial(t *testing.T) {
	const mu, k = 2.0, 0.5
	const replicates = 20 * study.BlockSize
	rows := exactRun(t, fmt.Sprintf(`seed = 424242
replicates = %d
sample_sizes = [5, 20, 80, 1000]
[[arm]]
name = "model_se"
family = "negative_binomial"
mean = %v
dispersion = %v
fit = "poisson"
[[arm]]
name = "robust_se"
family = "negative_binomial"
mean = %v
dispersion = %v
fit = "poisson"
variance = "robust"
[[transform]]
name = "model"
expr = "model_se.mean"
[[transform]]
name = "robust"
expr = "robust_se.mean"
`, replicates, mu, k, mu, k))
	z := exactZ(0.95)
	for _, n := range []int{5, 20, 80, 1000} {
		fn := float64(n)
		for _, name := range []string{"model", "robust"} {
			row := exactRow(t, rows, name, n)
			label := fmt.Sprintf("NB→poisson %s n=%d", name, n)
			if got := row.Get(measure.Truth); got != mu {
				t.Errorf("%s truth = %v, want μ* = %v (moment matching)", label, got, mu)
			}
			want := (mu + k*mu*mu) / fn
			if got := row.Get(measure.DeltaVar); math.Abs(got-want) > 1e-15*want {
				t.Errorf("%s delta_var = %.17g, want (μ + kμ²)/n = %.17g (derived)", label, got, want)
			}
			// T has cumulants κ2 = nμ(1+kμ), κ4 = nμ(1+kμ)(1+6kμ+6k²μ²)
			// (negative binomial cumulants), μ4(T) = κ4 + 3κ2².
			k2 := fn * mu * (1 + k*mu)
			k4 := k2 * (1 + 6*k*mu + 6*k*k*mu*mu)
			exactCheckMoments(t, label, row, exactDist{mean: mu, variance: k2 / (fn * fn), mu4: (k4 + 3*k2*k2) / (fn * fn * fn * fn)},
				"derived: T = nȳ ~ NB(size n/k, mean nμ)", true)
		}
		row := exactRow(t, rows, "model", n)
		label := fmt.Sprintf("NB→poisson model n=%d", n)
		c, b, a := nbWaldPoisson(mu, k, n, z)
		src := "Σ NB(T; size n/k, mean nμ)·1[covers], pmf from its definition"
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), c, src)
		exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), b, src)
		exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), a, src)
	}
	limit := 2*distuv.UnitNormal.CDF(z/math.Sqrt(1+k*mu)) - 1
	if c, _, _ := nbWaldPoisson(mu, k, 200000, z); math.Abs(c-limit) > 2e-3 {
		t.Errorf("exact model-based coverage at n = 200000 is %.5f; the derived limit 2Φ(z/√(1+kμ)) − 1 = %.5f", c, limit)
	}
	// Robust: the sandwich is consistent for Var ȳ, so coverage tends to
	// the level; at n = 1000 the remaining O(n^−½) skewness error is below
	// 0.005 (allowance, common practice) on top of 4 MCSE.
	row := exactRow(t, rows, "robust", 1000)
	mcse := math.Sqrt(0.95 * 0.05 / float64(row.Count(measure.Replicates)))
	if got := row.Get(measure.Coverage); math.Abs(got-0.95) > 4*mcse+0.005 {
		t.Errorf("robust coverage at n = 1000 is %.4f, want the level 0.95 within 4 MCSE (%.4f) + 0.005", got, mcse)
	}
	if got := exactRow(t, rows, "model", 1000).Get(measure.Coverage); math.Abs(got-limit) > 4*mcse+0.01 {
		t.Errorf("model-based coverage at n = 1000 is %.4f, the derived limit %.4f", got, limit)
	}
}

// TestMisspecExponentialFitToWeibull: lifetimes from Weibull(shape 1.5,
// scale 2) fitted as exponential. rate* = 1/(scale·Γ(1+1/shape)) and
// delta_var = Var(y)·rate*⁴/n (derived from the score 1/λ − y); for the
// survival probability exp(−rate·t0) the delta method multiplies by
// (t0·e^{−rate*·t0})². At n = 2000 the empirical variance must match
// delta_var (4 MCSE, plus 1% for the O(1/n) terms), and the robust
// plug-in must track it, while the model-based one is off by the factor
// 1/(Var(y)·rate*²), Var(y)·rate*² = Γ(1+2/k)/Γ(1+1/k)² − 1 (derived).
func TestMisspecExponentialFitToWeibull(t *testing.T) {
	const shape, scale, t0 = 1.5, 2.0, 1.0
	rows := exactRun(t, fmt.Sprintf(`seed = 515151
replicates = 10000
sample_sizes = [30, 2000]
[[arm]]
name = "m"
family = "weibull"
shape = %v
scale = %v
fit = "exponential"
[[arm]]
name = "r"
family = "weibull"
shape = %v
scale = %v
fit = "exponential"
variance = "robust"
[[transform]]
name = "rate_model"
expr = "m.rate"
[[transform]]
name = "survival_robust"
expr = "exp(-r.rate * %v)"
`, shape, scale, shape, scale, t0))
	g1, g2 := math.Gamma(1+1/shape), math.Gamma(1+2/shape)
	rate := 1 / (scale * g1)
	vary := scale * scale * (g2 - g1*g1)
	for _, n := range []int{30, 2000} {
		fn := float64(n)
		row := exactRow(t, rows, "rate_model", n)
		if got := row.Get(measure.Truth); math.Abs(got-rate) > 1e-15*rate {
			t.Errorf("rate truth = %.17g, want 1/(scale·Γ(1+1/shape)) = %.17g", got, rate)
		}
		want := vary * math.Pow(rate, 4) / fn
		if got := row.Get(measure.DeltaVar); math.Abs(got-want) > 1e-13*want {
			t.Errorf("n=%d rate delta_var = %.17g, want Var(y)·rate*⁴/n = %.17g (derived)", n, got, want)
		}
		srow := exactRow(t, rows, "survival_robust", n)
		s := math.Exp(-rate * t0)
		if got := srow.Get(measure.Truth); math.Abs(got-s) > 1e-15 {
			t.Errorf("survival truth = %.17g, want exp(−rate*·t0) = %.17g", got, s)
		}
		if got, w := srow.Get(measure.DeltaVar), want*t0*t0*s*s; math.Abs(got-w) > 1e-13*w {
			t.Errorf("n=%d survival delta_var = %.17g, want %.17g (delta method, derived)", n, got, w)
		}
	}
	row := exactRow(t, rows, "rate_model", 2000)
	ratio := row.Get(measure.VarRatio)
	if math.Abs(ratio-1) > 4*row.Get(measure.VarRatioMCSE)+0.01 {
		t.Errorf("n=2000 var_ratio = %.4f ± %.4f, want 1: delta_var is the sandwich", ratio, row.Get(measure.VarRatioMCSE))
	}
	// plugin_ratio = (rate*²/n)/(Var(y)·rate*⁴/n) in the limit.
	model := 1 / (vary * rate * rate)
	if got := row.Get(measure.PluginRatio); math.Abs(got-model) > 0.05*model {
		t.Errorf("n=2000 model-based plugin_ratio = %.4f, want about 1/(Var(y)·rate*²) = %.4f (derived)", got, model)
	}
	if got := exactRow(t, rows, "survival_robust", 2000).Get(measure.PluginRatio); math.Abs(got-1) > 0.05 {
		t.Errorf("n=2000 robust plugin_ratio = %.4f, want about 1", got)
	}
}

// TestMisspecNormalFitToStudentT: a measurement with Student t(df 10)
// errors fitted as normal. sd* = scale·√(df/(df−2)); n·Var σ̂ → (μ4 −
// σ⁴)/(4σ²) with μ4 = 3·scale⁴·df²/((df−2)(df−4)) (derived from the
// sandwich), and the empirical variance at n = 2000 must agree (df 10
// keeps the eighth moment, which the variance's MCSE needs, finite).
func TestMisspecNormalFitToStudentT(t *testing.T) {
	const loc, sc, df = 5.0, 2.0, 10.0
	rows := exactRun(t, fmt.Sprintf(`seed = 626262
replicates = 10000
sample_sizes = [2000]
[model]
family = "student_t"
location = %v
scale = %v
df = %v
fit = "normal"
variance = "robust"
[[transform]]
name = "sd"
expr = "sd"
`, loc, sc, df))
	row := exactRow(t, rows, "sd", 2000)
	s2 := sc * sc * df / (df - 2)
	if got := row.Get(measure.Truth); math.Abs(got-math.Sqrt(s2)) > 1e-15*math.Sqrt(s2) {
		t.Errorf("sd truth = %.17g, want scale·√(df/(df−2)) = %.17g", got, math.Sqrt(s2))
	}
	mu4 := 3 * sc * sc * sc * sc * df * df / ((df - 2) * (df - 4))
	want := (mu4 - s2*s2) / (4 * s2 * 2000)
	if got := row.Get(measure.DeltaVar); math.Abs(got-want) > 1e-13*want {
		t.Errorf("sd delta_var = %.17g, want (μ4 − σ⁴)/(4σ²n) = %.17g (derived)", got, want)
	}
	if r := row.Get(measure.VarRatio); math.Abs(r-1) > 4*row.Get(measure.VarRatioMCSE)+0.01 {
		t.Errorf("var_ratio = %.4f ± %.4f, want 1", r, row.Get(measure.VarRatioMCSE))
	}
}
