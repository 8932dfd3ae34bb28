package family

import (
	"fmt"
	"math"

	"deltaprobe/sim/stream"
)

// The gamma fit of data from a law of positive values that is not
// necessarily a gamma's (exponential, Weibull, lognormal; gamma data too,
// for the robust variance). With θ = (α, β) (shape, rate) the log-density
// is α log β + (α−1) log y − βy − log Γ(α), so the scores are
//
//	s_α = log β + log y − ψ(α),   s_β = α/β − y,
//
// and the log-likelihood depends on the data only through ȳ and
// mean(log y). The second derivatives, −ψ1(α), 1/β and −α/β², do not
// involve y, so the observed information equals the expected one at every
// θ and A = [ψ1(α), −1/β; −1/β, α/β²] whatever the data law.
//
// θ* (White 1982) solves E s = 0: β* = α*/E y, and α* is the root of
//
//	log α − ψ(α) = log E y − E log y,
//
// whose left side decreases from +∞ to 0, so the root is unique (Jensen
// makes the right side positive for a non-degenerate law). It is solved
// by gammaShapeMLE, the gamma family's own safeguarded Newton iteration,
// to rounding. At θ* the scores have mean zero, so
//
//	B = E s sᵀ = [Var log y, −Cov(y, log y); −Cov(y, log y), Var y],
//
// which the law gives in closed form (gammaFitLaw). For gamma data B = A
// (the information equality) and the sandwich is the inverse Fisher
// information.

// gammaFitLaw is a law whose (y, log y) have closed-form first and second
// moments: what the gamma fit's θ* and sandwich need.
type gammaFitLaw interface {
	logLaw
	// logMeanGap is log E y − E log y > 0, formed without the cancellation
	// of two large logarithms.
	logMeanGap() float64
	// covYLogY is Cov(y, log y).
	covYLogY() float64
	// varY is Var y, formed without cancellation where the law allows.
	varY() float64
}

// Exponential(rate): log E y − E log y = γ (E log E = −γ, DLMF 5.4.12
// with ψ(1) = −γ); Cov(y, log y) = E[E log E]/rate − E[E]E[log E]/rate =
// (ψ(2) − ψ(1))/rate = 1/rate (E[Eˢ log E] = Γ(1+s)ψ(1+s), the
// derivative of E Eˢ = Γ(1+s); derived).
func (l *exponentialLaw) logMeanGap() float64 { return eulerMascheroni }
func (l *exponentialLaw) covYLogY() float64   { return 1 / l.rate }
func (l *exponentialLaw) varY() float64       { return 1 / (l.rate * l.rate) }

// Weibull(k, λ), y = λE^(1/k): log E y − E log y = log Γ(1 + 1/k) + γ/k,
// Cov(y, log y) = (λ/k)·Γ(1 + 1/k)·(ψ(1 + 1/k) + γ) (the exponential's
// E[Eˢ log E] at s = 1/k; derived).
func (l *weibullLaw) logMeanGap() float64 {
	x := 1 / l.shape
	lg, _ := math.Lgamma(1 + x)
	return lg + eulerMascheroni*x
}
func (l *weibullLaw) covYLogY() float64 {
	x := 1 / l.shape
	return l.scale * x * math.Gamma(1+x) * (digamma(1+x) + eulerMascheroni)
}

// Var y = λ²(Γ(1 + 2/k) − Γ(1 + 1/k)²), from the raw moments
// (weibullLaw.moments): about 2⁻⁵³·k² relative error for large k.
func (l *weibullLaw) varY() float64 { return l.moments().m2 }

// LogNormal(μ, σ): log E y − E log y = σ²/2; Cov(y, log y) =
// E[X e^X] − E e^X·μ = σ²·e^{μ+σ²/2} (the normal moment generating
// function and its derivative, as in mellin; derived).
func (l *lognormalLaw) logMeanGap() float64 { return l.sdlog * l.sdlog / 2 }
func (l *lognormalLaw) covYLogY() float64 {
	v := l.sdlog * l.sdlog
	return v * math.Exp(l.meanlog+v/2)
}

// Var y = e^{2μ+σ²}(e^{σ²} − 1), with expm1 so that a small σ loses no
// digits (E y² − (E y)², Johnson, Kotz & Balakrishnan 1994, ch. 14, from
// memory; checked by quadrature in the tests).
func (l *lognormalLaw) varY() float64 {
	v := l.sdlog * l.sdlog
	return math.Exp(2*l.meanlog+v) * math.Expm1(v)
}

// Gamma(α, β): E log y = ψ(α) − log β, so log E y − E log y =
// log α − ψ(α); Cov(y, log y) = (α/β)(ψ(α+1) − ψ(α)) = 1/β (mellin at
// s = 1 and ψ(α+1) = ψ(α) + 1/α, DLMF 5.5.2; derived).
func (l *gammaLaw) logMeanGap() float64 { return logMinusDigamma(l.shape) }
func (l *gammaLaw) covYLogY() float64   { return 1 / l.rate }
func (l *gammaLaw) varY() float64       { return l.shape / (l.rate * l.rate) }

// log y = log(d/β) + log w with d·w ~ Gamma(α, 1) (gammaGen), so draws
// whose y would underflow keep their exact log y.
func (l *gammaLaw) logOne(rng *stream.PCG) float64 {
	_, lw := l.gen.draw(rng)
	return l.logScale + lw
}

// logMoments: the cumulants of log y are ψ⁽ʲ⁻¹⁾(α) beyond the mean
// ψ(α) − log β (the cumulant generating function of log y is
// log Γ(α+t) − log Γ(α) − t log β, derived from E yᵗ), so μ2 = ψ1(α),
// μ3 = ψ2(α) and μ4 = ψ3(α) + 3ψ1(α)².
func (l *gammaLaw) logMoments() lawMoments {
	a := l.shape
	t1 := trigamma(a)
	return lawMoments{digamma(a) - math.Log(l.rate), t1, tetragamma(a), pentagamma(a) + 3*t1*t1}
}

// gammaFitModel draws (y, log y) from a law and fits the gamma,
// θ = (shape, rate).
type gammaFitModel struct {
	law    gammaFitLaw
	robust bool
	cy, cl float64 // E y and E log y, subtracted from every draw
	gap    float64 // log E y − E log y
	star   []float64
	sand   []float64 // the sandwich at θ* under the law, per observation
	bias   []float64 // b(θ*): E θ̂ − θ* = b/n + o(1/n)
}

// newGammaMisfit derives θ*, the sandwich at θ* and the O(1/n) bias of
// the gamma fit under l. For exponential and gamma data θ* is the data's
// own parameter (the exponential is the gamma of shape 1), set exactly.
//
// The bias: θ̂ solves mean s(θ̂) = 0, and since the Hessian H = −A and the
// third derivatives T (ℓ_ααα = −ψ2(α), ℓ_ααβ = 0, ℓ_αββ = −1/β²,
// ℓ_βββ = 2α/β³) do not involve y, expanding about θ* gives
// 0 = s̄ − Aδ + ½T[δ, δ] + O(|δ|³), so δ = A⁻¹s̄ + ½A⁻¹T[δ, δ] + ... and
// E δ = A⁻¹T[Σ]/(2n) + O(n⁻²) with Σ the sandwich (derived): the
// Cox–Snell formula of gammaModel.Bias with the sandwich in place of the
// inverse information where δδᵀ is averaged, and no κ_{rt,u} term since
// the Hessian is not random. For gamma data it is the Cox–Snell bias.
func newGammaMisfit(l gammaFitLaw, robust bool) (Model, error) {
	mo, lo := l.moments(), l.logMoments()
	m := &gammaFitModel{law: l, robust: robust, cy: mo.mean, cl: lo.mean, gap: l.logMeanGap()}
	var a, b float64
	switch d := l.(type) {
	case *exponentialLaw:
		a, b = 1, d.rate
	case *gammaLaw:
		a, b = d.shape, d.rate
	default:
		var ok bool
		a, ok = gammaShapeMLE(m.gap)
		if !ok {
			return Model{}, fmt.Errorf("sim: no pseudo-true gamma shape found for these data (log E y − E log y = %g)", m.gap)
		}
		b = a / mo.mean
	}
	m.star = []float64{a, b}
	var k [4]float64
	gammaInverseA(a, b, k[:])
	m.sand = make([]float64, 4)
	sandwich2(k[:], lo.m2, -l.covYLogY(), l.varY(), m.sand)
	m.bias = make([]float64, 2)
	gammaBias(a, b, k[:], m.sand, m.bias)
	for _, x := range append(append([]float64{a, b}, m.sand...), m.bias...) {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return Model{}, fmt.Errorf("sim: the gamma fit's pseudo-true value or sandwich is not finite for these data")
		}
	}
	return Model{Truth: m.star, Sampler: m, Estimator: m, Asymptotics: m}, nil
}

// gammaInverseA writes A⁻¹ = [α, β; β, β²ψ1(α)]/(αψ1(α) − 1), the
// inverse of the gamma's (observed = expected) information, as
// gammaModel.Cov does.
func gammaInverseA(a, b float64, k []float64) {
	e := trigammaExcess(a)
	k[0], k[1], k[2], k[3] = a/e, b/e, b/e, b*b*trigamma(a)/e
}

// gammaBias writes ½A⁻¹T[Σ] (see newGammaMisfit) with k = A⁻¹ and sig = Σ.
func gammaBias(a, b float64, k, sig, bias []float64) {
	r1 := -sig[0]*tetragamma(a) - sig[3]/(b*b)
	r2 := -(sig[1]+sig[2])/(b*b) + sig[3]*2*a/(b*b*b)
	bias[0] = (k[0]*r1 + k[1]*r2) / 2
	bias[1] = (k[2]*r1 + k[3]*r2) / 2
}

// SampleLen is 5: the sample is (Σe, Σl, Σe², Σl², Σe·l) with
// e = y − E y and l = log y − E log y (centred at the law's values, so
// the sample's central moments carry no cancellation), unwritten below
// gammaMinN observations.
func (*gammaFitModel) SampleLen(int) int { return 5 }

// Draw draws log y through the law (y = exp(log y)) and keeps the centred
// sums. Below gammaMinN observations it draws nothing, as the gamma
// family's own sampler: the likelihood has no maximum there.
func (m *gammaFitModel) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	if n < gammaMinN {
		return
	}
	var se, sl, see, sll, sel float64
	for range n {
		ly := m.law.logOne(rng)
		e := math.Exp(ly) - m.cy
		l := ly - m.cl
		se += e
		sl += l
		see += e * e
		sll += l * l
		sel += e * l
	}
	s.Data[0], s.Data[1], s.Data[2], s.Data[3], s.Data[4] = se, sl, see, sll, sel
}

// NewFitter returns a fitter of the worker's own, which keeps the other
// variance of its latest fit (OtherVariance).
func (m *gammaFitModel) NewFitter(int) Fitter {
	return &gammaFitter{m: m, twoVariances: twoVariances{robust: m.robust}}
}

// gammaFitter fits for one worker.
type gammaFitter struct {
	m *gammaFitModel
	twoVariances
}

// Fit solves log α − ψ(α) = log ȳ − mean(log y) for α̂ (gammaShapeMLE),
// the left side formed as log1p(ē/E y) + (log E y − E log y) − l̄ so that
// no two large logarithms are subtracted, and sets β̂ = α̂/ȳ. The
// model-based variance is A⁻¹ at θ̂ (the inverse observed information,
// equal to the expected information there); the robust one A⁻¹B̂A⁻¹ with
// B̂ the mean outer product of the scores at θ̂, which, since the mean
// scores vanish there (ȳ = α̂/β̂, mean(log y) = ψ(α̂) − log β̂), is
// [m_ll, −m_el; −m_el, m_ee] in the sample's central moments (divisor n).
// Fit reports false below gammaMinN observations, when ȳ ≤ 0 or the
// shape equation has no root (all observations equal to rounding).
func (f *gammaFitter) Fit(s *Sample, theta, cov []float64) bool {
	m := f.m
	n := s.N
	if n < gammaMinN {
		return false
	}
	fn := float64(n)
	eb, lb := s.Data[0]/fn, s.Data[1]/fn
	ybar := m.cy + eb
	if !(ybar > 0) {
		return false
	}
	a, ok := gammaShapeMLE(math.Log1p(eb/m.cy) + m.gap - lb)
	if !ok {
		return false
	}
	b := a / ybar
	theta[0], theta[1] = a, b
	var k [4]float64
	gammaInverseA(a, b, k[:])
	if !f.robust && !f.both {
		copy(cov, k[:])
		return true
	}
	mee := max(s.Data[2]/fn-eb*eb, 0)
	mll := max(s.Data[3]/fn-lb*lb, 0)
	mel := s.Data[4]/fn - eb*lb
	var sand [4]float64
	sandwich2(k[:], mll, -mel, mee, sand[:])
	f.keep(cov, k, sand)
	return true
}

// Cov writes the sandwich at θ* under the law; theta is not read.
func (m *gammaFitModel) Cov(_, cov []float64) { copy(cov, m.sand) }

// Bias writes b(θ*) (see newGammaMisfit); theta is not read.
func (m *gammaFitModel) Bias(_, bias []float64) { copy(bias, m.bias) }
