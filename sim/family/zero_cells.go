package family

// HalfCorrector is implemented by the estimators of counts to which the
// Haldane–Anscombe correction applies (Haldane 1956, Annals of Human
// Genetics 20:309; Anscombe 1956, Biometrika 43:461): when a count is 0,
// or a proportion's count equals its trials, 0.5 is added to the
// successes and to the failures (to a Poisson count, 0.5 to the count)
// before estimating, so that log and logit transforms stay defined. The
// runner applies it to every correctable arm of a replicate as soon as
// one of them is at its boundary. Both methods read the sample only and
// allocate nothing.
type HalfCorrector interface {
	// AtBoundary reports whether the sample's count is 0 or, for a
	// proportion, equals its trials.
	AtBoundary(s *Sample) bool
	// FitAddHalf writes θ̂ and its per-observation plug-in covariance
	// after the correction, and returns the number of observations to
	// divide that covariance by: the corrected trials over the trials of
	// one observation (n + 1/size for a proportion), n for a Poisson mean.
	FitAddHalf(s *Sample, theta, cov []float64) float64
}

// AtBoundary: no ones, or all ones.
func (*bernoulliModel) AtBoundary(s *Sample) bool {
	return s.Data[0] == 0 || s.Data[0] == float64(s.N)
}

// FitAddHalf: p̂ = (x + ½)/(n + 1), covariance p̂(1 − p̂) per observation
// over n + 1 observations, which makes the variance of logit p̂ the
// familiar 1/(x + ½) + 1/(n − x + ½).
func (m *bernoulliModel) FitAddHalf(s *Sample, theta, cov []float64) float64 {
	n := float64(s.N)
	theta[0] = (s.Data[0] + 0.5) / (n + 1)
	m.Cov(theta, cov)
	return n + 1
}

// AtBoundary: no successes, or all n·size trials successes.
func (m *binomialModel) AtBoundary(s *Sample) bool {
	return s.Data[0] == 0 || s.Data[0] == float64(s.N)*m.size
}

// FitAddHalf: p̂ = (Σy + ½)/(n·size + 1), covariance p̂(1 − p̂)/size per
// observation over n + 1/size observations, so the variance is
// p̂(1 − p̂)/(n·size + 1).
func (m *binomialModel) FitAddHalf(s *Sample, theta, cov []float64) float64 {
	trials := float64(s.N) * m.size
	theta[0] = (s.Data[0] + 0.5) / (trials + 1)
	m.Cov(theta, cov)
	return (trials + 1) / m.size
}

// AtBoundary: a total count of 0.
func (*poissonModel) AtBoundary(s *Sample) bool { return s.Data[0] == 0 }

// FitAddHalf: μ̂ = (Σy + ½)/n, covariance μ̂ per observation over n.
func (m *poissonModel) FitAddHalf(s *Sample, theta, cov []float64) float64 {
	n := float64(s.N)
	theta[0] = (s.Data[0] + 0.5) / n
	m.Cov(theta, cov)
	return n
}
