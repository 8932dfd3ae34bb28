package sim

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// expectation computes E f(Y) for one observation Y (one or two numbers).
type expectation func(f func(y []float64) float64) float64

// hermiteExpect integrates over Y = g(Z), Z ~ N(0,1), with the k-point
// Gauss–Hermite rule from gonum integrate/quad: E f(Z) = Σ wᵢ f(√2 xᵢ)/√π.
// It is exact when f∘g is a polynomial of degree < 2k, as the Hessians of
// the normal and lognormal log-densities are (quadratic in Z).
func hermiteExpect(k int, g func(z float64) float64) expectation {
	x, w := make([]float64, k), make([]float64, k)
	quad.Hermite{}.FixedLocations(x, w, math.Inf(-1), math.Inf(1))
	return func(f func([]float64) float64) float64 {
		var s float64
		for i := range x {
			s += w[i] * f([]float64{g(math.Sqrt2 * x[i])})
		}
		return s / math.SqrtPi
	}
}

// hermite2Expect is the tensor-product rule for a pair from two
// independent standard normals.
func hermite2Expect(k int, g func(z1, z2 float64) (float64, float64)) expectation {
	x, w := make([]float64, k), make([]float64, k)
	quad.Hermite{}.FixedLocations(x, w, math.Inf(-1), math.Inf(1))
	return func(f func([]float64) float64) float64 {
		var s float64
		for i := range x {
			for j := range x {
				a, b := g(math.Sqrt2*x[i], math.Sqrt2*x[j])
				s += w[i] * w[j] * f([]float64{a, b})
			}
		}
		return s / math.Pi
	}
}

// quantileExpect integrates E f(Y) = ∫₀¹ f(F⁻¹(u)) du with the k-point
// Gauss–Legendre rule; the gamma and exponential Hessians do not depend on
// y, so any rule is exact for them.
func quantileExpect(k int, quantile func(float64) float64) expectation {
	x, w := make([]float64, k), make([]float64, k)
	quad.Legendre{}.FixedLocations(x, w, 0, 1)
	return func(f func([]float64) float64) float64 {
		var s float64
		for i := range x {
			s += w[i] * f([]float64{quantile(x[i])})
		}
		return s
	}
}

// sumExpect sums over the integer support lo…hi with gonum's pmf.
func sumExpect(lo, hi int, prob func(float64) float64) expectation {
	return func(f func([]float64) float64) float64 {
		var s float64
		for k := lo; k <= hi; k++ {
			if p := prob(float64(k)); p > 0 {
				s += p * f([]float64{float64(k)})
			}
		}
		return s
	}
}

type fisherCase struct {
	family string
	values map[string]float64
	// logDensity is log f(y; θ), from gonum's distributions.
	logDensity func(theta, y []float64) float64
	expect     expectation
}

func fisherCases() []fisherCase {
	var cases []fisherCase
	add := func(c fisherCase) { cases = append(cases, c) }
	for _, v := range []struct{ mean, sd float64 }{{0.5, 1.3}, {-4, 0.2}} {
		add(fisherCase{"normal", map[string]float64{"mean": v.mean, "sd": v.sd},
			func(th, y []float64) float64 { return distuv.Normal{Mu: th[0], Sigma: th[1]}.LogProb(y[0]) },
			hermiteExpect(20, func(z float64) float64 { return v.mean + v.sd*z })})
		add(fisherCase{"lognormal", map[string]float64{"meanlog": v.mean, "sdlog": v.sd},
			func(th, y []float64) float64 { return distuv.LogNormal{Mu: th[0], Sigma: th[1]}.LogProb(y[0]) },
			hermiteExpect(20, func(z float64) float64 { return math.Exp(v.mean + v.sd*z) })})
	}
	for _, rate := range []float64{0.4, 3} {
		add(fisherCase{"exponential", map[string]float64{"rate": rate},
			func(th, y []float64) float64 { return distuv.Exponential{Rate: th[0]}.LogProb(y[0]) },
			quantileExpect(20, distuv.Exponential{Rate: rate}.Quantile)})
	}
	for _, v := range []struct{ shape, rate float64 }{{0.3, 1.5}, {2, 0.7}, {60, 4}} {
		add(fisherCase{"gamma", map[string]float64{"shape": v.shape, "rate": v.rate},
			func(th, y []float64) float64 { return distuv.Gamma{Alpha: th[0], Beta: th[1]}.LogProb(y[0]) },
			quantileExpect(20, distuv.Gamma{Alpha: v.shape, Beta: v.rate}.Quantile)})
	}
	for _, mean := range []float64{0.6, 4, 150} {
		hi := int(mean + 40*math.Sqrt(mean) + 40) // beyond it the mass is < 1e-300
		add(fisherCase{"poisson", map[string]float64{"mean": mean},
			func(th, y []float64) float64 { return distuv.Poisson{Lambda: th[0]}.LogProb(y[0]) },
			sumExpect(0, hi, distuv.Poisson{Lambda: mean}.Prob)})
	}
	for _, p := range []float64{0.3, 0.92} {
		add(fisherCase{"bernoulli", map[string]float64{"p": p},
			func(th, y []float64) float64 { return distuv.Bernoulli{P: th[0]}.LogProb(y[0]) },
			sumExpect(0, 1, distuv.Bernoulli{P: p}.Prob)})
	}
	for _, v := range []struct{ size, p float64 }{{1, 0.4}, {12, 0.25}, {300, 0.6}} {
		add(fisherCase{"binomial", map[string]float64{"size": v.size, "p": v.p},
			func(th, y []float64) float64 { return distuv.Binomial{N: v.size, P: th[0]}.LogProb(y[0]) },
			sumExpect(0, int(v.size), distuv.Binomial{N: v.size, P: v.p}.Prob)})
	}
	for _, v := range [][5]float64{{1, -2, 1.5, 0.5, 0.6}, {0, 0, 1, 3, -0.85}, {2, 1, 0.7, 0.7, 0}} {
		mx, my, sx, sy, rho := v[0], v[1], v[2], v[3], v[4]
		add(fisherCase{"bivariate_normal",
			map[string]float64{"mean_x": mx, "mean_y": my, "sd_x": sx, "sd_y": sy, "rho": rho},
			// f(x, y) = f(x)·f(y | x), y | x ~ N(μy + ρσy(x−μx)/σx, σy²(1−ρ²))
			// (derived), both factors from gonum distuv.Normal.
			func(th, y []float64) float64 {
				c := math.Sqrt(1 - th[4]*th[4])
				return distuv.Normal{Mu: th[0], Sigma: th[2]}.LogProb(y[0]) +
					distuv.Normal{Mu: th[1] + th[4]*th[3]*(y[0]-th[0])/th[2], Sigma: th[3] * c}.LogProb(y[1])
			},
			hermite2Expect(12, func(z1, z2 float64) (float64, float64) {
				return mx + sx*z1, my + sy*(rho*z1+math.Sqrt(1-rho*rho)*z2)
			})})
	}
	return cases
}

// TestFamilyCovFisher compares Cov with the inverse of the expected Fisher
// information of one observation, −E[∂²log f/∂θ∂θᵀ], built independently:
// the Hessian of gonum's log-density by gonum diff/fd central differences,
// its expectation by exact quadrature or summation over the support.
func TestFamilyCovFisher(t *testing.T) {
	for _, c := range fisherCases() {
		m := mustModel(t, c.family, c.values)
		p := len(m.Params())
		theta := make([]float64, p)
		m.Truth(theta)
		// Differences are taken in θᵢ = θ0ᵢ + sᵢuᵢ with sᵢ each
		// parameter's scale (see paramScale) and step 1e-3 in u.
		sc := paramScale(theta)
		info := mat.NewSymDense(p, nil)
		var h1, h2 mat.SymDense
		th := make([]float64, p)
		origin := make([]float64, p)
		for i := range p {
			for j := i; j < p; j++ {
				info.SetSym(i, j, -c.expect(func(y []float64) float64 {
					f := func(u []float64) float64 {
						for k := range th {
							th[k] = theta[k] + sc[k]*u[k]
						}
						return c.logDensity(th, y)
					}
					// Central differences applied twice have error
					// ~(2h)²/12·∂⁴f; Richardson's (4H(h/2) − H(h))/3
					// cancels that term, leaving O(h⁴).
					fd.Hessian(&h1, f, origin, &fd.Settings{Formula: fd.Central, Step: 1e-3})
					fd.Hessian(&h2, f, origin, &fd.Settings{Formula: fd.Central, Step: 5e-4})
					return (4*h2.At(i, j) - h1.At(i, j)) / 3 / (sc[i] * sc[j])
				}))
			}
		}
		var chol mat.Cholesky
		if !chol.Factorize(info) {
			t.Fatalf("%s %v: information not positive definite: %v", c.family, c.values, mat.Formatted(info))
		}
		var ref mat.SymDense
		if err := chol.InverseTo(&ref); err != nil {
			t.Fatal(err)
		}
		cov := make([]float64, p*p)
		m.Cov(theta, cov)
		name := fmt.Sprintf("%s %v", c.family, c.values)
		for i := range p {
			for j := range p {
				// With h at 1e-3 of each parameter's scale the extrapolated
				// truncation is ~h⁴ ≈ 1e-12 relative; rounding, ~ε·|log f|/h²
				// ≈ 1e-10 relative for |log f| up to ~10³, dominates, and
				// inverting an information matrix with condition number up
				// to ~10³ (rho = −0.85, shape 60) magnifies it. 1e-6 of the
				// scale √(Σᵢᵢ Σⱼⱼ) covers that.
				scale := math.Sqrt(ref.At(i, i) * ref.At(j, j))
				if d := math.Abs(cov[p*i+j] - ref.At(i, j)); d > 1e-6*scale {
					t.Errorf("%s: Cov[%d,%d] = %.10g, inverse Fisher information %.10g", name, i, j, cov[p*i+j], ref.At(i, j))
				}
			}
		}
	}
}

// paramScale gives each parameter the scale of its differences: its
// distance to 0 and, for p and rho (|θ| < 1), to ±1; 1 for a zero mean.
// The means' log-density is quadratic in them, so their scale only has
// to avoid cancellation.
func paramScale(theta []float64) []float64 {
	sc := make([]float64, len(theta))
	for i, v := range theta {
		s := math.Abs(v)
		if s < 1 {
			s = math.Min(s, 1-s)
		}
		if s == 0 {
			s = 1
		}
		sc[i] = s
	}
	return sc
}
