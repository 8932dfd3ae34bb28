package runner_test

import (
	"fmt"
	"math"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/study"

	"gonum.org/v1/gonum/stat/distuv"
)

// endCensoredExact is the exact finite-sample law of λ̂ = D/T for n
// exponential lifetimes of rate λ, all entering at 0 and censored at the
// end of study c (derived):
//
// The number of events D is Binomial(n, p), p = 1 − e^(−λc). Given
// D = k, the k event times are iid Exp(λ) truncated to [0, c] and the
// other n − k units each contribute c, so T = (n − k)c + S, S the sum of
// k truncated exponentials. Its Laplace transform is
// E e^(−uT) = e^(−u(n−k)c)·L(u)^k, L(u) = λ(1 − e^(−(λ+u)c))/((λ + u)p),
// and E T^(−m) = ∫₀^∞ u^(m−1) E e^(−uT) du / Γ(m), an integral of a
// positive function, done by the trapezoid rule in log u (exponentially
// convergent for an integrand analytic in a strip and decaying at both
// ends; step 0.01 over 80 e-folds). Expanding (1 − e^(−(λ+u)c))^k
// binomially, S is a signed mixture of Gamma(k, λ) laws shifted by jc:
// P(S ≤ s) = p^(−k) Σⱼ C(k, j)(−1)^j e^(−λjc) G_k(s − jc), G_k the
// Gamma(k, λ) CDF (gonum distuv.Gamma). The alternating sum loses about
// k·log10((1 + e^(−λc))/p) digits, so it serves n ≤ 20 at λc = 1.
type endCensoredExact struct {
	lambda, c float64
	n         int
}

func (e endCensoredExact) p() float64 { return -math.Expm1(-e.lambda * e.c) }

// invMoment is E T^(−m) given D = k.
func (e endCensoredExact) invMoment(k, m int) float64 {
	p := e.p()
	logMGF := func(u float64) float64 {
		l := math.Log(e.lambda) - math.Log(e.lambda+u) + math.Log(-math.Expm1(-(e.lambda+u)*e.c)) - math.Log(p)
		return -u*float64(e.n-k)*e.c + float64(k)*l
	}
	// ∫ u^(m−1) M(u) du = ∫ e^(m·t) M(e^t) dt over t = log u.
	centre := math.Log(e.lambda / (float64(e.n) * p))
	const h = 0.01
	var sum float64
	for t := centre - 40; t <= centre+40; t += h {
		sum += math.Exp(float64(m)*t + logMGF(math.Exp(t)))
	}
	g, _ := math.Lgamma(float64(m))
	return sum * h / math.Exp(g)
}

// sCDF is P(S ≤ s) given D = k.
func (e endCensoredExact) sCDF(k int, s float64) float64 {
	if s <= 0 {
		return 0
	}
	if s >= float64(k)*e.c {
		return 1
	}
	g := distuv.Gamma{Alpha: float64(k), Beta: e.lambda}
	var sum float64
	for j := 0; j <= k; j++ {
		if s-float64(j)*e.c <= 0 {
			break
		}
		lc, _ := math.Lgamma(float64(k + 1))
		l1, _ := math.Lgamma(float64(j + 1))
		l2, _ := math.Lgamma(float64(k - j + 1))
		term := math.Exp(lc-l1-l2-e.lambda*float64(j)*e.c) * g.CDF(s-float64(j)*e.c)
		if j%2 == 1 {
			term = -term
		}
		sum += term
	}
	return math.Min(1, math.Max(0, sum/math.Pow(e.p(), float64(k))))
}

// law returns the exact moments of λ̂ over the defined replicates
// (D ≥ 1) and the probabilities that the Wald interval λ̂ ± z·λ̂/√D
// (the observed-information interval) covers λ, lies wholly below it or
// wholly above it, over all replicates (D = 0 is undefined and covers
// nothing). withCoverage false skips the alternating sums.
func (e endCensoredExact) law(z float64, withCoverage bool) (d exactDist, cover, below, above float64) {
	bin := distuv.Binomial{N: float64(e.n), P: e.p()}
	defined := 1 - bin.Prob(0)
	var raw [5]float64
	for k := 1; k <= e.n; k++ {
		w := bin.Prob(float64(k))
		for m := 1; m <= 4; m++ {
			raw[m] += w / defined * math.Pow(float64(k), float64(m)) * e.invMoment(k, m)
		}
		if !withCoverage {
			continue
		}
		// covers ⇔ λ̂(1 − c) ≤ λ ≤ λ̂(1 + c), c = z/√k, λ̂ = k/T:
		// below ⇔ T > k(1 + c)/λ; above ⇔ T < k(1 − c)/λ (none if c ≥ 1).
		ck := z / math.Sqrt(float64(k))
		base := float64(e.n-k) * e.c
		pBelow := 1 - e.sCDF(k, float64(k)*(1+ck)/e.lambda-base)
		pAbove := 0.0
		if ck < 1 {
			pAbove = e.sCDF(k, float64(k)*(1-ck)/e.lambda-base)
		}
		below += w * pBelow
		above += w * pAbove
		cover += w * (1 - pBelow - pAbove)
	}
	return exactMomentsFromRaw(raw[1], raw[2], raw[3], raw[4]), cover, below, above
}

// The reference itself: with an end far beyond every lifetime the law is
// the uncensored one, E λ̂ = nλ/(n − 1), Var λ̂ = n²λ²/((n − 1)²(n − 2))
// (derived: nȲ ~ Gamma(n, λ)), and the coverage the Gamma CDF's.
func TestEndCensoredExactReducesToUncensored(t *testing.T) {
	e := endCensoredExact{lambda: 0.5, c: 200, n: 12}
	d, cover, _, _ := e.law(exactZ(0.95), true)
	fn := float64(e.n)
	if want := fn * e.lambda / (fn - 1); math.Abs(d.mean-want) > 1e-9*want {
		t.Errorf("mean %.12g, inverse-gamma %.12g", d.mean, want)
	}
	if want := fn * fn * e.lambda * e.lambda / ((fn - 1) * (fn - 1) * (fn - 2)); math.Abs(d.variance-want) > 1e-8*want {
		t.Errorf("variance %.12g, inverse-gamma %.12g", d.variance, want)
	}
	S := distuv.Gamma{Alpha: fn, Beta: e.lambda}
	c := exactZ(0.95) / math.Sqrt(fn)
	if want := S.CDF(fn*(1+c)/e.lambda) - S.CDF(fn*(1-c)/e.lambda); math.Abs(cover-want) > 1e-9 {
		t.Errorf("coverage %.12g, Gamma CDF %.12g", cover, want)
	}
}

// Exponential lifetimes censored at the end of study only: the delta
// variance, the events share, and the simulated mean, variance and
// coverage against the exact law (endCensoredExact) within 4 MCSE.
func TestExactCensoredExponentialEndOfStudy(t *testing.T) {
	const lambda, end = 0.5, 2.0 // λ·end = 1: P(event) = 1 − e^(−1) ≈ 0.632
	const replicates = 40 * study.BlockSize
	sizes := []int{8, 20, 60}
	rows := exactRun(t, fmt.Sprintf(`seed = 151515
replicates = %d
sample_sizes = [8, 20, 60]
[model]
family = "exponential"
rate = %v
[model.censoring]
end = %v
[[transform]]
name = "rate"
expr = "rate"
`, replicates, lambda, end))
	z := exactZ(0.95)
	for _, n := range sizes {
		row := exactRow(t, rows, "rate", n)
		e := endCensoredExact{lambda: lambda, c: end, n: n}
		label := fmt.Sprintf("end-censored rate n=%d", n)
		// delta_var = λ²/(n(1 − e^(−λ·end))) (derived: information
		// n·P(event)/λ², P(event) = 1 − e^(−λ·end)).
		if want := lambda * lambda / (float64(n) * -math.Expm1(-lambda*end)); math.Abs(row.Get(measure.DeltaVar)-want) > 1e-14*want {
			t.Errorf("%s: delta_var %.17g, want λ²/(n(1 − e^(−λ·end))) = %.17g", label, row.Get(measure.DeltaVar), want)
		}
		// events: n·R Bernoulli(p) units, p = 1 − e^(−λ·end) (derived).
		exactCheckShare(t, label+" events", row.Get(measure.Events), row.Count(measure.Replicates)*int64(n), e.p(), "derived: P(event) = 1 − e^(−λ·end)")
		// undefined: no event among n, (1 − p)^n (derived).
		exactCheckShare(t, label+" undefined", float64(row.Count(measure.Undefined))/float64(row.Count(measure.Replicates)), row.Count(measure.Replicates), math.Pow(1-e.p(), float64(n)), "derived: P(D = 0) = e^(−nλ·end)")
		if row.Count(measure.NoEvents) != row.Count(measure.Undefined) || row.Count(measure.FitFailures) != 0 {
			t.Errorf("%s: %d undefined, %d for want of an event, %d fit failures: every undefined replicate here is one without events",
				label, row.Count(measure.Undefined), row.Count(measure.NoEvents), row.Count(measure.FitFailures))
		}
		withCoverage := n <= 20
		d, cover, below, above := e.law(z, withCoverage)
		src := "derived: Binomial events, truncated-exponential sum; Laplace integral"
		exactCheckMoments(t, label, row, d, src, true)
		if withCoverage {
			src := "derived: alternating Gamma(k, λ) mixture, gonum distuv"
			exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), row.Count(measure.Replicates), cover, src)
			exactCheckShare(t, label+" miss_below", row.Get(measure.MissBelow), row.Count(measure.Replicates), below, src)
			exactCheckShare(t, label+" miss_above", row.Get(measure.MissAbove), row.Count(measure.Replicates), above, src)
		}
	}
}

// A replicate is undefined for the transforms that read an arm without
// events, and only for them: P(no event among n) = (1 − p)^n with
// p = 1 − e^(−λ·end) (derived), and a transform of the other arm alone
// is never undefined.
func TestCensoredNoEventsOnlyWhereRead(t *testing.T) {
	const n, lambda, end = 100, 0.02, 1.0
	rows := exactRun(t, fmt.Sprintf(`seed = 7
replicates = 20000
sample_sizes = [%d]
[[arm]]
name = "rare"
family = "exponential"
rate = %v
[arm.censoring]
end = %v
[[arm]]
name = "other"
family = "normal"
mean = 3
sd = 1
[[transform]]
name = "rare_rate"
expr = "rare.rate"
[[transform]]
name = "other_mean"
expr = "other.mean"
[[transform]]
name = "both"
expr = "rare.rate * other.mean"
`, n, lambda, end))
	p := -math.Expm1(-lambda * end)
	pNone := math.Pow(1-p, n)
	for _, name := range []string{"rare_rate", "both"} {
		row := exactRow(t, rows, name, n)
		share := float64(row.Count(measure.Undefined)) / float64(row.Count(measure.Replicates))
		exactCheckShare(t, name+" undefined", share, row.Count(measure.Replicates), pNone, "derived: (1 − p)^n, p = 1 − e^(−λ·end)")
		if row.Count(measure.NoEvents) != row.Count(measure.Undefined) {
			t.Errorf("%s: %d undefined but %d counted for want of events", name, row.Count(measure.Undefined), row.Count(measure.NoEvents))
		}
		exactCheckShare(t, name+" events", row.Get(measure.Events), row.Count(measure.Replicates)*n, p, "derived: P(event) = 1 − e^(−λ·end)")
	}
	other := exactRow(t, rows, "other_mean", n)
	if other.Count(measure.Undefined) != 0 {
		t.Errorf("other_mean reads only the normal arm, yet %d replicates are undefined", other.Count(measure.Undefined))
	}
	if e := other.Get(measure.Events); !math.IsNaN(e) {
		t.Errorf("other_mean reads no lifetimes, yet events = %v (want empty)", e)
	}
}

// Staggered entry, end of study and dropout: at n large enough that the
// O(n⁻²) terms are well under the Monte Carlo error, the simulated
// variance of λ̂ matches delta_var (expected information
// n·P(event)/λ², P(event) in closed form) and the simulated bias matches
// bias_2nd (the Cox–Snell coefficient), each within 4 MCSE; the events
// share matches P(event) = (λ/μ)(1 − e^(−μE)(e^(μw) − 1)/(μw)),
// μ = λ + δ (derived; checked against quadrature in sim/family).
func TestCensoredExponentialEntryDropoutAsymptotics(t *testing.T) {
	const lambda, entry, end, dropout = 0.25, 2.0, 5.0, 0.05
	rows := exactRun(t, fmt.Sprintf(`seed = 31337
replicates = 40000
sample_sizes = [200, 400]
[model]
family = "exponential"
rate = %v
[model.censoring]
entry = %v
end = %v
dropout_rate = %v
[[transform]]
name = "rate"
expr = "rate"
`, lambda, entry, end, dropout))
	mu := lambda + dropout
	p := lambda / mu * (1 - math.Exp(-mu*end)*math.Expm1(mu*entry)/(mu*entry))
	for _, n := range []int{200, 400} {
		row := exactRow(t, rows, "rate", n)
		label := fmt.Sprintf("entry+dropout rate n=%d", n)
		exactCheckShare(t, label+" events", row.Get(measure.Events), row.Count(measure.Replicates)*int64(n), p, "derived: closed-form P(event)")
		if want := lambda * lambda / (float64(n) * p); math.Abs(row.Get(measure.DeltaVar)-want) > 1e-12*want {
			t.Errorf("%s: delta_var %v, λ²/(n·P(event)) %v", label, row.Get(measure.DeltaVar), want)
		}
		exactCheckValue(t, label+" emp_var", row.Get(measure.EmpVar), row.Get(measure.DeltaVar), row.Get(measure.EmpVarMCSE), row.Get(measure.EmpVarMCSE),
			"first order: inverse expected information")
		exactCheckValue(t, label+" bias", row.Get(measure.Bias), row.Get(measure.Bias2nd), row.Get(measure.BiasMCSE), row.Get(measure.BiasMCSE),
			"second order: Cox–Snell bias, derived")
	}
	// The sandwich (variance = "robust") estimates the same variance:
	// the same draws, its mean plug-in against the simulated variance.
	robust := exactRun(t, fmt.Sprintf(`seed = 31337
replicates = 40000
sample_sizes = [400]
[model]
family = "exponential"
rate = %v
variance = "robust"
[model.censoring]
entry = %v
end = %v
dropout_rate = %v
[[transform]]
name = "rate"
expr = "rate"
`, lambda, entry, end, dropout))
	row := exactRow(t, robust, "rate", 400)
	exactCheckValue(t, "entry+dropout robust plugin_var", row.Get(measure.PluginVar), row.Get(measure.EmpVar), row.Get(measure.EmpVarMCSE), row.Get(measure.EmpVarMCSE),
		"first order: the sandwich estimates the variance")
}

// Censored Weibull lifetimes (entry, end and dropout): at n = 400 the
// simulated variance of the scale and of a survival probability matches
// delta_var from the expected information by quadrature, and with
// variance = "robust" the mean sandwich matches the simulated variance
// (first-order theory; within 4 MCSE); the share of events matches
// P(event) by quadrature (sim/family checks that against closed forms).
func TestCensoredWeibullAsymptotics(t *testing.T) {
	for _, variance := range []string{"model", "robust"} {
		rows := exactRun(t, fmt.Sprintf(`seed = 606
replicates = 4000
sample_sizes = [400]
[model]
family = "weibull"
shape = 1.5
scale = 4
variance = %q
[model.censoring]
entry = 2
end = 6
dropout_rate = 0.05
[[transform]]
name = "scale"
expr = "scale"
[[transform]]
name = "survival_2"
expr = "exp(-(2 / scale)^shape)"
`, variance))
		for _, name := range []string{"scale", "survival_2"} {
			row := exactRow(t, rows, name, 400)
			label := fmt.Sprintf("weibull %s %s", variance, name)
			exactCheckValue(t, label+" emp_var", row.Get(measure.EmpVar), row.Get(measure.DeltaVar), row.Get(measure.EmpVarMCSE), row.Get(measure.EmpVarMCSE),
				"first order: inverse expected information by quadrature")
			exactCheckValue(t, label+" plugin_var", row.Get(measure.PluginVar), row.Get(measure.EmpVar), row.Get(measure.EmpVarMCSE), row.Get(measure.EmpVarMCSE),
				"first order: the plug-in estimates the variance")
			if u := row.Count(measure.Undefined); u != 0 {
				t.Errorf("%s: %d undefined replicates at n = 400", label, u)
			}
		}
	}
}

// An uncensored exponential arm counts every observation as an event
// whichever way it is drawn: draws = "statistics" (the exact Gamma(n, 1)
// draw of the sum) keeps the sampler's event count.
func TestUncensoredEventsEitherDraw(t *testing.T) {
	for _, draws := range []string{"statistics", "each"} {
		rows := exactRun(t, fmt.Sprintf(`seed = 3
replicates = 1000
sample_sizes = [10]
[model]
family = "exponential"
rate = 2
draws = %q
[[transform]]
name = "rate"
expr = "rate"
`, draws))
		if e := exactRow(t, rows, "rate", 10).Get(measure.Events); e != 1 {
			t.Errorf("draws = %q: events = %v, want 1 (no censoring)", draws, e)
		}
	}
}
