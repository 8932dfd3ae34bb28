package family

import (
	"math"

	"deltaprobe/sim/stream"
)

// Support is the set of values one observation of a data family takes;
// a fit accepts the data families whose support suits its own density.
type Support int

const (
	// Reals: any real number.
	Reals Support = iota
	// Positive: real numbers above 0.
	Positive
	// Counts: 0, 1, 2, …
	Counts
	// Pairs: two real numbers per observation (bivariate_normal).
	Pairs
)

// String names the support in words, for messages.
func (s Support) String() string {
	switch s {
	case Reals:
		return "real numbers"
	case Positive:
		return "positive real numbers"
	case Counts:
		return "counts 0, 1, 2, …"
	}
	return "pairs of real numbers"
}

// law is a data-generating model as a fit of another family sees it: it
// draws one observation at a time in natural units and knows its exact
// central moments. Every univariate family has one; a law is shared by
// every worker and must not change its state.
type law interface {
	// one draws one observation.
	one(rng *stream.PCG) float64
	// moments are the exact mean and the second, third and fourth central
	// moments of one observation.
	moments() lawMoments
}

// lawMoments are a data law's mean and central moments μ2 (the
// variance), μ3 and μ4.
type lawMoments struct{ mean, m2, m3, m4 float64 }

// centralFromRaw turns the raw moments E y, E y², E y³, E y⁴ into the
// mean and central moments (μ3 = E y³ − 3μ E y² + 2μ³, μ4 = E y⁴ −
// 4μ E y³ + 6μ² E y² − 3μ⁴; binomial expansion of E(y − μ)ᵏ). It loses
// digits when the variance is small beside the squared mean (relative
// error about 2⁻⁵³·μ⁴/μ4), so a law with closed-form central moments uses
// those instead.
func centralFromRaw(r1, r2, r3, r4 float64) lawMoments {
	m := r1
	return lawMoments{
		mean: m,
		m2:   r2 - m*m,
		m3:   r3 - 3*m*r2 + 2*m*m*m,
		m4:   r4 - 4*m*r3 + 6*m*m*r2 - 3*m*m*m*m,
	}
}

// normalLaw is Normal(mean, sd²).
type normalLaw struct{ mean, sd float64 }

func (l *normalLaw) one(rng *stream.PCG) float64 { return l.mean + l.sd*rng.NormFloat64() }
func (l *normalLaw) moments() lawMoments {
	v := l.sd * l.sd
	return lawMoments{l.mean, v, 0, 3 * v * v}
}

// lognormalLaw is exp(Normal(meanlog, sdlog²)); E yʳ = exp(r·meanlog +
// r²·sdlog²/2) (Johnson, Kotz & Balakrishnan 1994, ch. 14, from memory).
type lognormalLaw struct{ meanlog, sdlog float64 }

func (l *lognormalLaw) one(rng *stream.PCG) float64 {
	return math.Exp(l.meanlog + l.sdlog*rng.NormFloat64())
}
func (l *lognormalLaw) moments() lawMoments {
	raw := func(r float64) float64 { return math.Exp(r*l.meanlog + r*r*l.sdlog*l.sdlog/2) }
	return centralFromRaw(raw(1), raw(2), raw(3), raw(4))
}

// exponentialLaw is Exponential(rate): μ = 1/λ, μ2 = 1/λ², μ3 = 2/λ³,
// μ4 = 9/λ⁴ (the gamma's with shape 1).
type exponentialLaw struct{ rate float64 }

func (l *exponentialLaw) one(rng *stream.PCG) float64 { return rng.ExpFloat64() / l.rate }
func (l *exponentialLaw) moments() lawMoments {
	s := 1 / l.rate
	return lawMoments{s, s * s, 2 * s * s * s, 9 * s * s * s * s}
}

// gammaLaw is Gamma(shape α, rate β): μ = α/β, μ2 = α/β², μ3 = 2α/β³,
// μ4 = (3α² + 6α)/β⁴ (cumulants κr = (r−1)!·α/βʳ and μ4 = κ4 + 3κ2²).
type gammaLaw struct {
	shape, rate float64
	gen         gammaGen
	logScale    float64 // log(gen.d/rate): log y = logScale + log w
}

// newGammaLaw returns the Gamma(shape, rate) law.
func newGammaLaw(shape, rate float64) *gammaLaw {
	g := newGammaGen(shape)
	return &gammaLaw{shape: shape, rate: rate, gen: g, logScale: math.Log(g.d) - math.Log(rate)}
}

func (l *gammaLaw) one(rng *stream.PCG) float64 { return l.gen.std(rng) / l.rate }
func (l *gammaLaw) moments() lawMoments {
	a, b := l.shape, l.rate
	return lawMoments{a / b, a / (b * b), 2 * a / (b * b * b), (3*a*a + 6*a) / (b * b * b * b)}
}

// poissonLaw is Poisson(mean): every cumulant is μ, so μ2 = μ3 = μ and
// μ4 = μ + 3μ².
type poissonLaw struct{ m *poissonModel }

func (l *poissonLaw) one(rng *stream.PCG) float64 { return l.m.draw(rng) }
func (l *poissonLaw) moments() lawMoments {
	mu := l.m.mean
	return lawMoments{mu, mu, mu, mu + 3*mu*mu}
}

// bernoulliLaw is Bernoulli(p): μ2 = pq, μ3 = pq(q − p),
// μ4 = pq(1 − 3pq) with q = 1 − p.
type bernoulliLaw struct{ p float64 }

func (l *bernoulliLaw) one(rng *stream.PCG) float64 {
	if rng.Float64() < l.p {
		return 1
	}
	return 0
}
func (l *bernoulliLaw) moments() lawMoments {
	p, q := l.p, 1-l.p
	return lawMoments{p, p * q, p * q * (q - p), p * q * (1 - 3*p*q)}
}

// binomialLaw is Binomial(size, p): μ2 = Npq, μ3 = Npq(q − p),
// μ4 = Npq(1 + 3(N − 2)pq) (Johnson, Kemp & Kotz 2005, §3.3, from memory;
// checked against the pmf in the tests).
type binomialLaw struct{ m *binomialModel }

func (l *binomialLaw) one(rng *stream.PCG) float64 { return float64(l.m.table.draw(rng)) }
func (l *binomialLaw) moments() lawMoments {
	n, p := l.m.size, l.m.p
	q := 1 - p
	return lawMoments{n * p, n * p * q, n * p * q * (q - p), n * p * q * (1 + 3*(n-2)*p*q)}
}

// logLaw is a law of positive values whose log y has closed-form moments,
// for fits that see the data on the log scale (the lognormal's).
type logLaw interface {
	law
	// logOne draws log y directly (no overflow or underflow of y).
	logOne(rng *stream.PCG) float64
	// logMoments are the mean and central moments 2–4 of log y.
	logMoments() lawMoments
}

// logOf is the law of log y for a logLaw: a lognormal fit is the normal
// fit of log y.
type logOf struct{ l logLaw }

func (o logOf) one(rng *stream.PCG) float64 { return o.l.logOne(rng) }
func (o logOf) moments() lawMoments         { return o.l.logMoments() }

// Cumulants of log E for E ~ Exp(1): ψ⁽ʲ⁻¹⁾(1), that is −γ, π²/6,
// −2ζ(3) and π⁴/15 (DLMF 5.4.12, 5.15.2; ζ(3) = 1.2020569031595942854,
// DLMF 25.6.1 for ζ(4) = π⁴/90).
const (
	logExpK1 = -0.57721566490153286061
	logExpK2 = math.Pi * math.Pi / 6
	logExpK3 = -2 * 1.2020569031595942854
	logExpK4 = math.Pi * math.Pi * math.Pi * math.Pi / 15
)

// logExpMoments are the moments of a + L/k, L = log E, E ~ Exp(1):
// mean a + κ1/k, μ2 = κ2/k², μ3 = κ3/k³, μ4 = (κ4 + 3κ2²)/k⁴.
func logExpMoments(a, k float64) lawMoments {
	k2 := k * k
	return lawMoments{a + logExpK1/k, logExpK2 / k2, logExpK3 / (k2 * k), (logExpK4 + 3*logExpK2*logExpK2) / (k2 * k2)}
}

// log y = log(1/rate) + log E.
func (l *exponentialLaw) logOne(rng *stream.PCG) float64 {
	return math.Log(rng.ExpFloat64()) - math.Log(l.rate)
}
func (l *exponentialLaw) logMoments() lawMoments { return logExpMoments(-math.Log(l.rate), 1) }

// log y = meanlog + sdlog·Z.
func (l *lognormalLaw) logOne(rng *stream.PCG) float64 { return l.meanlog + l.sdlog*rng.NormFloat64() }
func (l *lognormalLaw) logMoments() lawMoments {
	v := l.sdlog * l.sdlog
	return lawMoments{l.meanlog, v, 0, 3 * v * v}
}

// mellinLaw is a law of positive values whose tilted log-moments
// E[yˢ·(log y)ʲ], j = 0, 1, 2, are known in closed form for s ≥ 0: what a
// Weibull fit's pseudo-true parameter and sandwich need.
type mellinLaw interface {
	law
	// mellin returns E[yˢ], E[yˢ log y] and E[yˢ log² y].
	mellin(s float64) (m0, m1, m2 float64)
}

// digamma is ψ(x) for x > 0, from log x − ψ(x) (gamma_psi.go).
func digamma(x float64) float64 { return math.Log(x) - logMinusDigamma(x) }

// mellin of the lognormal: log y = X ~ N(μ, σ²) gives E e^{sX} =
// exp(sμ + s²σ²/2), and differentiating in s, E[X e^{sX}] = (μ + sσ²)·G
// and E[X² e^{sX}] = (σ² + (μ + sσ²)²)·G (normal moment generating
// function, derived).
func (l *lognormalLaw) mellin(s float64) (m0, m1, m2 float64) {
	v := l.sdlog * l.sdlog
	g := math.Exp(s*l.meanlog + s*s*v/2)
	c := l.meanlog + s*v
	return g, c * g, (v + c*c) * g
}

// mellin of the gamma: E yˢ = Γ(α+s)/(Γ(α)βˢ); its derivatives in s give
// E[yˢ log y] = G·c and E[yˢ log² y] = G·(ψ1(α+s) + c²) with c = ψ(α+s) −
// log β (derived).
func (l *gammaLaw) mellin(s float64) (m0, m1, m2 float64) {
	a, b := l.shape, l.rate
	la, _ := math.Lgamma(a + s)
	lb, _ := math.Lgamma(a)
	g := math.Exp(la - lb - s*math.Log(b))
	c := digamma(a+s) - math.Log(b)
	return g, c * g, (trigamma(a+s) + c*c) * g
}
