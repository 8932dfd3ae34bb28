package family

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat/distuv"
)

// Checks of the gamma fit of other families' data (gamma_misfit.go), the
// log-scale moments of gamma data (the lognormal fit's) and the polygamma
// functions behind them, against sources outside the code under test.

// zeta3 is ζ(3) = 1.2020569031595942854 (DLMF 25.6, from memory; the same
// constant law.go states).
const zeta3 = 1.2020569031595942854

// TestPolygammaConstants holds ψ2 and ψ3 at 1 and 1/2 against
// ψ⁽ⁿ⁾(1) = (−1)ⁿ⁺¹n!ζ(n+1) and ψ⁽ⁿ⁾(1/2) = (−1)ⁿ⁺¹n!(2ⁿ⁺¹ − 1)ζ(n+1)
// (DLMF 5.15.2, 5.15.3), with ζ(4) = π⁴/90 (DLMF 25.6.1), to 2e-15
// relative.
func TestPolygammaConstants(t *testing.T) {
	pi4 := math.Pi * math.Pi * math.Pi * math.Pi
	for _, c := range []struct {
		what      string
		got, want float64
	}{
		{"ψ2(1)", tetragamma(1), -2 * zeta3},
		{"ψ2(1/2)", tetragamma(0.5), -2 * 7 * zeta3},
		{"ψ3(1)", pentagamma(1), 6 * pi4 / 90},
		{"ψ3(1/2)", pentagamma(0.5), 6 * 15 * pi4 / 90},
	} {
		if math.Abs(c.got-c.want) > 2e-15*math.Abs(c.want) {
			t.Errorf("%s = %.17g, DLMF gives %.17g", c.what, c.got, c.want)
		}
	}
	if !math.IsNaN(pentagamma(0)) || !math.IsNaN(pentagamma(-1)) {
		t.Error("pentagamma outside x > 0 is not NaN")
	}
}

// logGammaNodes integrates over u = log y with the trapezoid rule, weights
// from gonum's Gamma(shape, 1) density, on a range that leaves out mass
// below e⁻⁶⁰ on the left (y^shape < e⁻⁶⁰) and far beyond 60 sds on the
// right; the integrand is analytic and decays at both ends, so the rule
// converges geometrically in the number of nodes.
func logGammaNodes(shape float64, k int) []node {
	lo := -60 / shape
	hi := math.Log(shape + 60*math.Sqrt(shape) + 60)
	out := logTrapezoidNodes(k, lo, hi, distuv.Gamma{Alpha: shape, Beta: 1}.Prob)
	for i := range out {
		out[i].y[0] = lo + (hi-lo)*float64(i)/float64(k-1) // u = log y, exactly the node's abscissa
	}
	return out
}

// TestPentagammaHurwitz compares ψ3 with the Hurwitz zeta function,
// ψ3(x) = 6ζ(4, x) (DLMF 25.11.12, ψ⁽ⁿ⁾(x) = (−1)ⁿ⁺¹n!ζ(n+1, x)),
// evaluated by gonum mathext.Zeta, across the recurrence/series switch,
// to 1e-13 relative as TestGammaPolygammaHurwitz holds ψ1 and ψ2.
func TestPentagammaHurwitz(t *testing.T) {
	for _, x := range []float64{1e-6, 1e-3, 0.05, 0.5, 1.5, 3.3, 9.99, 10, 10.01, 47, 1e3, 1e6} {
		want := 6 * mathext.Zeta(4, x)
		if e := relErr(pentagamma(x), want); e > 1e-13 {
			t.Errorf("pentagamma(%g) = %.17g, 6ζ(4, x) = %.17g (rel. error %.2g)", x, pentagamma(x), want, e)
		}
	}
}

// TestPolygammaQuadrature: the cumulants of log y for y ~ Gamma(α, 1) are
// ψ(α), ψ1(α), ψ2(α) and ψ3(α) (derived from E yᵗ = Γ(α+t)/Γ(α)), so the
// mean and central moments of log y by quadrature of gonum's gamma
// density give ψ, ψ1, ψ2 and ψ3 = μ4 − 3μ2². ψ1 is held to 1e-12
// relative; ψ to 1e-12 of max(|ψ|, sd), ψ2 to 1e-12 of max(|ψ2|, sd³)
// and ψ3 to 1e-12 of μ4, the scales their quadrature sums round on (ψ3
// alone is held to 1e-13 relative by TestPentagammaHurwitz).
func TestPolygammaQuadrature(t *testing.T) {
	for _, a := range []float64{0.05, 0.3, 1, 2.5, 7, 12, 40} {
		mo := nodeMoments(logGammaNodes(a, 40000))
		sd := math.Sqrt(mo.m2)
		for _, c := range []struct {
			what      string
			got, want float64
			unit      float64
		}{
			{"ψ", digamma(a), mo.mean, math.Max(math.Abs(mo.mean), sd)},
			{"ψ1", trigamma(a), mo.m2, mo.m2},
			{"ψ2", tetragamma(a), mo.m3, math.Max(math.Abs(mo.m3), sd*sd*sd)},
			{"ψ3", pentagamma(a), mo.m4 - 3*mo.m2*mo.m2, math.Max(mo.m4-3*mo.m2*mo.m2, mo.m4)},
		} {
			if math.Abs(c.got-c.want) > 1e-12*c.unit {
				t.Errorf("%s(%g) = %.15g, quadrature of gonum distuv.Gamma gives %.15g (diff %.2g of unit %.3g)", c.what, a, c.got, c.want, c.got-c.want, c.unit)
			}
		}
	}
}

// TestGammaFitLawMoments holds the closed-form log E y − E log y,
// Cov(y, log y) and Var y of every law a gamma fit reads against the sums
// and quadratures of lawCases (gonum densities), to 1e-9 relative.
func TestGammaFitLawMoments(t *testing.T) {
	seen := map[string]bool{}
	for _, c := range lawCases() {
		f, _ := Lookup(c.family)
		l, _ := f.law(c.values)
		gl, ok := l.(gammaFitLaw)
		if !ok {
			continue
		}
		seen[c.family] = true
		var w, ey, el, eyl float64
		for _, nd := range c.nodes {
			y := nd.y[0]
			w += nd.w
			ey += nd.w * y
			el += nd.w * math.Log(y)
		}
		ey, el = ey/w, el/w
		var vy, vl float64
		for _, nd := range c.nodes {
			e, d := nd.y[0]-ey, math.Log(nd.y[0])-el
			eyl += nd.w * e * d
			vy += nd.w * e * e
			vl += nd.w * d * d
		}
		eyl, vy, vl = eyl/w, vy/w, vl/w
		gap := math.Log(ey) - el
		if got := gl.logMeanGap(); math.Abs(got-gap) > 1e-9*gap {
			t.Errorf("%s %v: log E y − E log y = %.14g, %s gives %.14g", c.family, c.values, got, c.source, gap)
		}
		if got := gl.covYLogY(); math.Abs(got-eyl) > 1e-9*math.Sqrt(vy*vl) {
			t.Errorf("%s %v: Cov(y, log y) = %.14g, %s gives %.14g", c.family, c.values, got, c.source, eyl)
		}
		if got := gl.varY(); math.Abs(got-vy) > 1e-9*vy {
			t.Errorf("%s %v: Var y = %.14g, %s gives %.14g", c.family, c.values, got, c.source, vy)
		}
	}
	for _, name := range []string{"exponential", "weibull", "lognormal", "gamma"} {
		if !seen[name] {
			t.Errorf("no law case checks the %s law's gamma-fit moments", name)
		}
	}
}

// buildFit builds the model of data fitted as fit with variance v.
func buildFit(t *testing.T, data string, values map[string]float64, fit string, v Variance) Model {
	t.Helper()
	d, _ := Lookup(data)
	f, _ := Lookup(fit)
	m, err := Build(d, values, f, v)
	if err != nil {
		t.Fatalf("%s data, %s fit: %v", data, fit, err)
	}
	return m
}

// TestGammaFitOfItsOwnFamilies: where the data law is a gamma (the
// exponential is the gamma of shape 1, and a Weibull of shape 1 is that
// exponential), θ* is the data's own parameter, the sandwich is the
// inverse Fisher information (information equality, B = A) and the bias
// is the Cox–Snell bias of the gamma family's own MLE (gammaModel, held
// against diff/fd and Monte Carlo in gamma_test.go and cov_test.go). The
// Weibull case goes through the root-finding of θ*, which must give the
// shape 1 to rounding.
func TestGammaFitOfItsOwnFamilies(t *testing.T) {
	cases := []struct {
		data   string
		values map[string]float64
		shape  float64
		rate   float64
		tol    float64
	}{
		{"gamma", map[string]float64{"shape": 2.5, "rate": 3}, 2.5, 3, 0},
		{"gamma", map[string]float64{"shape": 0.02, "rate": 40}, 0.02, 40, 0},
		{"gamma", map[string]float64{"shape": 3e4, "rate": 0.5}, 3e4, 0.5, 0},
		{"exponential", map[string]float64{"rate": 0.7}, 1, 0.7, 0},
		{"weibull", map[string]float64{"shape": 1, "scale": 4}, 1, 0.25, 1e-14},
	}
	for _, c := range cases {
		m := buildFit(t, c.data, c.values, "gamma", RobustVariance)
		own := mustModel(t, "gamma", map[string]float64{"shape": c.shape, "rate": c.rate})
		name := fmt.Sprintf("%s %v fitted as gamma", c.data, c.values)
		if math.Abs(m.Truth[0]-c.shape) > c.tol*c.shape || math.Abs(m.Truth[1]-c.rate) > c.tol*c.rate {
			t.Errorf("%s: θ* = %v, want (%g, %g)", name, m.Truth, c.shape, c.rate)
		}
		got, want := make([]float64, 4), make([]float64, 4)
		m.Asymptotics.Cov(m.Truth, got)
		own.Asymptotics.Cov(own.Truth, want)
		for i := range got {
			unit := math.Sqrt(want[(i/2)*3] * want[(i%2)*3])
			if math.Abs(got[i]-want[i]) > 1e-9*unit {
				t.Errorf("%s: sandwich[%d] = %.15g, inverse Fisher information %.15g", name, i, got[i], want[i])
			}
		}
		gb, wb := make([]float64, 2), make([]float64, 2)
		m.Asymptotics.Bias(m.Truth, gb)
		own.Asymptotics.Bias(own.Truth, wb)
		for i := range gb {
			if math.Abs(gb[i]-wb[i]) > 1e-9*math.Abs(wb[i]) {
				t.Errorf("%s: bias[%d] = %.15g, Cox–Snell %.15g", name, i, gb[i], wb[i])
			}
		}
	}
}

// TestGammaPseudoTrueRoot: θ* solves log α − ψ(α) = log E y − E log y to
// rounding, and the rate is α*/E y, for laws where the root is not known
// in closed form (the residual of the shape equation, relative, and the
// law's mean from its closed-form moments).
func TestGammaPseudoTrueRoot(t *testing.T) {
	for _, c := range []struct {
		data   string
		values map[string]float64
	}{
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}},
		{"weibull", map[string]float64{"shape": 40, "scale": 1e5}},
		{"weibull", map[string]float64{"shape": 0.3, "scale": 1e-4}},
		{"lognormal", map[string]float64{"meanlog": 30, "sdlog": 0.01}},
		{"lognormal", map[string]float64{"meanlog": -1, "sdlog": 2}},
	} {
		m := buildFit(t, c.data, c.values, "gamma", ModelVariance)
		d, _ := Lookup(c.data)
		l, _ := d.law(c.values)
		gl := l.(gammaFitLaw)
		gap := gl.logMeanGap()
		a := m.Truth[0]
		if r := logMinusDigamma(a) - gap; math.Abs(r) > 1e-14*gap {
			t.Errorf("%s %v: shape equation residual %.3g at α* = %.17g (right side %.17g)", c.data, c.values, r, a, gap)
		}
		if want := a / l.moments().mean; math.Abs(m.Truth[1]-want) > 1e-15*want {
			t.Errorf("%s %v: rate* = %.17g, α*/E y = %.17g", c.data, c.values, m.Truth[1], want)
		}
	}
}

// TestGammaFitOtherVariance: on the same sample, the fit with the model
// variance and EnableOther gives as its other covariance exactly the
// robust fit's covariance, and the other way round (the draws and θ̂ do
// not depend on the variance chosen).
func TestGammaFitOtherVariance(t *testing.T) {
	for _, c := range []struct {
		data   string
		values map[string]float64
	}{
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}},
		{"lognormal", map[string]float64{"meanlog": 0.5, "sdlog": 0.8}},
		{"exponential", map[string]float64{"rate": 3}},
	} {
		model := buildFit(t, c.data, c.values, "gamma", ModelVariance)
		robust := buildFit(t, c.data, c.values, "gamma", RobustVariance)
		tm, tr := newTrial(model, 60), newTrial(robust, 60)
		om, ok1 := tm.fitter.(OtherVariance)
		or, ok2 := tr.fitter.(OtherVariance)
		if !ok1 || !ok2 {
			t.Fatalf("%s: the gamma fitter does not offer the other variance", c.data)
		}
		om.EnableOther()
		or.EnableOther()
		thm, thr := make([]float64, 2), make([]float64, 2)
		otherM, otherR := make([]float64, 4), make([]float64, 4)
		for rep := range 50 {
			okm := tm.fit(testRand(uint64(7000+rep)), 60, thm)
			okr := tr.fit(testRand(uint64(7000+rep)), 60, thr)
			if !okm || !okr {
				t.Fatalf("%s rep %d: fit failed", c.data, rep)
			}
			if !om.OtherCov(otherM) || !or.OtherCov(otherR) {
				t.Fatalf("%s rep %d: no other covariance", c.data, rep)
			}
			for i := range 4 {
				if otherM[i] != tr.cov[i] || otherR[i] != tm.cov[i] {
					t.Fatalf("%s rep %d: model fit's other %v vs robust cov %v; robust fit's other %v vs model cov %v", c.data, rep, otherM, tr.cov, otherR, tm.cov)
				}
			}
			if thm[0] != thr[0] || thm[1] != thr[1] {
				t.Fatalf("%s rep %d: θ̂ differs between the variances", c.data, rep)
			}
		}
	}
}

// TestGammaFitUndefined: below two observations, when all observations
// are equal, or when ȳ ≤ 0, the gamma likelihood has no maximum and Fit
// reports false.
func TestGammaFitUndefined(t *testing.T) {
	m := buildFit(t, "weibull", map[string]float64{"shape": 1.5, "scale": 2}, "gamma", RobustVariance)
	tr := newTrial(m, 10)
	theta := make([]float64, 2)
	if tr.fit(testRand(1), 1, theta) {
		t.Error("a gamma fit of one observation reported a value")
	}
	// Two observations both equal to E y: e = 0 and l = log E y − E log y,
	// the law's gap, so log ȳ − mean(log y) is exactly 0.
	gap := m.Estimator.(*gammaFitModel).gap
	s := Sample{N: 2, Data: []float64{0, 2 * gap, 0, 2 * gap * gap, 0}}
	if tr.fitter.Fit(&s, theta, tr.cov) {
		t.Errorf("a gamma fit of two equal observations reported θ̂ = %v", theta)
	}
	// A sample mean that is not positive has no gamma fit either.
	cy := m.Estimator.(*gammaFitModel).cy
	s = Sample{N: 2, Data: []float64{-3 * cy, 0, 4.5 * cy * cy, 0, 0}}
	if tr.fitter.Fit(&s, theta, tr.cov) {
		t.Errorf("a gamma fit of a sample with ȳ < 0 reported θ̂ = %v", theta)
	}
}

// TestGammaFitRefused: the gamma fit needs positive values; counts and
// real-valued data are refused with a message naming what it accepts.
func TestGammaFitRefused(t *testing.T) {
	fit, _ := Lookup("gamma")
	for _, c := range []struct {
		data   string
		values map[string]float64
	}{
		{"negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}},
		{"normal", map[string]float64{"mean": 1, "sd": 2}},
	} {
		d, _ := Lookup(c.data)
		_, err := Build(d, c.values, fit, ModelVariance)
		if err == nil {
			t.Errorf("%s data fitted as gamma: no error", c.data)
			continue
		}
		if want := "exponential, gamma, lognormal, weibull"; !strings.Contains(err.Error(), want) {
			t.Errorf("%s data fitted as gamma: %q does not name %q", c.data, err, want)
		}
	}
}

// BenchmarkGammaMisfitReplicate draws and fits one replicate of 40
// Weibull observations fitted as gamma with the robust variance and the
// other variance enabled; run with -benchmem to see 0 allocs/op.
func BenchmarkGammaMisfitReplicate(b *testing.B) {
	d, _ := Lookup("weibull")
	f, _ := Lookup("gamma")
	m, err := Build(d, map[string]float64{"shape": 1.5, "scale": 2}, f, RobustVariance)
	if err != nil {
		b.Fatal(err)
	}
	tr := newTrial(m, 40)
	tr.fitter.(OtherVariance).EnableOther()
	rng := testRand(3)
	theta := make([]float64, 2)
	b.ReportAllocs()
	for b.Loop() {
		tr.fit(rng, 40, theta)
	}
}

// TestGammaFitMeanIsUnbiased: the gamma MLE has α̂/β̂ = ȳ exactly, and
// E ȳ = E y, so the O(1/n) bias of τ = α/β vanishes under every law. The
// second-order delta method gives that bias as ∇τ·b + ½ Σᵢⱼ ∂²τ/∂θᵢ∂θⱼ Σᵢⱼ
// (b the model's Bias, Σ its sandwich; ∇τ = (1/β, −α/β²), ∂²τ/∂α² = 0,
// ∂²τ/∂α∂β = −1/β², ∂²τ/∂β² = 2α/β³), which must be zero to rounding:
// a check of the derived bias that does not depend on Monte Carlo.
func TestGammaFitMeanIsUnbiased(t *testing.T) {
	for _, c := range []struct {
		data   string
		values map[string]float64
	}{
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}},
		{"weibull", map[string]float64{"shape": 0.5, "scale": 10}},
		{"lognormal", map[string]float64{"meanlog": 0.5, "sdlog": 1.2}},
		{"exponential", map[string]float64{"rate": 3}},
		{"gamma", map[string]float64{"shape": 0.3, "rate": 2}},
	} {
		m := buildFit(t, c.data, c.values, "gamma", RobustVariance)
		a, b := m.Truth[0], m.Truth[1]
		sig, bias := make([]float64, 4), make([]float64, 2)
		m.Asymptotics.Cov(m.Truth, sig)
		m.Asymptotics.Bias(m.Truth, bias)
		first := bias[0]/b - a*bias[1]/(b*b)
		second := 0.5 * (-2*sig[1]/(b*b) + 2*a*sig[3]/(b*b*b))
		scale := math.Abs(first) + math.Abs(second)
		if got := first + second; math.Abs(got) > 1e-12*scale {
			t.Errorf("%s %v: second-order bias of shape/rate = %.3g (terms %.6g and %.6g), want 0", c.data, c.values, got, first, second)
		}
	}
}

// TestGammaFitPlugInMonteCarlo: at n = 2000 the mean of the robust
// plug-in (the sandwich from each sample) matches the sandwich at θ*,
// and the mean of the model-based plug-in matches A⁻¹ at θ* (the inverse
// gamma information, gammaModel.Cov at θ*), each within 4 Monte Carlo
// standard errors plus an O(1/n) allowance of 10/n of the entry's scale
// (common practice, as TestMisfitMonteCarlo). Under these misfits the two
// differ by more than 10% of an entry's scale, so the check tells them
// apart.
func TestGammaFitPlugInMonteCarlo(t *testing.T) {
	for ci, c := range []struct {
		data   string
		values map[string]float64
	}{
		{"weibull", map[string]float64{"shape": 0.8, "scale": 5}},
		{"lognormal", map[string]float64{"meanlog": 0.5, "sdlog": 0.6}},
	} {
		m := buildFit(t, c.data, c.values, "gamma", RobustVariance)
		sand := make([]float64, 4)
		m.Asymptotics.Cov(m.Truth, sand)
		inv := make([]float64, 4)
		mustModel(t, "gamma", map[string]float64{"shape": m.Truth[0], "rate": m.Truth[1]}).Asymptotics.Cov(m.Truth, inv)
		const n, r = 2000, 400
		tr := newTrial(m, n)
		tr.fitter.(OtherVariance).EnableOther()
		rng := testRand(8100 + uint64(ci))
		theta, other := make([]float64, 2), make([]float64, 4)
		rob, mod := make([][]float64, 4), make([][]float64, 4)
		for range r {
			if !tr.fit(rng, n, theta) || !tr.fitter.(OtherVariance).OtherCov(other) {
				t.Fatalf("%s: fit failed", c.data)
			}
			for i := range 4 {
				rob[i] = append(rob[i], tr.cov[i])
				mod[i] = append(mod[i], other[i])
			}
		}
		apart := 0.0
		for i := range 4 {
			unit := math.Sqrt(sand[(i/2)*3] * sand[(i%2)*3])
			for _, x := range []struct {
				what string
				xs   []float64
				want float64
			}{{"robust plug-in", rob[i], sand[i]}, {"model plug-in", mod[i], inv[i]}} {
				got, se := meanSE(x.xs)
				if math.Abs(got-x.want) > 4*se+10*unit/n {
					t.Errorf("%s fitted as gamma: mean %s[%d] = %.6g ± %.2g (MCSE), want %.6g", c.data, x.what, i, got, se, x.want)
				}
			}
			apart = max(apart, math.Abs(sand[i]-inv[i])/unit)
		}
		if apart < 0.1 {
			t.Errorf("%s: sandwich %v and A⁻¹ %v too close for the check to tell them apart", c.data, sand, inv)
		}
	}
}
