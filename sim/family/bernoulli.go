package family

import "deltaprobe/sim/stream"

func init() {
	register(&Family{
		Name:      "bernoulli",
		Summary:   "Bernoulli(p): 1 with probability p, else 0",
		Estimator: "MLE: proportion of ones (unbiased); it is 0 or 1 when every draw agrees",
		Discrete:  true,
		Params: []ParamSpec{
			{Name: "p", Accepts: "a number strictly between 0 and 1", Check: openUnit},
		},
		Estimates: []string{"p"},
		Support:   Counts,
		law: func(v map[string]float64) (law, error) {
			return &bernoulliLaw{v["p"]}, nil
		},
		New: func(v map[string]float64) (Model, error) {
			m := &bernoulliModel{p: v["p"]}
			return Model{Truth: []float64{m.p}, Sampler: m, Estimator: m, Asymptotics: m}, nil
		},
	})
}

// bernoulliModel is the Bernoulli family with its MLE, θ = (p).
type bernoulliModel struct{ p float64 }

// SampleLen is 1: a Bernoulli sample is (number of ones).
func (*bernoulliModel) SampleLen(int) int { return 1 }

// Draw draws each observation from one uniform, 1 when U < p. It reads p
// into a local once; read through m, it is reloaded after every draw's
// call (see sumStdNormals).
func (m *bernoulliModel) Draw(rng *stream.PCG, n int, s *Sample) {
	count, p := 0, m.p
	for range n {
		if rng.Float64() < p {
			count++
		}
	}
	s.N, s.Data[0] = n, float64(count)
}

func (m *bernoulliModel) NewFitter(int) Fitter { return m }

// Fit returns the proportion of ones. The MLE exists on the boundary too
// (0 or 1 when the draws all agree), so Fit always reports true; a
// transform such as the logit is then infinite, which is the runner's to
// handle.
func (m *bernoulliModel) Fit(s *Sample, theta, cov []float64) bool {
	theta[0] = s.Data[0] / float64(s.N)
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse Fisher information of one observation, p(1−p).
func (*bernoulliModel) Cov(theta, cov []float64) { cov[0] = theta[0] * (1 - theta[0]) }

// Bias is zero: the proportion is unbiased.
func (*bernoulliModel) Bias(theta, bias []float64) { bias[0] = 0 }
