package study

import (
	"encoding/json"
	"math"
)

// Prediction is what the delta method forecasts for one transform at one
// sample size, evaluated at the true parameters.
type Prediction struct {
	Truth    float64 `json:"truth"`     // τ0 = τ(θ0)
	DeltaVar float64 `json:"delta_var"` // gᵀ Σ(θ0) g with Σ stacked over arms, each Σ_arm/n_arm
	Bias2nd  float64 `json:"bias_2nd"`  // ½ tr(H Σ) + gᵀ b, the second-order bias; NaN where not available
}

// predictionJSON is a Prediction as saved: a bias that is not available
// (NaN, which JSON cannot hold) is null.
type predictionJSON struct {
	Truth    float64  `json:"truth"`
	DeltaVar float64  `json:"delta_var"`
	Bias2nd  *float64 `json:"bias_2nd"`
}

// MarshalJSON writes a NaN second-order bias as null.
func (p Prediction) MarshalJSON() ([]byte, error) {
	j := predictionJSON{Truth: p.Truth, DeltaVar: p.DeltaVar}
	if !math.IsNaN(p.Bias2nd) {
		j.Bias2nd = &p.Bias2nd
	}
	return json.Marshal(j)
}

// UnmarshalJSON reads null as a second-order bias that is not available.
func (p *Prediction) UnmarshalJSON(b []byte) error {
	var j predictionJSON
	if err := json.Unmarshal(b, &j); err != nil {
		return err
	}
	*p = Prediction{Truth: j.Truth, DeltaVar: j.DeltaVar, Bias2nd: math.NaN()}
	if j.Bias2nd != nil {
		p.Bias2nd = *j.Bias2nd
	}
	return nil
}

// Truth returns θ0, the true parameters stacked over arms.
func (s *Study) Truth() []float64 {
	theta := make([]float64, s.Dim())
	for _, a := range s.Arms {
		copy(theta[a.Offset:], a.Model.Truth)
	}
	return theta
}

// Predict returns the delta-method predictions for transform t at n.
//
// The first-order variance is gᵀ Σ g (Casella & Berger 2002, §5.5.4); the
// second-order bias is ½ tr(H Σ) (Oehlert 1992) plus gᵀ b, the
// estimator's own O(1/n) bias carried through the gradient. Arms are
// independent, so Σ is block diagonal and both sums run arm by arm.
//
// The second-order bias is often exactly 0 because its terms cancel (an
// unbiased plug-in such as log(2)/λ̂ = log(2)·ȳ, or the gamma mean a/b):
// then the sum holds only rounding, such as −4.4e-16. A bias within
// cancelTol of the sum of the terms' magnitudes is written as 0; see
// cancelTol for why that cannot hide a real bias.
func (s *Study) Predict(t, n int) Prediction {
	theta := s.Truth()
	v, grad, hess := s.Transforms[t].Program.ValueGradHessian(theta)
	d := len(theta)
	p := Prediction{Truth: v, DeltaVar: s.deltaVar(grad, theta, n)}
	var scale float64 // Σ of the magnitudes of the bias terms
	for ai, a := range s.Arms {
		k := len(a.Model.Truth)
		cov := make([]float64, k*k)
		bias := make([]float64, k)
		a.Model.Asymptotics.Cov(theta[a.Offset:a.Offset+k], cov)
		a.Model.Asymptotics.Bias(theta[a.Offset:a.Offset+k], bias)
		na := float64(s.ArmSize(ai, n))
		var trace, gb, size float64
		for i := 0; i < k; i++ {
			for j := 0; j < k; j++ {
				h := hess[(a.Offset+i)*d+a.Offset+j] * cov[j*k+i]
				trace += h
				size += 0.5 * math.Abs(h)
			}
			if grad[a.Offset+i] == 0 {
				// A parameter the transform does not read adds nothing,
				// even where its bias is not available (NaN).
				continue
			}
			g := grad[a.Offset+i] * bias[i]
			gb += g
			size += math.Abs(g)
		}
		p.Bias2nd += (0.5*trace + gb) / na
		scale += size / na
	}
	if !math.IsInf(scale, 0) && math.Abs(p.Bias2nd) <= cancelTol*scale {
		p.Bias2nd = 0
	}
	return p
}

// cancelTol is 64 units in the last place (64·2⁻⁵²), relative to the sum
// of the magnitudes of the second-order bias terms. Each term is a product
// of a derivative from forward-mode automatic differentiation and a
// closed-form covariance or bias, a few dozen floating-point operations
// each, and a sum's rounding error is bounded by its length times the unit
// roundoff times the sum of magnitudes (standard error analysis, from
// memory); so a bias that is exactly 0 comes out within some tens of ulps
// of that sum (observed: a quarter of an ulp for the gamma mean), and 64
// covers it with room. A real second-order bias that small is 10⁻¹⁴ of its
// own terms: no Monte Carlo run could tell it from 0, so writing 0 loses
// nothing measurable.
const cancelTol = 64 * 0x1p-52

// deltaVar is gᵀ Σ(θ) g at sample size n, with Σ block diagonal over arms.
func (s *Study) deltaVar(grad, theta []float64, n int) float64 {
	var total float64
	for ai, a := range s.Arms {
		k := len(a.Model.Truth)
		cov := make([]float64, k*k)
		a.Model.Asymptotics.Cov(theta[a.Offset:a.Offset+k], cov)
		total += QuadForm(grad[a.Offset:a.Offset+k], cov) / float64(s.ArmSize(ai, n))
	}
	return total
}

// QuadForm is gᵀ C g for a row-major k×k matrix C.
func QuadForm(g, c []float64) float64 {
	k := len(g)
	var q float64
	for i := 0; i < k; i++ {
		var row float64
		for j := 0; j < k; j++ {
			row += c[i*k+j] * g[j]
		}
		q += g[i] * row
	}
	return q
}
