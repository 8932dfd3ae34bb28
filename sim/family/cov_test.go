package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// node is a quadrature node: one observation y (one or two numbers) and
// its weight; a node list integrates E f(Y) ≈ Σ w·f(y).
type node struct {
	y []float64
	w float64
}

// hermiteNodes integrates over Y = g(Z), Z ~ N(0,1), with the k-point
// Gauss–Hermite rule from gonum integrate/quad: E f(Z) = Σ wᵢ f(√2 xᵢ)/√π.
// It is exact when f∘g is a polynomial of degree < 2k, as the derivatives
// of the normal and lognormal log-densities and their products are (of
// degree ≤ 4 in Z).
func hermiteNodes(k int, g func(z float64) float64) []node {
	x, w := make([]float64, k), make([]float64, k)
	quad.Hermite{}.FixedLocations(x, w, math.Inf(-1), math.Inf(1))
	out := make([]node, k)
	for i := range x {
		out[i] = node{[]float64{g(math.Sqrt2 * x[i])}, w[i] / math.SqrtPi}
	}
	return out
}

// hermite2Nodes is the tensor-product rule for a pair from two
// independent standard normals.
func hermite2Nodes(k int, g func(z1, z2 float64) (float64, float64)) []node {
	x, w := make([]float64, k), make([]float64, k)
	quad.Hermite{}.FixedLocations(x, w, math.Inf(-1), math.Inf(1))
	var out []node
	for i := range x {
		for j := range x {
			a, b := g(math.Sqrt2*x[i], math.Sqrt2*x[j])
			out = append(out, node{[]float64{a, b}, w[i] * w[j] / math.Pi})
		}
	}
	return out
}

// logTrapezoidNodes integrates E f(Y) for a density on (0, ∞) as
// ∫ f(eᵗ) p(eᵗ) eᵗ dt by the trapezoidal rule with k points on [lo, hi],
// p from gonum. On the log scale the gamma integrand is smooth and decays
// exponentially at both ends, where the trapezoidal rule converges
// geometrically in the step (common practice); the ends are chosen below
// so that the omitted mass is below 1e-17.
func logTrapezoidNodes(k int, lo, hi float64, prob func(float64) float64) []node {
	h := (hi - lo) / float64(k-1)
	out := make([]node, k)
	for i := range out {
		y := math.Exp(lo + h*float64(i))
		w := h * prob(y) * y
		if i == 0 || i == k-1 {
			w /= 2
		}
		out[i] = node{[]float64{y}, w}
	}
	return out
}

// gammaNodes covers log y from where y^shape ≈ e⁻⁴⁰ to 40 sds above the
// mean.
func gammaNodes(shape, rate float64, prob func(float64) float64) []node {
	lo := -40/shape + math.Log(1/rate)
	hi := math.Log((shape + 40*math.Sqrt(shape) + 40) / rate)
	return logTrapezoidNodes(4000, lo, hi, prob)
}

// supportNodes sums over the integer support lo…hi with gonum's pmf.
func supportNodes(lo, hi int, prob func(float64) float64) []node {
	var out []node
	for k := lo; k <= hi; k++ {
		if p := prob(float64(k)); p > 0 {
			out = append(out, node{[]float64{float64(k)}, p})
		}
	}
	return out
}

type fisherCase struct {
	family string
	values map[string]float64
	// logDensity is log f(y; θ), from gonum's distributions.
	logDensity func(theta, y []float64) float64
	nodes      []node
}

func fisherCases() []fisherCase {
	var cases []fisherCase
	add := func(c fisherCase) { cases = append(cases, c) }
	for _, v := range []struct{ mean, sd float64 }{{0.5, 1.3}, {-4, 0.2}} {
		add(fisherCase{"normal", map[string]float64{"mean": v.mean, "sd": v.sd},
			func(th, y []float64) float64 { return distuv.Normal{Mu: th[0], Sigma: th[1]}.LogProb(y[0]) },
			hermiteNodes(20, func(z float64) float64 { return v.mean + v.sd*z })})
		add(fisherCase{"lognormal", map[string]float64{"meanlog": v.mean, "sdlog": v.sd},
			func(th, y []float64) float64 { return distuv.LogNormal{Mu: th[0], Sigma: th[1]}.LogProb(y[0]) },
			hermiteNodes(20, func(z float64) float64 { return math.Exp(v.mean + v.sd*z) })})
	}
	for _, rate := range []float64{0.4, 3} {
		add(fisherCase{"exponential", map[string]float64{"rate": rate},
			func(th, y []float64) float64 { return distuv.Exponential{Rate: th[0]}.LogProb(y[0]) },
			gammaNodes(1, rate, distuv.Exponential{Rate: rate}.Prob)})
	}
	for _, v := range []struct{ shape, rate float64 }{{0.3, 1.5}, {2, 0.7}, {60, 4}} {
		add(fisherCase{"gamma", map[string]float64{"shape": v.shape, "rate": v.rate},
			func(th, y []float64) float64 { return distuv.Gamma{Alpha: th[0], Beta: th[1]}.LogProb(y[0]) },
			gammaNodes(v.shape, v.rate, distuv.Gamma{Alpha: v.shape, Beta: v.rate}.Prob)})
	}
	for _, mean := range []float64{0.6, 4, 150} {
		hi := int(mean + 40*math.Sqrt(mean) + 40) // beyond it the mass is < 1e-300
		add(fisherCase{"poisson", map[string]float64{"mean": mean},
			func(th, y []float64) float64 { return distuv.Poisson{Lambda: th[0]}.LogProb(y[0]) },
			supportNodes(0, hi, distuv.Poisson{Lambda: mean}.Prob)})
	}
	for _, p := range []float64{0.3, 0.92} {
		add(fisherCase{"bernoulli", map[string]float64{"p": p},
			func(th, y []float64) float64 { return distuv.Bernoulli{P: th[0]}.LogProb(y[0]) },
			supportNodes(0, 1, distuv.Bernoulli{P: p}.Prob)})
	}
	for _, v := range []struct{ size, p float64 }{{1, 0.4}, {12, 0.25}, {300, 0.6}} {
		add(fisherCase{"binomial", map[string]float64{"size": v.size, "p": v.p},
			func(th, y []float64) float64 { return distuv.Binomial{N: v.size, P: th[0]}.LogProb(y[0]) },
			supportNodes(0, int(v.size), distuv.Binomial{N: v.size, P: v.p}.Prob)})
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
			hermite2Nodes(12, func(z1, z2 float64) (float64, float64) {
				return mx + sx*z1, my + sy*(rho*z1+math.Sqrt(1-rho*rho)*z2)
			})})
	}
	return cases
}

// derivs holds the expected log-likelihood derivatives of one observation
// at θ0, each computed by gonum diff/fd central differences of gonum's
// log-density and integrated over nodes:
//
//	info[r][t]     = −E ∂²ℓ/∂θr∂θt
//	k3[r][t][u]    = κ_rtu  = E ∂³ℓ/∂θr∂θt∂θu
//	k21[r][t][u]   = κ_rt,u = E[∂²ℓ/∂θr∂θt · ∂ℓ/∂θu]
//	score[r]       = E ∂ℓ/∂θr (zero; a check on the quadrature)
type derivs struct {
	info  *mat.SymDense
	k3    [][][]float64
	k21   [][][]float64
	score []float64
}

// expectedDerivs differentiates in θᵢ = θ0ᵢ + sᵢuᵢ with sᵢ each
// parameter's scale (paramScale). Second derivatives use step 1e-3 in u and
// third derivatives a central difference of those with step 1e-2; each
// difference is Richardson-extrapolated, (4D(h/2) − D(h))/3, which cancels
// the h² error term of central differences.
func expectedDerivs(c fisherCase, theta []float64) derivs {
	p := len(theta)
	sc := paramScale(theta)
	th := make([]float64, p)
	var d derivs
	d.info = mat.NewSymDense(p, nil)
	d.score = make([]float64, p)
	cube := func() [][][]float64 {
		a := make([][][]float64, p)
		for i := range a {
			a[i] = make([][]float64, p)
			for j := range a[i] {
				a[i][j] = make([]float64, p)
			}
		}
		return a
	}
	d.k3, d.k21 = cube(), cube()
	for _, nd := range c.nodes {
		f := func(u []float64) float64 {
			for k := range th {
				th[k] = theta[k] + sc[k]*u[k]
			}
			return c.logDensity(th, nd.y)
		}
		hess := func(at []float64) [][]float64 {
			var h1, h2 mat.SymDense
			fd.Hessian(&h1, f, at, &fd.Settings{Formula: fd.Central, Step: 1e-3})
			fd.Hessian(&h2, f, at, &fd.Settings{Formula: fd.Central, Step: 5e-4})
			h := make([][]float64, p)
			for r := range p {
				h[r] = make([]float64, p)
				for t := range p {
					h[r][t] = (4*h2.At(r, t) - h1.At(r, t)) / 3
				}
			}
			return h
		}
		origin := make([]float64, p)
		h := hess(origin)
		g1 := fd.Gradient(nil, f, origin, &fd.Settings{Formula: fd.Central, Step: 1e-3})
		g2 := fd.Gradient(nil, f, origin, &fd.Settings{Formula: fd.Central, Step: 5e-4})
		grad := make([]float64, p)
		for r := range p {
			grad[r] = (4*g2[r] - g1[r]) / 3 / sc[r]
			d.score[r] += nd.w * grad[r]
		}
		for r := range p {
			for t := r; t < p; t++ {
				d.info.SetSym(r, t, d.info.At(r, t)-nd.w*h[r][t]/(sc[r]*sc[t]))
			}
		}
		for u := range p {
			diff := func(step float64) [][]float64 {
				plus, minus := make([]float64, p), make([]float64, p)
				plus[u], minus[u] = step, -step
				hp, hm := hess(plus), hess(minus)
				for r := range p {
					for t := range p {
						hp[r][t] = (hp[r][t] - hm[r][t]) / (2 * step)
					}
				}
				return hp
			}
			d1, d2 := diff(1e-2), diff(5e-3)
			for r := range p {
				for t := range p {
					h2rt := h[r][t] / (sc[r] * sc[t])
					d3 := (4*d2[r][t] - d1[r][t]) / 3 / (sc[r] * sc[t] * sc[u])
					d.k3[r][t][u] += nd.w * d3
					d.k21[r][t][u] += nd.w * h2rt * grad[u]
				}
			}
		}
	}
	return d
}

// TestFamilyCovFisher compares Cov with the inverse of the expected Fisher
// information of one observation, −E[∂²log f/∂θ∂θᵀ], built independently:
// the Hessian of gonum's log-density by gonum diff/fd central differences,
// its expectation by quadrature or summation over the support.
func TestFamilyCovFisher(t *testing.T) {
	for _, c := range fisherCases() {
		m := mustModel(t, c.family, c.values)
		p := len(m.Truth)
		theta := m.Truth
		ref := inverseInfo(t, c, expectedDerivs(c, theta).info)
		cov := make([]float64, p*p)
		m.Asymptotics.Cov(theta, cov)
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

func inverseInfo(t *testing.T, c fisherCase, info *mat.SymDense) *mat.SymDense {
	t.Helper()
	var chol mat.Cholesky
	if !chol.Factorize(info) {
		t.Fatalf("%s %v: information not positive definite: %v", c.family, c.values, mat.Formatted(info))
	}
	var ref mat.SymDense
	if err := chol.InverseTo(&ref); err != nil {
		t.Fatal(err)
	}
	return &ref
}

// TestFamilyBiasCoxSnell evaluates the Cox & Snell (1968) first-order bias
// bˢ = Σ κ^{sr} κ^{tu} (½κ_rtu + κ_rt,u) entirely numerically, from
// finite-difference derivatives of gonum's log-densities integrated by
// quadrature, and compares it with every family's Bias. This checks the
// gamma's hand-derived third derivatives and contraction, and, through the
// normal families (whose κ_rt,u do not vanish) and exponential, that the
// formula reproduces the known biases −3σ/4, −ρ(1−ρ²)/2 and λ.
func TestFamilyBiasCoxSnell(t *testing.T) {
	for _, c := range fisherCases() {
		m := mustModel(t, c.family, c.values)
		names := estimates(t, c.family)
		p := len(m.Truth)
		theta := m.Truth
		d := expectedDerivs(c, theta)
		k := inverseInfo(t, c, d.info)
		bias := make([]float64, p)
		m.Asymptotics.Bias(theta, bias)
		name := fmt.Sprintf("%s %v", c.family, c.values)
		for s := range p {
			var b float64
			for r := range p {
				for tt := range p {
					for u := range p {
						b += k.At(s, r) * k.At(tt, u) * (d.k3[r][tt][u]/2 + d.k21[r][tt][u])
					}
				}
			}
			// Third derivatives are differences of differences: with the
			// outer step 1e-2 extrapolated the truncation is ~1e-8, and
			// rounding ~1e-10/1e-2; the contraction with two inverse
			// informations of condition up to ~10³ brings that to ~1e-5.
			// The unit is √Σₛₛ, the spread of one observation's estimate.
			if tol := 1e-5 * (math.Abs(bias[s]) + math.Sqrt(k.At(s, s))); math.Abs(b-bias[s]) > tol {
				t.Errorf("%s: Bias[%s] = %.10g, numerical Cox–Snell %.10g", name, names[s], bias[s], b)
			}
		}
		var wsum float64
		for _, nd := range c.nodes {
			wsum += nd.w
		}
		if math.Abs(wsum-1) > 1e-12 {
			t.Errorf("%s: quadrature weights sum to 1 + %.3g", name, wsum-1)
		}
		for r, sc := range d.score {
			if math.Abs(sc) > 1e-7/math.Sqrt(k.At(r, r)) {
				t.Errorf("%s: mean score[%d] = %.3g, want 0 (quadrature check)", name, r, sc)
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
