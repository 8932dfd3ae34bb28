package family

import (
	"fmt"
	"math"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "binomial",
		Summary:   "Binomial(size, p) per observation, size fixed and known",
		Estimator: "MLE of p: total successes over n·size trials (unbiased)",
		Discrete:  true,
		Params: []ParamSpec{
			{Name: "size", Integer: true, Accepts: "a whole number ≥ 1", Check: atLeastOne},
			{Name: "p", Accepts: "a number strictly between 0 and 1", Check: openUnit},
		},
		Estimates: []string{"p"},
		Support:   Counts,
		law: func(v map[string]float64) (law, error) {
			m, err := newBinomialModel(v["size"], v["p"])
			if err != nil {
				return nil, err
			}
			return &binomialLaw{m}, nil
		},
		New: func(v map[string]float64) (Model, error) {
			m, err := newBinomialModel(v["size"], v["p"])
			if err != nil {
				return Model{}, err
			}
			return Model{Truth: []float64{m.p}, Sampler: m, Estimator: m, Asymptotics: m}, nil
		},
	})
}

// binomialSizeMax is the largest whole number a float64 holds exactly.
const binomialSizeMax = 1 << 53

// binomialModel is the binomial family with size fixed and its MLE,
// θ = (p).
type binomialModel struct {
	size  float64
	p     float64
	table *cdfTable
}

// newBinomialModel tabulates Binomial(size, p) from its mode ⌊(size+1)p⌋
// with f(k+1)/f(k) = (size−k)p/((k+1)(1−p)) and
// f(k−1)/f(k) = k(1−p)/((size−k+1)p). A distribution whose table would
// exceed maxTableLen entries (size·p·(1−p) above about 3·10⁹) is refused
// rather than approximated.
func newBinomialModel(size, p float64) (*binomialModel, error) {
	if size < 1 || size != math.Floor(size) || size > binomialSizeMax {
		return nil, fmt.Errorf("sim: binomial size %g is not a whole number in [1, %d]", size, int64(binomialSizeMax))
	}
	if !(p > 0 && p < 1) {
		return nil, fmt.Errorf("sim: binomial p %g is not strictly between 0 and 1", p)
	}
	odds := p / (1 - p)
	mode := int(math.Floor((size + 1) * p))
	if mode > int(size) {
		mode = int(size)
	}
	t, err := newUnimodalTable(mode, 0, int(size),
		func(k int) float64 { return (size - float64(k)) / float64(k+1) * odds },
		func(k int) float64 { return float64(k) / (size - float64(k) + 1) / odds })
	if err != nil {
		return nil, fmt.Errorf("sim: binomial(size %g, p %g): %w; accepted are sizes with size·p·(1−p) up to about 3e9", size, p, err)
	}
	return &binomialModel{size: size, p: p, table: t}, nil
}

// SampleLen is 1: a binomial sample is (Σy), the successes in n·size
// trials.
func (*binomialModel) SampleLen(int) int { return 1 }

// Draw draws n binomial counts by table inversion and keeps their total.
// (The total is Binomial(n·size, p), but the design draws each
// observation.)
func (m *binomialModel) Draw(rng *stream.PCG, n int, s *Sample) {
	var sum float64
	for range n {
		sum += float64(m.table.draw(rng))
	}
	s.N, s.Data[0] = n, sum
}

func (m *binomialModel) NewFitter(int) Fitter { return m }

// Fit returns the proportion of successes, the total over n·size trials.
func (m *binomialModel) Fit(s *Sample, theta, cov []float64) bool {
	theta[0] = s.Data[0] / (float64(s.N) * m.size)
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse Fisher information of one binomial observation,
// p(1−p)/size: the score is y/p − (size−y)/(1−p) with variance
// size/(p(1−p)).
func (m *binomialModel) Cov(theta, cov []float64) { cov[0] = theta[0] * (1 - theta[0]) / m.size }

// Bias is zero: the proportion is unbiased.
func (*binomialModel) Bias(theta, bias []float64) { bias[0] = 0 }
