package family

import (
	"math"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "gamma",
		Summary:   "Gamma(shape, rate), density ∝ y^(shape−1)·exp(−rate·y), mean shape/rate",
		Estimator: "MLE: Newton on the profile score log(shape) − ψ(shape) = log ȳ − mean(log y), rate = shape/ȳ (bias ≈ 3·shape/n for large shape, Cox–Snell)",
		Params: []ParamSpec{
			{Name: "shape", Accepts: "a number > 0", Check: positive},
			{Name: "rate", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"shape", "rate"},
		Support:   Positive,
		law: func(v map[string]float64) (law, error) {
			return newGammaLaw(v["shape"], v["rate"]), nil
		},
		// The gamma fit of data whose (y, log y) have closed-form first
		// and second moments (gamma_misfit.go); of gamma data it is the
		// family's own fit, offered here for the robust variance.
		fitsData: func(d *Family) bool {
			switch d.Name {
			case "gamma", "exponential", "weibull", "lognormal":
				return true
			}
			return false
		},
		fitLaw: func(_ *Family, _ map[string]float64, l law, v Variance) (Model, error) {
			return newGammaMisfit(l.(gammaFitLaw), v == RobustVariance)
		},
		New: func(v map[string]float64) (Model, error) {
			m := &gammaModel{shape: v["shape"], rate: v["rate"], gen: newGammaGen(v["shape"])}
			return Model{Truth: []float64{m.shape, m.rate}, Sampler: m, Estimator: m, Asymptotics: m}, nil
		},
	})
}

// gammaModel is the gamma family with its MLE, θ = (shape α, rate β).
type gammaModel struct {
	shape, rate float64
	gen         gammaGen
}

// gammaMinN is the fewest observations the gamma MLE has a value for:
// from one observation the likelihood grows without bound in α.
const gammaMinN = 2

// SampleLen is 2: a gamma sample is (Σw, Σlog w) over draws y_i = d·w_i/β
// (see gammaGen), unwritten below gammaMinN observations.
func (*gammaModel) SampleLen(int) int { return 2 }

// Draw draws y_i = d·w_i/β and keeps Σw and Σlog w: the shape equation
// depends only on s = log w̄ − mean(log w), which is scale-free. Draws
// that underflow to w = 0 (shapes near 0) still carry their exact log w.
// Below gammaMinN observations Draw draws nothing: no estimate exists
// there, so the replicate is undefined whatever it would draw.
func (m *gammaModel) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	if n < gammaMinN {
		return
	}
	var sw, slw float64
	for range n {
		w, lw := m.gen.draw(rng)
		sw += w
		slw += lw
	}
	s.Data[0], s.Data[1] = sw, slw
}

func (m *gammaModel) NewFitter(int) Fitter { return m }

// Fit solves the shape equation (gammaShapeMLE) and, with ȳ = d·w̄/β,
// gives β̂ = α̂/ȳ = α̂β/(d·w̄). It reports false below gammaMinN
// observations, when s is not positive (all draws equal to rounding) or
// when the Newton iteration fails.
func (m *gammaModel) Fit(s *Sample, theta, cov []float64) bool {
	n := s.N
	if n < gammaMinN {
		return false
	}
	sw, slw := s.Data[0], s.Data[1]
	fn := float64(n)
	mw := sw / fn
	a, ok := gammaShapeMLE(math.Log(mw) - slw/fn)
	if !ok {
		return false
	}
	theta[0] = a
	theta[1] = a * m.rate / (m.gen.d * mw)
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse of the per-observation Fisher information
//
//	I(α, β) = [ψ1(α)  −1/β; −1/β  α/β²],
//
// from the log-density α log β + (α−1) log y − βy − log Γ(α):
//
//	I⁻¹ = [α  β; β  β²ψ1(α)] / (αψ1(α) − 1).
func (*gammaModel) Cov(theta, cov []float64) {
	a, b := theta[0], theta[1]
	e := trigammaExcess(a)
	cov[0], cov[1], cov[2], cov[3] = a/e, b/e, b/e, b*b*trigamma(a)/e
}

// Bias is the Cox & Snell (1968, "A general definition of residuals",
// JRSS B 30:248–275) first-order bias of the MLE,
//
//	bˢ = Σ κ^{sr} κ^{tu} (½κ_{rtu} + κ_{rt,u}),
//
// with κ^{..} the entries of I⁻¹ (Cov), κ_{rtu} = E ∂³ℓ/∂θr∂θt∂θu and
// κ_{rt,u} = E[∂²ℓ/∂θr∂θt · ∂ℓ/∂θu]. The second derivatives of the gamma
// log-density, −ψ1(α), 1/β and −α/β², do not involve y, so κ_{rt,u} is a
// constant times a mean score and vanishes. The third derivatives are
// ℓ_ααα = −ψ2(α), ℓ_ααβ = 0, ℓ_αββ = −1/β², ℓ_βββ = 2α/β³. For large α
// this gives b_α ≈ 3α.
func (m *gammaModel) Bias(theta, bias []float64) {
	a, b := theta[0], theta[1]
	var k [4]float64
	m.Cov(theta, k[:])
	k11, k12, k22 := k[0], k[1], k[3]
	// A_r = Σ_{t,u} κ^{tu} κ_{rtu}.
	a1 := -k11*tetragamma(a) - k22/(b*b)
	a2 := -2*k12/(b*b) + k22*2*a/(b*b*b)
	bias[0] = (k11*a1 + k12*a2) / 2
	bias[1] = (k12*a1 + k22*a2) / 2
}
