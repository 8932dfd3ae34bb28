package family

import (
	"math"

	"deltaprobe/sim/stream"
)

// gammaGen draws Gamma(shape, 1) variates by the squeeze-and-reject method
// of Marsaglia & Tsang (2000), "A simple method for generating gamma
// variables", ACM TOMS 26(3):363–372. For a ≥ 1, with d = a − 1/3 and
// c = 1/√(9d), draw Z ~ N(0,1) and U ~ U(0,1), set V = (1 + cZ)³ and accept
// d·V when V > 0 and log U < Z²/2 + d(1 − V + log V); the squeeze
// U < 1 − 0.0331 Z⁴ accepts most draws without that test. For shape < 1
// the same paper's boost is used: if G ~ Gamma(shape+1) and U ~ U(0,1)
// then G·U^(1/shape) ~ Gamma(shape).
//
// The variate is returned as d·w together with log w, computed without
// forming w's logarithm from w: log V = 3·log1p(cZ) is accurate when V is
// near 1 (large shapes) and log U/shape stays finite when U^(1/shape)
// underflows (shapes near 0). The gamma MLE needs only Σw and Σ log w.
type gammaGen struct {
	d, c     float64 // Marsaglia–Tsang constants for shape, or shape+1 when boosted
	invShape float64 // 1/shape, used only when boost is set
	boost    bool
}

func newGammaGen(shape float64) gammaGen {
	a, boost := shape, shape < 1
	if boost {
		a = shape + 1
	}
	d := a - 1.0/3
	return gammaGen{d: d, c: 1 / math.Sqrt(9*d), invShape: 1 / shape, boost: boost}
}

// accept runs Marsaglia and Tsang's loop to its first accepted candidate
// and returns v = (1 + t)³ and t = c·z. The logarithm log V = 3·log1p(t)
// is taken only when the squeeze fails (a few percent of candidates), so
// std, which does not need log w, skips it on most draws.
func (g *gammaGen) accept(rng *stream.PCG) (v, t float64) {
	for {
		z := rng.NormFloat64()
		t = g.c * z
		if t <= -1 {
			continue
		}
		v = (1 + t) * (1 + t) * (1 + t)
		u := rng.Float64()
		z2 := z * z
		if u < 1-0.0331*z2*z2 || math.Log(u) < z2/2+g.d*(1-v+3*math.Log1p(t)) {
			return v, t
		}
	}
}

// draw returns w and log w such that g.d·w ~ Gamma(shape, 1).
func (g *gammaGen) draw(rng *stream.PCG) (w, logw float64) {
	v, t := g.accept(rng)
	w, logw = v, 3*math.Log1p(t)
	if g.boost {
		// log U for U ~ U(0,1) is −E with E ~ Exp(1): the ziggurat draw is
		// cheaper than a uniform and a logarithm, and always finite.
		lu := -rng.ExpFloat64() * g.invShape
		w *= math.Exp(lu)
		logw += lu
	}
	return w, logw
}

// std returns one Gamma(shape, 1) variate: draw's value without its
// logarithm (the same number from the same state).
func (g *gammaGen) std(rng *stream.PCG) float64 {
	w, _ := g.accept(rng)
	if g.boost {
		w *= math.Exp(-rng.ExpFloat64() * g.invShape)
	}
	return g.d * w
}

// gammaShapeMaxIter bounds the safeguarded Newton iteration. Bisection alone
// would shrink the initial bracket, of log-width at most 17·log 2, to 10⁻¹⁵
// in under 60 steps; Newton from Minka's start needs about four.
const gammaShapeMaxIter = 100

// gammaShapeMLE solves the gamma profile score equation
//
//	log α − ψ(α) = s,  s = log x̄ − mean(log x) > 0,
//
// for the shape MLE α̂ (the rate MLE is then α̂/x̄). The left side decreases
// strictly from +∞ to 0, so the root is unique for every s > 0, and
// 1/(2α) < log α − ψ(α) < 1/α puts it in (1/(2s), 1/s). The iteration is
// Newton's method in t = log α on g(t) = log α − ψ(α) − s, whose slope is
// g′(t) = −(αψ1(α) − 1), started from the closed-form approximation of
// Minka (2002), "Estimating a gamma distribution",
// α₀ = (3 − s + √((s−3)² + 24s))/(12s), and safeguarded by a sign-checked
// bracket: a step leaving the bracket is replaced by bisection in log α.
// The state is α itself, updated by α·exp(Δt), so the root keeps full
// relative precision even where log α is large. It reports false only when
// s is not a finite positive number, when the root is not a finite
// float64, or after gammaShapeMaxIter steps without convergence.
func gammaShapeMLE(s float64) (float64, bool) {
	if !(s > 0) || math.IsInf(s, 1) {
		return 0, false
	}
	g := func(a float64) float64 { return logMinusDigamma(a) - s }
	// Bracket from the bounds, widened in case rounding moved a sign.
	lo, hi := 0.5/s, 1/s
	for i := 0; !(g(lo) > 0); i++ {
		if i == 8 {
			return 0, false
		}
		lo /= 2
	}
	for i := 0; !(g(hi) < 0); i++ {
		if i == 8 || math.IsInf(hi, 1) {
			return 0, false
		}
		hi *= 2
	}
	if !(lo > 0) || math.IsInf(hi, 1) {
		return 0, false
	}
	a := (3 - s + math.Sqrt((s-3)*(s-3)+24*s)) / (12 * s)
	if !(a > lo && a < hi) {
		a = lo * math.Sqrt(hi/lo)
	}
	for range gammaShapeMaxIter {
		ga := g(a)
		if ga == 0 {
			return a, true
		}
		if ga > 0 {
			lo = a
		} else {
			hi = a
		}
		dt := ga / trigammaExcess(a)
		if math.Abs(dt) <= 1e-15 {
			// Newton's error is now O(dt²): a·exp(dt) is the root to
			// rounding (and may equal an end of the bracket).
			return a * math.Exp(dt), true
		}
		next := a * math.Exp(dt)
		if !(next > lo && next < hi) {
			next = lo * math.Sqrt(hi/lo)
		}
		if hi/lo-1 <= 4e-16 {
			return next, true
		}
		a = next
	}
	return 0, false
}
