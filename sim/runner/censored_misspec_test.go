package runner_test

import (
	"fmt"
	"math"
	"testing"

	"deltaprobe/sim/measure"

	"gonum.org/v1/gonum/mathext"
)

// TestMisspecCensoredExponentialFitToWeibull: Weibull(shape k, scale λ)
// lifetimes, all entering at 0 and censored when the study ends at e,
// fitted as censored exponential (events / time at risk). With
// x = (e/λ)^k and γ(a, x) = Γ(a)·P(a, x) the lower incomplete gamma
// (gonum mathext.GammaIncReg), substituting u = (t/λ)^k (derived):
//
//	P(event) = 1 − e^(−x),  E X = ∫₀ᵉ S = (λ/k)γ(1/k, x),
//	E[dX] = ∫₀ᵉ t f = λγ(1 + 1/k, x),  E X² = ∫₀ᵉ 2tS = (2λ²/k)γ(2/k, x),
//
// so rate* = P(event)/E X and delta_var = B/(A²n), A = P(event)/rate*²,
// B = A − 2E[dX]/rate* + E X²: the truth to 1e-12 and delta_var to 1e-9
// relative, against the package's quadrature. At n = 2000 the empirical
// variance matches delta_var (4 MCSE plus 1% for the O(1/n) terms), the
// robust plug-in tracks it (5%), the model-based plug-in is off by
// (rate*²/P(event))/(n·delta_var) (5%), and the robust interval's coverage
// is the level within 4 MCSE plus 0.005 (common practice, as in
// TestMisspecExponentialFitToWeibull).
func TestMisspecCensoredExponentialFitToWeibull(t *testing.T) {
	const shape, scale, end = 1.5, 2.0, 2.5
	rows := exactRun(t, fmt.Sprintf(`seed = 626262
replicates = 10000
sample_sizes = [30, 2000]
[[arm]]
name = "m"
family = "weibull"
shape = %v
scale = %v
fit = "exponential"
[arm.censoring]
end = %v
[[arm]]
name = "r"
family = "weibull"
shape = %v
scale = %v
fit = "exponential"
variance = "robust"
[arm.censoring]
end = %v
[[transform]]
name = "rate_model"
expr = "m.rate"
[[transform]]
name = "rate_robust"
expr = "r.rate"
`, shape, scale, end, shape, scale, end))
	k, lam := shape, scale
	x := math.Pow(end/lam, k)
	lowerGamma := func(a float64) float64 { return math.Gamma(a) * mathext.GammaIncReg(a, x) }
	p := -math.Expm1(-x)
	ex := lam / k * lowerGamma(1/k)
	edx := lam * lowerGamma(1+1/k)
	ex2 := 2 * lam * lam / k * lowerGamma(2/k)
	rate := p / ex
	a := p / (rate * rate)
	sand := (a - 2*edx/rate + ex2) / (a * a)
	for _, name := range []string{"rate_model", "rate_robust"} {
		for _, n := range []int{30, 2000} {
			row := exactRow(t, rows, name, n)
			if got := row.Get(measure.Truth); math.Abs(got-rate) > 1e-12*rate {
				t.Errorf("%s truth = %.17g, want P(event)/E X = %.17g", name, got, rate)
			}
			want := sand / float64(n)
			if got := row.Get(measure.DeltaVar); math.Abs(got-want) > 1e-9*want {
				t.Errorf("%s n=%d delta_var = %.17g, want %.17g (derived)", name, n, got, want)
			}
			if got := row.Get(measure.Events); math.Abs(got-p) > 0.02 {
				t.Errorf("%s n=%d events = %.4f, P(event) = %.4f", name, n, got, p)
			}
		}
	}
	model := exactRow(t, rows, "rate_model", 2000)
	if r, se := model.Get(measure.VarRatio), model.Get(measure.VarRatioMCSE); math.Abs(r-1) > 4*se+0.01 {
		t.Errorf("n=2000 var_ratio = %.4f ± %.4f, want 1: delta_var is the sandwich", r, se)
	}
	wantModel := rate * rate / p / sand
	if got := model.Get(measure.PluginRatio); math.Abs(got-wantModel) > 0.05*wantModel {
		t.Errorf("n=2000 model-based plugin_ratio = %.4f, want about (rate*²/P(event))/sandwich = %.4f (derived)", got, wantModel)
	}
	robust := exactRow(t, rows, "rate_robust", 2000)
	if got := robust.Get(measure.PluginRatio); math.Abs(got-1) > 0.05 {
		t.Errorf("n=2000 robust plugin_ratio = %.4f, want about 1", got)
	}
	if c, se := robust.Get(measure.Coverage), robust.Get(measure.CoverageMCSE); math.Abs(c-0.95) > 4*se+0.005 {
		t.Errorf("n=2000 robust coverage = %.4f ± %.4f, want 0.95", c, se)
	}
}
