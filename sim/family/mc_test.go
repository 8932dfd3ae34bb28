package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/mathext"
)

type mcCase struct {
	family string
	values map[string]float64
}

// mcCases are the truths of the Monte Carlo checks, one or two per family.
var mcCases = []mcCase{
	{"normal", map[string]float64{"mean": 1, "sd": 2}},
	{"lognormal", map[string]float64{"meanlog": -0.5, "sdlog": 0.8}},
	{"exponential", map[string]float64{"rate": 2.5}},
	{"gamma", map[string]float64{"shape": 0.5, "rate": 1}},
	{"gamma", map[string]float64{"shape": 20, "rate": 3}},
	{"poisson", map[string]float64{"mean": 3.5}},
	{"bernoulli", map[string]float64{"p": 0.2}},
	{"binomial", map[string]float64{"size": 7, "p": 0.35}},
	{"bivariate_normal", map[string]float64{"mean_x": 1, "mean_y": -2, "sd_x": 1.5, "sd_y": 0.5, "rho": 0.6}},
}

// replicate draws and fits r samples of size n and returns the estimates,
// row-major r×p. Every replicate in these tests is defined; a false from
// Fit fails the test.
func replicate(t *testing.T, m Model, seed uint64, n, r int) []float64 {
	t.Helper()
	p := len(m.Truth)
	out := make([]float64, r*p)
	rng := testRand(seed)
	tr := newTrial(m, n)
	for k := range r {
		if !tr.fit(rng, n, out[k*p:(k+1)*p]) {
			t.Fatalf("Fit reported false at n = %d", n)
		}
	}
	return out
}

// TestFamilyCovMonteCarlo checks Cov against the estimator Fit actually
// computes: at n = 1000, n times the sample covariance of θ̂ over R = 4000
// replicates must match Cov(θ0). The tolerance is 4 Monte Carlo standard
// errors, the standard error of each entry being sd(n·dᵢdⱼ)/√R with d the
// centred estimates, plus 10/n of √(Σᵢᵢ Σⱼⱼ) for the O(1/n) difference
// between n·Var θ̂ and its limit (for the exponential it is exactly
// n³/((n−1)²(n−2)) − 1 ≈ 4/n, derived from nȳ ~ Gamma(n, λ)).
func TestFamilyCovMonteCarlo(t *testing.T) {
	const n, r = 1000, 4000
	for ci, c := range mcCases {
		t.Run(fmt.Sprintf("%s/%d", c.family, ci), func(t *testing.T) {
			t.Parallel()
			m := mustModel(t, c.family, c.values)
			names := estimates(t, c.family)
			p := len(m.Truth)
			est := replicate(t, m, uint64(2000+ci), n, r)
			mean := make([]float64, p)
			for k := range r {
				for i := range p {
					mean[i] += est[k*p+i] / r
				}
			}
			theta := m.Truth
			cov := make([]float64, p*p)
			m.Asymptotics.Cov(theta, cov)
			for i := range p {
				for j := i; j < p; j++ {
					prods := make([]float64, r)
					for k := range r {
						prods[k] = n * (est[k*p+i] - mean[i]) * (est[k*p+j] - mean[j])
					}
					got, se := meanSE(prods)
					scale := math.Sqrt(cov[p*i+i] * cov[p*j+j])
					if tol := 4*se + 10*scale/n; math.Abs(got-cov[p*i+j]) > tol {
						t.Errorf("%s %v: n·Cov(θ̂)[%s,%s] = %.5g ± %.2g (MCSE), Cov = %.5g",
							c.family, c.values, names[i], names[j], got, se, cov[p*i+j])
					}
				}
			}
		})
	}
}

// TestFamilyBiasMonteCarlo checks Bias at n = 100: the mean of θ̂ − θ0 over
// R replicates must match b/n within 4 Monte Carlo standard errors, plus,
// where b ≠ 0, an allowance of 10|b|/n² for the O(1/n²) remainder. (The
// remainder is exactly |b|/n² + O(n⁻³) for the exponential rate, derived
// from E λ̂ = nλ/(n−1); a 200 000-replicate exploration of the gamma at
// n = 25…200 put it near 3.5|b|/n².) Parameters with b = 0 here are
// exactly unbiased, so they get no allowance.
func TestFamilyBiasMonteCarlo(t *testing.T) {
	const n = 100
	for ci, c := range mcCases {
		t.Run(fmt.Sprintf("%s/%d", c.family, ci), func(t *testing.T) {
			t.Parallel()
			m := mustModel(t, c.family, c.values)
			names := estimates(t, c.family)
			p := len(m.Truth)
			const r = 40000
			est := replicate(t, m, uint64(3000+ci), n, r)
			theta := m.Truth
			bias := make([]float64, p)
			m.Asymptotics.Bias(theta, bias)
			d := make([]float64, r)
			for i := range p {
				for k := range r {
					d[k] = est[k*p+i] - theta[i]
				}
				got, se := meanSE(d)
				want := bias[i] / n
				tol := 4*se + 10*math.Abs(bias[i])/(n*n)
				t.Logf("%s: E θ̂ − θ = %.5g ± %.2g, b/n = %.5g, tolerance %.2g", names[i], got, se, want, tol)
				if math.Abs(got-want) > tol {
					t.Errorf("%s %v: E θ̂ − θ for %s = %.5g ± %.2g (MCSE), b/n = %.5g (tolerance %.2g)",
						c.family, c.values, names[i], got, se, want, tol)
				}
			}
		})
	}
}

// expectedSD is E σ̂ for the normal sd with divisor n,
// σ·√(2/n)·Γ(n/2)/Γ((n−1)/2) (exact: nσ̂²/σ² ~ χ²ₙ₋₁).
func expectedSD(sigma float64, n int) float64 {
	a, _ := math.Lgamma(float64(n) / 2)
	b, _ := math.Lgamma(float64(n-1) / 2)
	return sigma * math.Sqrt(2/float64(n)) * math.Exp(a-b)
}

// expectedR is E r for Pearson's r from n bivariate normal pairs,
// ρ·(2/(n−1))·[Γ(n/2)/Γ((n−1)/2)]²·₂F₁(½, ½; (n+1)/2; ρ²) (Hotelling 1953
// / Olkin & Pratt 1958, from memory), with ₂F₁ from gonum mathext.Hypergeo.
func expectedR(rho float64, n int) float64 {
	a, _ := math.Lgamma(float64(n) / 2)
	b, _ := math.Lgamma(float64(n-1) / 2)
	g := math.Exp(a - b)
	return rho * 2 / float64(n-1) * g * g * mathext.Hypergeo(0.5, 0.5, float64(n+1)/2, rho*rho)
}

// TestFamilyBiasExact compares the Monte Carlo mean of θ̂ at small n with
// exact expectations: E λ̂ = nλ/(n−1) for the exponential rate (exact:
// nȳ ~ Gamma(n, λ), so 1/ȳ is scaled inverse gamma), expectedSD for every
// sd with divisor n, and expectedR for Pearson r. Tolerance 4 MCSE: the
// references are exact, so there is no remainder.
func TestFamilyBiasExact(t *testing.T) {
	bvn := map[string]float64{"mean_x": 1, "mean_y": -2, "sd_x": 1.5, "sd_y": 0.5, "rho": 0.6}
	cases := []struct {
		name   string
		family string
		values map[string]float64
		n      int
		param  int
		want   float64
	}{
		{"exponential rate", "exponential", map[string]float64{"rate": 2.5}, 5, 0, 2.5 * 5 / 4},
		{"normal sd", "normal", map[string]float64{"mean": 1, "sd": 2}, 5, 1, expectedSD(2, 5)},
		{"lognormal sdlog", "lognormal", map[string]float64{"meanlog": 3, "sdlog": 0.8}, 5, 1, expectedSD(0.8, 5)},
		{"bivariate sd_x", "bivariate_normal", bvn, 5, 2, expectedSD(1.5, 5)},
		{"bivariate sd_y", "bivariate_normal", bvn, 5, 3, expectedSD(0.5, 5)},
		{"bivariate rho", "bivariate_normal", bvn, 10, 4, expectedR(0.6, 10)},
		{"bivariate rho<0", "bivariate_normal", map[string]float64{"mean_x": 0, "mean_y": 0, "sd_x": 1, "sd_y": 1, "rho": -0.3}, 10, 4, expectedR(-0.3, 10)},
	}
	for ci, c := range cases {
		m := mustModel(t, c.family, c.values)
		p := len(m.Truth)
		const r = 200000
		est := replicate(t, m, uint64(4000+ci), c.n, r)
		xs := make([]float64, r)
		for k := range r {
			xs[k] = est[k*p+c.param]
		}
		got, se := meanSE(xs)
		if math.Abs(got-c.want) > 4*se {
			t.Errorf("%s at n = %d: E θ̂ = %.6g ± %.2g (MCSE), exact %.6g", c.name, c.n, got, se, c.want)
		}
	}
}

// TestFamilyBiasLimit checks each first-order coefficient b against the
// exact expectations above, with no Monte Carlo: n(E θ̂ − θ) = b + c/n +
// O(n⁻²), so the Richardson combination 2·[2n(E₂ₙ − θ)] − n(Eₙ − θ) at
// n = 1000 is b to O(n⁻²), ~1e-6 of b.
func TestFamilyBiasLimit(t *testing.T) {
	const n = 1000
	rich := func(e func(int) float64, theta float64) float64 {
		return 2*(2*n*(e(2*n)-theta)) - n*(e(n)-theta)
	}
	cases := []struct {
		name   string
		family string
		values map[string]float64
		param  int
		exact  func(n int) float64
	}{
		{"exponential rate", "exponential", map[string]float64{"rate": 2.5}, 0,
			func(n int) float64 { return 2.5 * float64(n) / float64(n-1) }},
		{"normal sd", "normal", map[string]float64{"mean": 0, "sd": 2}, 1,
			func(n int) float64 { return expectedSD(2, n) }},
		{"lognormal sdlog", "lognormal", map[string]float64{"meanlog": 0, "sdlog": 0.8}, 1,
			func(n int) float64 { return expectedSD(0.8, n) }},
		{"bivariate sd_y", "bivariate_normal", map[string]float64{"mean_x": 0, "mean_y": 0, "sd_x": 1, "sd_y": 3, "rho": 0.6}, 3,
			func(n int) float64 { return expectedSD(3, n) }},
	}
	for _, rho := range []float64{-0.9, -0.3, 0.6, 0.95} {
		cases = append(cases, struct {
			name   string
			family string
			values map[string]float64
			param  int
			exact  func(n int) float64
		}{fmt.Sprintf("bivariate rho=%g", rho), "bivariate_normal",
			map[string]float64{"mean_x": 0, "mean_y": 0, "sd_x": 1, "sd_y": 1, "rho": rho}, 4,
			func(n int) float64 { return expectedR(rho, n) }})
	}
	for _, c := range cases {
		m := mustModel(t, c.family, c.values)
		theta, bias := m.Truth, make([]float64, len(m.Truth))
		m.Asymptotics.Bias(theta, bias)
		got := rich(c.exact, theta[c.param])
		// 1e-4 of |b| covers the O(n⁻²) term and the ~1e-9 relative
		// rounding of the Gamma-function ratio.
		if math.Abs(got-bias[c.param]) > 1e-4*math.Abs(bias[c.param]) {
			t.Errorf("%s: limit of n(E θ̂ − θ) = %.8g, Bias = %.8g", c.name, got, bias[c.param])
		}
	}
}
