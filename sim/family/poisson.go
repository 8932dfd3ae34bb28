package family

import (
	"fmt"
	"math"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "poisson",
		Summary:   "Poisson(mean)",
		Estimator: "MLE: sample mean (unbiased)",
		Discrete:  true,
		Params: []ParamSpec{
			{Name: "mean", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"mean"},
		Support:   Counts,
		fitsData:  supportIn(Counts),
		fitLaw:    momentFitLaw(poissonFit),
		law: func(v map[string]float64) (law, error) {
			m, err := newPoissonModel(v["mean"])
			if err != nil {
				return nil, err
			}
			return &poissonLaw{m}, nil
		},
		New: func(v map[string]float64) (Model, error) {
			m, err := newPoissonModel(v["mean"])
			if err != nil {
				return Model{}, err
			}
			return Model{Truth: []float64{m.mean}, Sampler: m, Estimator: m, Asymptotics: m}, nil
		},
	})
}

// poissonTableMax is the largest mean drawn by table inversion; its table
// has about 6000 entries (48 KiB). Larger means use PTRS, whose cost does
// not grow with the mean.
const poissonTableMax = 1e5

// poissonMeanMax keeps every count well inside the integers a float64
// represents exactly (2⁵³ ≈ 9·10¹⁵).
const poissonMeanMax = 1e15

// poissonModel is the Poisson family with its MLE, θ = (mean).
type poissonModel struct {
	mean  float64
	table *cdfTable // nil when ptrs is used
	ptrs  ptrsPoisson
}

func newPoissonModel(mean float64) (*poissonModel, error) {
	if !(mean > 0) || mean > poissonMeanMax {
		return nil, fmt.Errorf("sim: poisson mean %g is outside (0, %g]", mean, poissonMeanMax)
	}
	m := &poissonModel{mean: mean}
	if mean > poissonTableMax {
		m.ptrs = newPTRSPoisson(mean)
		return m, nil
	}
	// f(k+1)/f(k) = μ/(k+1) and f(k−1)/f(k) = k/μ; the mode is ⌊μ⌋.
	t, err := newUnimodalTable(int(math.Floor(mean)), 0, math.MaxInt,
		func(k int) float64 { return mean / float64(k+1) },
		func(k int) float64 { return float64(k) / mean })
	if err != nil {
		return nil, fmt.Errorf("sim: poisson mean %g: %w", mean, err)
	}
	m.table = t
	return m, nil
}

// SampleLen is 1: a Poisson sample is (Σy).
func (*poissonModel) SampleLen(int) int { return 1 }

// draw returns one observation.
func (m *poissonModel) draw(rng *stream.PCG) float64 {
	if m.table != nil {
		return float64(m.table.draw(rng))
	}
	return m.ptrs.draw(rng)
}

// Draw draws n counts and keeps their sum as a float64, exact while it
// stays below 2⁵³. (The sum is itself Poisson(nμ), but the design draws
// each observation.)
func (m *poissonModel) Draw(rng *stream.PCG, n int, s *Sample) {
	var sum float64
	for range n {
		sum += m.draw(rng)
	}
	s.N, s.Data[0] = n, sum
}

func (m *poissonModel) NewFitter(int) Fitter { return m }

// Fit: the MLE is the mean count.
func (m *poissonModel) Fit(s *Sample, theta, cov []float64) bool {
	theta[0] = s.Data[0] / float64(s.N)
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse Fisher information of one observation, μ: the score
// is y/μ − 1 and E[y/μ²] = 1/μ.
func (*poissonModel) Cov(theta, cov []float64) { cov[0] = theta[0] }

// Bias is zero: E ȳ = μ.
func (*poissonModel) Bias(theta, bias []float64) { bias[0] = 0 }
