package family

import "math/rand/v2"

func init() {
	register(&Family{
		Name:      "exponential",
		Summary:   "Exponential(rate), mean 1/rate",
		Estimator: "MLE: 1/ȳ (bias ≈ rate/n; exactly E = n·rate/(n−1))",
		Params: []ParamSpec{
			{Name: "rate", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"rate"},
		New:       func(v map[string]float64) (Model, error) { return exponentialModel{rate: v["rate"]}, nil },
	})
}

// exponentialModel is the exponential family, θ = (rate).
type exponentialModel struct{ rate float64 }

func (exponentialModel) Params() []string { return []string{"rate"} }

func (m exponentialModel) Truth(theta []float64) { theta[0] = m.rate }

// Fit sums standard exponential draws E_i (y_i = E_i/λ), so the MLE
// 1/ȳ = λ·n/ΣE_i needs one division per sample instead of one a draw.
func (m exponentialModel) Fit(rng *rand.Rand, n int, theta []float64) bool {
	var s float64
	for range n {
		s += rng.ExpFloat64()
	}
	theta[0] = m.rate * float64(n) / s
	return true
}

// Cov is the inverse Fisher information of one observation, λ²: the
// log-density log λ − λy has second derivative −1/λ².
func (exponentialModel) Cov(theta, cov []float64) { cov[0] = theta[0] * theta[0] }

// Bias: nȳ ~ Gamma(n, λ), so E[1/ȳ] = nλ/(n−1) = λ + λ/n + O(n⁻²) and b = λ.
func (exponentialModel) Bias(theta, bias []float64) { bias[0] = theta[0] }
