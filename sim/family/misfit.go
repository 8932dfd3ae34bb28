package family

import (
	"math"

	"deltaprobe/sim/stream"
)

// The poisson, exponential and normal fits of data from any law whose
// support suits them, and the robust variance of those fits. Each of the
// three likelihoods depends on the data only through ȳ and the sample
// variance, so its pseudo-true parameter θ* (the fitted parameter closest
// to the data law in Kullback–Leibler divergence, White 1982) matches
// moments exactly: E_θ* y = E y for the poisson and exponential fits, and
// both E y and Var y for the normal fit. The sandwich A⁻¹BA⁻¹ at θ* needs
// moments up to the fourth, which every law gives in closed form, so no
// step here is numerical.

// momentFit names the three fits.
type momentFit int

const (
	poissonFit momentFit = iota
	exponentialFit
	normalFit
)

// momentFitModel draws from a law and fits one of the three families,
// θ = (mean) for the poisson, (rate) for the exponential, (mean, sd) for
// the normal. It is its own sampler, estimator, fitter and asymptotics.
type momentFitModel struct {
	law    law
	kind   momentFit
	robust bool
	center float64   // the law's mean, subtracted from every draw
	star   []float64 // θ*
	sand   []float64 // the sandwich at θ* under the law, per observation
	bias   []float64 // b(θ*): E θ̂ − θ* = b/n + o(1/n)
}

// newMomentFit derives θ*, the sandwich and the first-order bias of the
// fit kind under l.
//
//   - poisson, score y/μ − 1: μ* = E y; A = 1/μ, B = Var y/μ², so
//     Σ = Var y. μ̂ = ȳ is unbiased.
//   - exponential, score 1/λ − y: λ* = 1/E y; A = 1/λ², B = Var y, so
//     Σ = λ*⁴ Var y. E 1/ȳ = 1/μ + Var y/(nμ³) + O(n⁻²) (second-order
//     Taylor expansion of 1/ȳ about μ), so b = Var y/μ³.
//   - normal, scores e/σ² and (e² − σ²)/σ³ with e = y − μ: μ* = E y,
//     σ*² = Var y; A = diag(1/σ², 2/σ²), B = [1/σ², μ3/σ⁵; μ3/σ⁵,
//     (μ4 − σ⁴)/σ⁶], so Σ = [σ², μ3/(2σ); μ3/(2σ), (μ4 − σ⁴)/(4σ²)]. The
//     mean is unbiased; σ̂ = √m2 with E m2 = σ²(n−1)/n and Var m2 =
//     (μ4 − σ⁴)/n + O(n⁻²) gives b = −σ/2 − (μ4 − σ⁴)/(8σ³), which is
//     the normal family's −3σ/4 when μ4 = 3σ⁴.
//
// All three are derived here; for a law of the fitted family they reduce
// to the inverse Fisher information and bias of that family.
func newMomentFit(l law, kind momentFit, robust bool) *momentFitModel {
	mo := l.moments()
	m := &momentFitModel{law: l, kind: kind, robust: robust, center: mo.mean}
	switch kind {
	case poissonFit:
		m.star = []float64{mo.mean}
		m.sand = []float64{mo.m2}
		m.bias = []float64{0}
	case exponentialFit:
		rate := 1 / mo.mean
		m.star = []float64{rate}
		m.sand = []float64{rate * rate * rate * rate * mo.m2}
		m.bias = []float64{mo.m2 / (mo.mean * mo.mean * mo.mean)}
	case normalFit:
		v := mo.m2
		sd := math.Sqrt(v)
		m.star = []float64{mo.mean, sd}
		c := mo.m3 / (2 * sd)
		m.sand = []float64{v, c, c, (mo.m4 - v*v) / (4 * v)}
		m.bias = []float64{0, -sd/2 - (mo.m4-v*v)/(8*v*sd)}
	}
	return m
}

func (m *momentFitModel) model() Model {
	return Model{Truth: m.star, Sampler: m, Estimator: m, Asymptotics: m}
}

// SampleLen is 4: the sample is (Σe, Σe², Σe³, Σe⁴) with e = y − c, c the
// law's mean; centring at the true mean keeps the central moments free of
// cancellation.
func (*momentFitModel) SampleLen(int) int { return 4 }

// Draw draws n observations through the law and keeps the centred power
// sums.
func (m *momentFitModel) Draw(rng *stream.PCG, n int, s *Sample) {
	var s1, s2, s3, s4 float64
	c := m.center
	for range n {
		e := m.law.one(rng) - c
		e2 := e * e
		s1 += e
		s2 += e2
		s3 += e2 * e
		s4 += e2 * e2
	}
	s.N = n
	s.Data[0], s.Data[1], s.Data[2], s.Data[3] = s1, s2, s3, s4
}

// NewFitter returns a fitter of the worker's own, which keeps the other
// variance of its latest fit (OtherVariance).
func (m *momentFitModel) NewFitter(int) Fitter { return &momentFitter{m: m} }

// momentFitter fits for one worker: the model's fit, and on request the
// other variance.
type momentFitter struct {
	m         *momentFitModel
	both      bool
	other     [4]float64
	otherOK   bool
	otherTail [2]float64 // θ̂ of the other fit, discarded
}

func (f *momentFitter) Fit(s *Sample, theta, cov []float64) bool {
	if !f.m.fit(s, theta, cov, f.m.robust) {
		return false
	}
	if f.both {
		f.otherOK = f.m.fit(s, f.otherTail[:len(theta)], f.other[:len(cov)], !f.m.robust)
	}
	return true
}

func (f *momentFitter) EnableOther() { f.both = true }

func (f *momentFitter) OtherCov(cov []float64) bool {
	copy(cov, f.other[:len(cov)])
	return f.both && f.otherOK
}

// fit forms ȳ and the sample central moments m2, m3, m4 (divisor n) and
// writes the fit's MLE with the model-based variance (the inverse
// observed information at θ̂, which for these three fits equals the
// expected information there: poisson ȳ, exponential λ̂², normal
// diag(σ̂², σ̂²/2)) or the sandwich with the sample's moments in place of
// the law's (see newMomentFit). An exponential fit has no value when
// ȳ ≤ 0 (no positive data), a normal fit none when m2 = 0.
func (m *momentFitModel) fit(s *Sample, theta, cov []float64, robust bool) bool {
	fn := float64(s.N)
	a1, a2 := s.Data[0]/fn, s.Data[1]/fn
	d := a1
	ybar := m.center + d
	m2 := max(a2-d*d, 0)
	switch m.kind {
	case poissonFit:
		theta[0] = ybar
		if robust {
			cov[0] = m2
		} else {
			cov[0] = ybar
		}
	case exponentialFit:
		if !(ybar > 0) {
			return false
		}
		rate := 1 / ybar
		theta[0] = rate
		if robust {
			cov[0] = rate * rate * rate * rate * m2
		} else {
			cov[0] = rate * rate
		}
	case normalFit:
		if !(m2 > 0) {
			return false
		}
		sd := math.Sqrt(m2)
		theta[0], theta[1] = ybar, sd
		if !robust {
			cov[0], cov[1], cov[2], cov[3] = m2, 0, 0, m2/2
			return true
		}
		a3, a4 := s.Data[2]/fn, s.Data[3]/fn
		m3 := a3 - 3*d*a2 + 2*d*d*d
		m4 := a4 - 4*d*a3 + 6*d*d*a2 - 3*d*d*d*d
		c := m3 / (2 * sd)
		cov[0], cov[1], cov[2], cov[3] = m2, c, c, (m4-m2*m2)/(4*m2)
	}
	return true
}

// Cov writes the sandwich at θ* under the law. It is defined at θ* only
// (the study evaluates it at Truth), so theta is not read.
func (m *momentFitModel) Cov(_, cov []float64) { copy(cov, m.sand) }

// Bias writes b(θ*) (see newMomentFit); theta is not read.
func (m *momentFitModel) Bias(_, bias []float64) { copy(bias, m.bias) }

// supportIn returns a fitsData that accepts data with one of the given
// supports.
func supportIn(supports ...Support) func(*Family) bool {
	return func(d *Family) bool {
		for _, s := range supports {
			if d.Support == s {
				return true
			}
		}
		return false
	}
}

// momentFitLaw returns the fitLaw of a moment fit.
func momentFitLaw(kind momentFit) func(*Family, map[string]float64, law, Variance) (Model, error) {
	return func(_ *Family, _ map[string]float64, l law, v Variance) (Model, error) {
		return newMomentFit(l, kind, v == RobustVariance).model(), nil
	}
}
