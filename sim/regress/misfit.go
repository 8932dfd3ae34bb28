package regress

import (
	"fmt"
	"math"
)

// A misfit fits an equation's outcome by another family than the one it
// is drawn from: a linear fit of binary outcomes (the linear probability
// model) or of counts, or a Poisson (log-linear) fit of binary outcomes,
// the usual way to estimate risk ratios. θ then holds the fitted
// family's parameters, and the truth is θ*, the pseudo-true parameter:
// the maximiser of E log f_θ(y | x) under the data law (White 1982). The
// delta method uses the sandwich A⁻¹BA⁻¹ at θ*, A = −E[∂²log f] and
// B = E[s sᵀ], s the fitted family's score, both under the data law.
//
// Given x the data have mean μ(x) (expit(η) or exp(η)), variance v(x)
// and third and fourth central moments k3(x), k4(x): for binary
// outcomes v = μ(1−μ), k3 = v(1−2μ), k4 = v(1−3v); for Poisson counts
// v = k3 = μ, k4 = μ + 3μ² (the Bernoulli and Poisson central moments).
// Expectations over x are the product rules of expect.go (exact averages
// over levels and binary covariates, Gauss–Hermite/Legendre for normal
// and uniform ones, nodes doubled until θ* and the sandwich agree to
// misfitTol), so no expectation over y is approximated.
//
// Linear fit, log f = −log σ − (y − zᵀβ)²/(2σ²) + const (derived):
//   - β* = E[zzᵀ]⁻¹E[z μ(x)] (the normal equations of E(y − zᵀβ)²), and
//     σ*² = E[(y − zᵀβ*)²] = E[v + d²], d(x) = μ(x) − zᵀβ*;
//   - scores s_β = r z/σ², s_σ = (r² − σ²)/σ³, r = y − zᵀβ*;
//   - A = diag(E[zzᵀ]/σ², 2/σ²): the cross term 2E[r z]/σ³ is 0 by the
//     normal equations, and E[3r²/σ⁴ − 1/σ²] = 2/σ²;
//   - B_ββ = E[zzᵀ(v + d²)]/σ⁴, B_βσ = E[z(k3 + 3vd + d³ − σ²d)]/σ⁵,
//     B_σσ = (E[k4 + 4k3·d + 6v·d² + d⁴] − σ⁴)/σ⁶, from
//     E[r^j | x] = E[(e + d)^j], e = y − μ(x).
//
// Poisson fit, log f = y·zᵀβ − exp(zᵀβ) + const:
//   - β* solves E[z(μ(x) − exp(zᵀβ))] = 0, the maximiser of the concave
//     E[μ·zᵀβ − exp(zᵀβ)], by Newton's method with step halving from
//     log E μ (it exists when E[zzᵀ] is non-singular and μ > 0: the
//     objective then falls without bound along every direction);
//   - A = E[zzᵀ λ], λ = exp(zᵀβ*); B = E[zzᵀ(v + (μ − λ)²)].
//
// The O(1/n) bias of a misfit is not derived here: Bias writes NaN (not
// available) for the refitted equation's entries.

const (
	misfitTol    = 1e-11 // agreement of θ* and the sandwich between rules
	newtonTolPop = 1e-14 // the population Newton's relative step at which it stops
)

// misfits computes θ*, the sandwich and NaN biases of every refitted
// equation, in place of what expectations wrote for them.
func (m *Model) misfits() error {
	for e := range m.eqs {
		q := &m.eqs[e]
		if q.fit == q.kind {
			continue
		}
		theta, cov, nodes, err := m.pseudoTrue(q)
		if err != nil {
			return fmt.Errorf("%sthe pseudo-true parameter of the %s fit: %w", m.equationLabel(e), q.fit, err)
		}
		d := len(m.truth)
		copy(m.truth[q.off:q.off+q.dim], theta)
		for a := 0; a < q.dim; a++ {
			for b := 0; b < q.dim; b++ {
				m.cov[(q.off+a)*d+q.off+b] = cov[a*q.dim+b]
			}
			m.bias[q.off+a] = math.NaN()
		}
		q.start = theta[:q.p()]
		m.Nodes = max(m.Nodes, nodes)
	}
	return nil
}

// continuousDims counts the dimensions of the walk a product rule
// approximates.
func (m *Model) continuousDims() int {
	k := 0
	for _, c := range m.Design.Covariates {
		if c.Dist == Normal || c.Dist == Uniform {
			k++
		}
	}
	return k
}

// pseudoTrue returns θ* of q's fit and the sandwich at θ* (dim×dim, per
// observation), doubling the nodes per continuous dimension from 8
// until two rules agree to misfitTol; nodes is 0 when the sums are exact.
func (m *Model) pseudoTrue(q *eqn) (theta, cov []float64, nodes int, err error) {
	if m.continuousDims() == 0 {
		theta, cov, err = m.pseudoTrueAt(q, 0)
		return theta, cov, 0, err
	}
	prevT, prevC, err := m.pseudoTrueAt(q, 8)
	if err != nil {
		return nil, nil, 0, err
	}
	for nodes = 16; ; nodes *= 2 {
		if math.Pow(float64(nodes), float64(m.continuousDims())) > maxPoints {
			return nil, nil, 0, fmt.Errorf("could not be computed to about 1e-9 relative within %d quadrature points; use fewer continuous covariates, or levels", maxPoints)
		}
		theta, cov, err = m.pseudoTrueAt(q, nodes)
		if err != nil {
			return nil, nil, 0, err
		}
		if agreeMisfit(prevT, theta, prevC, cov, q.dim) {
			return theta, cov, nodes, nil
		}
		prevT, prevC = theta, cov
	}
}

func agreeMisfit(t1, t2, c1, c2 []float64, k int) bool {
	for a := 0; a < k; a++ {
		if !(math.Abs(t1[a]-t2[a]) <= misfitTol*math.Max(1, math.Abs(t2[a]))) {
			return false
		}
		for b := 0; b < k; b++ {
			s := math.Sqrt(c2[a*k+a] * c2[b*k+b])
			if !(math.Abs(c1[a*k+b]-c2[a*k+b]) <= misfitTol*s) {
				return false
			}
		}
	}
	return true
}

// dataMoments are y's mean and central moments 2–4 given x under the
// data family of q at linear predictor eta.
func (q *eqn) dataMoments(eta float64) (mu, v, k3, k4 float64) {
	switch q.kind {
	case Logistic:
		mu = expit(eta)
		v = mu * (1 - mu)
		return mu, v, v * (1 - 2*mu), v * (1 - 3*v)
	case Poisson:
		mu = math.Exp(eta)
		return mu, mu, mu, mu + 3*mu*mu
	}
	panic("regress: a misfit of linear data")
}

// over calls visit at every point of the rule at nodes with q's design
// vector, the true linear predictor and the point's weight.
func (m *Model) over(q *eqn, nodes int, visit func(z []float64, eta, wt float64)) {
	r := newRule(nodes)
	used := m.usedOutcomes()
	row := make([]float64, m.cols)
	z := make([]float64, q.p())
	m.walk(r, used, make([]float64, m.slots), 0, row, 1, func(row []float64, wt float64) {
		z[0] = 1
		for j, c := range q.cols {
			z[j+1] = row[c]
		}
		visit(z, q.eta(row), wt)
	})
}

// pseudoTrueAt is pseudoTrue with one rule.
func (m *Model) pseudoTrueAt(q *eqn, nodes int) (theta, cov []float64, err error) {
	p := q.p()
	beta := make([]float64, p)
	mzz := make([]float64, p*p) // E[zzᵀ] (linear) or E[zzᵀλ] (Poisson)
	g := make([]float64, p)
	switch q.fit {
	case Linear:
		m.over(q, nodes, func(z []float64, eta, wt float64) {
			mu, _, _, _ := q.dataMoments(eta)
			accumulate(mzz, g, z, wt, wt*mu)
		})
		mirror(mzz, p)
		l := append([]float64(nil), mzz...)
		if !cholesky(l, p) {
			return nil, nil, fmt.Errorf("E[zzᵀ] is singular")
		}
		copy(beta, g)
		cholSolve(l, p, beta)
		return m.linearSandwich(q, nodes, beta, mzz)
	case Poisson:
		var emu float64
		m.over(q, nodes, func(z []float64, eta, wt float64) {
			mu, _, _, _ := q.dataMoments(eta)
			emu += wt * mu
		})
		beta[0] = math.Log(emu)
		objective := func(b []float64) float64 {
			var obj float64
			m.over(q, nodes, func(z []float64, eta, wt float64) {
				mu, _, _, _ := q.dataMoments(eta)
				lin := dot(b, z)
				obj += wt * (mu*lin - math.Exp(lin))
			})
			return obj
		}
		step, trial := make([]float64, p), make([]float64, p)
		for it := 0; ; it++ {
			if it == 200 {
				return nil, nil, fmt.Errorf("Newton's method on E[z(μ − exp(zᵀβ))] = 0 did not settle in 200 steps")
			}
			clear(mzz)
			clear(g)
			m.over(q, nodes, func(z []float64, eta, wt float64) {
				mu, _, _, _ := q.dataMoments(eta)
				lam := math.Exp(dot(beta, z))
				accumulate(mzz, g, z, wt*lam, wt*(mu-lam))
			})
			mirror(mzz, p)
			l := append([]float64(nil), mzz...)
			if !cholesky(l, p) {
				return nil, nil, fmt.Errorf("E[zzᵀ exp(zᵀβ)] is singular")
			}
			copy(step, g)
			cholSolve(l, p, step)
			small := true
			for j := range step {
				small = small && math.Abs(step[j]) <= newtonTolPop*math.Max(1, math.Abs(beta[j]))
			}
			if small {
				for j := range beta {
					beta[j] += step[j]
				}
				break
			}
			old := objective(beta)
			for half := 0; ; half++ {
				for j := range trial {
					trial[j] = beta[j] + step[j]
				}
				if objective(trial) >= old-1e-15*math.Abs(old) || half == 60 {
					break
				}
				for j := range step {
					step[j] /= 2
				}
			}
			copy(beta, trial)
		}
		return m.poissonSandwich(q, nodes, beta)
	}
	panic("regress: a misfit by " + q.fit.String())
}

func dot(a, b []float64) float64 {
	var s float64
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// linearSandwich is θ* = (β*, σ*) of a linear fit and A⁻¹BA⁻¹ there;
// mzz is E[zzᵀ].
func (m *Model) linearSandwich(q *eqn, nodes int, beta, mzz []float64) (theta, cov []float64, err error) {
	p := q.p()
	k := p + 1
	bzz := make([]float64, p*p) // E[zzᵀ(v + d²)]
	bzs := make([]float64, p)   // E[z(k3 + 3vd + d³)], and E[z d] in zd
	zd := make([]float64, p)
	var er2, er4 float64
	m.over(q, nodes, func(z []float64, eta, wt float64) {
		mu, v, k3, k4 := q.dataMoments(eta)
		d := mu - dot(beta, z)
		r2 := v + d*d
		er2 += wt * r2
		er4 += wt * (k4 + 4*k3*d + 6*v*d*d + d*d*d*d)
		accumulate(bzz, bzs, z, wt*r2, wt*(k3+3*v*d+d*d*d))
		for j := range z {
			zd[j] += wt * z[j] * d
		}
	})
	mirror(bzz, p)
	s2 := er2
	sigma := math.Sqrt(s2)
	b := make([]float64, k*k)
	for a := 0; a < p; a++ {
		for c := 0; c < p; c++ {
			b[a*k+c] = bzz[a*p+c] / (s2 * s2)
		}
		v := (bzs[a] - s2*zd[a]) / (s2 * s2 * sigma)
		b[a*k+p], b[p*k+a] = v, v
	}
	b[p*k+p] = (er4 - s2*s2) / (s2 * s2 * s2)
	// A⁻¹ = diag(σ² E[zzᵀ]⁻¹, σ²/2).
	ainv := make([]float64, k*k)
	minv := invert(mzz, p)
	for a := 0; a < p; a++ {
		for c := 0; c < p; c++ {
			ainv[a*k+c] = s2 * minv[a*p+c]
		}
	}
	ainv[p*k+p] = s2 / 2
	theta = append(append([]float64(nil), beta...), sigma)
	return theta, sandwichOf(ainv, b, k), nil
}

// poissonSandwich is A⁻¹BA⁻¹ of a Poisson fit at β*.
func (m *Model) poissonSandwich(q *eqn, nodes int, beta []float64) (theta, cov []float64, err error) {
	p := q.p()
	a := make([]float64, p*p)
	b := make([]float64, p*p)
	g := make([]float64, p)
	m.over(q, nodes, func(z []float64, eta, wt float64) {
		mu, v, _, _ := q.dataMoments(eta)
		lam := math.Exp(dot(beta, z))
		accumulate(a, g, z, wt*lam, 0)
		accumulate(b, g, z, wt*(v+(mu-lam)*(mu-lam)), 0)
	})
	mirror(a, p)
	mirror(b, p)
	l := append([]float64(nil), a...)
	if !cholesky(l, p) {
		return nil, nil, fmt.Errorf("E[zzᵀ exp(zᵀβ*)] is singular")
	}
	ainv := make([]float64, p*p)
	cholInverse(l, p, ainv, make([]float64, p))
	return append([]float64(nil), beta...), sandwichOf(ainv, b, p), nil
}

// sandwichOf is ainv·b·ainv for k×k matrices.
func sandwichOf(ainv, b []float64, k int) []float64 {
	tmp := make([]float64, k*k)
	out := make([]float64, k*k)
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			for l := 0; l < k; l++ {
				tmp[i*k+j] += ainv[i*k+l] * b[l*k+j]
			}
		}
	}
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			for l := 0; l < k; l++ {
				out[i*k+j] += tmp[i*k+l] * ainv[l*k+j]
			}
		}
	}
	return out
}
