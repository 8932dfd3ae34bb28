package family

import (
	"math"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "normal",
		Summary:   "Normal(mean, sd²)",
		Estimator: "MLE: sample mean (unbiased) and sd with divisor n (bias ≈ −3·sd/(4n))",
		Params: []ParamSpec{
			{Name: "mean", Accepts: "any real number", Check: anyReal},
			{Name: "sd", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"mean", "sd"},
		Support:   Reals,
		fitsData:  supportIn(Reals, Positive, Counts),
		fitLaw:    momentFitLaw(normalFit),
		law: func(v map[string]float64) (law, error) {
			return &normalLaw{v["mean"], v["sd"]}, nil
		},
		New: func(v map[string]float64) (Model, error) {
			return newNormalModel(v["mean"], v["sd"]), nil
		},
	})
}

// normalModel is the normal family with its MLE, θ = (mean, sd). It is
// its own sampler, estimator (it keeps no buffers, so it is its own
// fitter) and asymptotics.
type normalModel struct{ mean, sd float64 }

func newNormalModel(mean, sd float64) Model {
	m := &normalModel{mean: mean, sd: sd}
	return Model{Truth: []float64{mean, sd}, Sampler: m, Estimator: m, Asymptotics: m}
}

// SampleLen is 2: a normal sample is (Σz, Σz²) over standard normal
// draws z_i, the observations being mean + sd·z_i.
func (*normalModel) SampleLen(int) int { return 2 }

// Draw keeps the sums of standard normal draws: shifting by the true mean
// keeps the sum of squares free of cancellation, and scaling once (in
// Fit) saves a multiply a draw.
func (*normalModel) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	s.Data[0], s.Data[1] = sumStdNormals(rng, n)
}

// sumStdNormals draws n standard normals and returns their sum and sum of
// squares. It is Draw's loop, kept in a function of its own because Go's
// calling convention saves no register across a call: a loop inside a
// function with values live after it reloads them on every draw (with
// the loop inside the fit, θ's slice, the mean and the sd: measured 4–5%
// slower per draw). The generator's state is copied to a local, so it
// stays in registers, and the ziggurat's fast path is inlined
// (stream.NormFast); the rare slow path takes and returns it by value.
// The draws are rng.NormFloat64()'s, value for value.
//
//go:noinline
func sumStdNormals(rng *stream.PCG, n int) (s1, s2 float64) {
	q := *rng
	for i := 0; i < n; i++ {
		u := q.Uint64()
		z, ok := stream.NormFast(u)
		if !ok {
			z, q = stream.NormFrom(q, u)
		}
		s1 += z
		s2 += z * z
	}
	*rng = q
	return s1, s2
}

func (m *normalModel) NewFitter(int) Fitter { return m }

// Fit rescales the standard-unit sums once: x̄ = mean + sd·z̄ and
// σ̂ = sd·√(Σ(z − z̄)²/n).
func (m *normalModel) Fit(s *Sample, theta, cov []float64) bool {
	s1, s2 := s.Data[0], s.Data[1]
	fn := float64(s.N)
	ss := s2 - s1*s1/fn
	if ss < 0 {
		ss = 0
	}
	theta[0] = m.mean + m.sd*s1/fn
	theta[1] = m.sd * math.Sqrt(ss/fn)
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse Fisher information of one observation:
// diag(σ², σ²/2) (Casella & Berger 2002, §7.3, from memory).
func (*normalModel) Cov(theta, cov []float64) {
	s2 := theta[1] * theta[1]
	cov[0], cov[1], cov[2], cov[3] = s2, 0, 0, s2/2
}

// Bias: E σ̂ = σ·sqrt((n−1)/n)·c4(n) = σ(1 − 3/(4n)) + O(n⁻²).
func (*normalModel) Bias(theta, bias []float64) {
	bias[0], bias[1] = 0, -0.75*theta[1]
}
