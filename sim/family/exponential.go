package family

import "deltaprobe/sim/stream"

func init() {
	register(&Family{
		Name:      "exponential",
		Summary:   "Exponential(rate), mean 1/rate",
		Estimator: "MLE: 1/ȳ (bias ≈ rate/n; exactly E = n·rate/(n−1))",
		Params: []ParamSpec{
			{Name: "rate", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"rate"},
		Support:   Positive,
		fitsData:  supportIn(Positive),
		fitLaw:    momentFitLaw(exponentialFit),
		law: func(v map[string]float64) (law, error) {
			return &exponentialLaw{v["rate"]}, nil
		},
		New: func(v map[string]float64) (Model, error) {
			m := &exponentialModel{rate: v["rate"]}
			return Model{Truth: []float64{m.rate}, Sampler: m, Estimator: m, Asymptotics: m, EventShare: 1}, nil
		},
		Censor:            newCensoredExponential,
		CensoredEstimator: "censored MLE: events / total time at risk, variance 1/observed information or the sandwich; undefined without events",
	})
}

// exponentialModel is the exponential family with its MLE, θ = (rate).
type exponentialModel struct{ rate float64 }

// SampleLen is 1: an exponential sample is (ΣE) over standard exponential
// draws E_i, the observations being y_i = E_i/λ.
func (*exponentialModel) SampleLen(int) int { return 1 }

// Draw keeps the sum of n standard exponential draws.
func (*exponentialModel) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N, s.Data[0] = n, sumStdExponentials(rng, n)
}

// sumStdExponentials draws n standard exponentials and returns their sum,
// as sumStdNormals does the normals: rng.ExpFloat64()'s draws, with the
// generator in a local and the ziggurat's fast path inlined.
//
//go:noinline
func sumStdExponentials(rng *stream.PCG, n int) (sum float64) {
	q := *rng
	for range n {
		u := q.Uint64()
		e, ok := stream.ExpFast(u)
		if !ok {
			e, q = stream.ExpFrom(q, u)
		}
		sum += e
	}
	*rng = q
	return sum
}

// Events: every lifetime is seen.
func (*exponentialModel) Events(s *Sample) int { return s.N }

// MinEvents: one event gives the rate a value.
func (*exponentialModel) MinEvents() int { return 1 }

func (m *exponentialModel) NewFitter(int) Fitter { return m }

// Fit: the MLE 1/ȳ = λ·n/ΣE_i needs one division per sample instead of
// one a draw.
func (m *exponentialModel) Fit(s *Sample, theta, cov []float64) bool {
	theta[0] = m.rate * float64(s.N) / s.Data[0]
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse Fisher information of one observation, λ²: the
// log-density log λ − λy has second derivative −1/λ².
func (*exponentialModel) Cov(theta, cov []float64) { cov[0] = theta[0] * theta[0] }

// Bias: nȳ ~ Gamma(n, λ), so E[1/ȳ] = nλ/(n−1) = λ + λ/n + O(n⁻²) and b = λ.
func (*exponentialModel) Bias(theta, bias []float64) { bias[0] = theta[0] }
