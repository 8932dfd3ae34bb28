package study

// Prediction is what the delta method forecasts for one transform at one
// sample size, evaluated at the true parameters.
type Prediction struct {
	Truth    float64 `json:"truth"`     // τ0 = τ(θ0)
	DeltaVar float64 `json:"delta_var"` // gᵀ Σ(θ0) g with Σ stacked over arms, each Σ_arm/n_arm
	Bias2nd  float64 `json:"bias_2nd"`  // ½ tr(H Σ) + gᵀ b, the second-order bias
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
func (s *Study) Predict(t, n int) Prediction {
	theta := s.Truth()
	v, grad, hess := s.Transforms[t].Program.ValueGradHessian(theta)
	d := len(theta)
	p := Prediction{Truth: v, DeltaVar: s.deltaVar(grad, theta, n)}
	for ai, a := range s.Arms {
		k := len(a.Model.Truth)
		cov := make([]float64, k*k)
		bias := make([]float64, k)
		a.Model.Asymptotics.Cov(theta[a.Offset:a.Offset+k], cov)
		a.Model.Asymptotics.Bias(theta[a.Offset:a.Offset+k], bias)
		na := float64(s.ArmSize(ai, n))
		var trace, gb float64
		for i := 0; i < k; i++ {
			for j := 0; j < k; j++ {
				trace += hess[(a.Offset+i)*d+a.Offset+j] * cov[j*k+i]
			}
			gb += grad[a.Offset+i] * bias[i]
		}
		p.Bias2nd += (0.5*trace + gb) / na
	}
	return p
}

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
