package family

import (
	"math"
	"testing"
)

// The Haldane–Anscombe correction (Haldane 1956; Anscombe 1956) on each
// count family, by hand: at the boundary 0.5 is added to the successes
// and to the failures (a Poisson count gets 0.5), and the covariance is
// divided by the corrected trials over the trials of one observation.
func TestHalfCorrection(t *testing.T) {
	for _, c := range []struct {
		family   string
		values   map[string]float64
		n        int
		count    float64
		boundary bool
		theta    float64 // corrected estimate
		variance float64 // cov / returned size: the corrected estimate's variance
	}{
		// (0 + ½)/(10 + 1); p̃(1 − p̃)/11.
		{"bernoulli", map[string]float64{"p": 0.1}, 10, 0, true, 0.5 / 11, (0.5 / 11) * (10.5 / 11) / 11},
		{"bernoulli", map[string]float64{"p": 0.1}, 10, 10, true, 10.5 / 11, (10.5 / 11) * (0.5 / 11) / 11},
		{"bernoulli", map[string]float64{"p": 0.1}, 10, 3, false, 0, 0},
		// 5 observations of size 4: 20 trials; (0 + ½)/21, p̃(1 − p̃)/21.
		{"binomial", map[string]float64{"size": 4, "p": 0.2}, 5, 0, true, 0.5 / 21, (0.5 / 21) * (20.5 / 21) / 21},
		{"binomial", map[string]float64{"size": 4, "p": 0.2}, 5, 20, true, 20.5 / 21, (20.5 / 21) * (0.5 / 21) / 21},
		{"binomial", map[string]float64{"size": 4, "p": 0.2}, 5, 19, false, 0, 0},
		// (0 + ½)/8, variance μ̃/8.
		{"poisson", map[string]float64{"mean": 0.1}, 8, 0, true, 0.5 / 8, 0.5 / 8 / 8},
		{"poisson", map[string]float64{"mean": 0.1}, 8, 1, false, 0, 0},
	} {
		m := mustModel(t, c.family, c.values)
		h, ok := m.Estimator.(HalfCorrector)
		if !ok {
			t.Fatalf("%s: no zero-cell correction", c.family)
		}
		s := &Sample{N: c.n, Data: []float64{c.count}}
		if got := h.AtBoundary(s); got != c.boundary {
			t.Errorf("%s, count %v of n %d: at boundary %v, want %v", c.family, c.count, c.n, got, c.boundary)
		}
		if !c.boundary {
			continue
		}
		theta, cov := make([]float64, 1), make([]float64, 1)
		size := h.FitAddHalf(s, theta, cov)
		if math.Abs(theta[0]-c.theta) > 1e-15 || math.Abs(cov[0]/size-c.variance) > 1e-15 {
			t.Errorf("%s, count %v: θ̃ %v, variance %v; want %v, %v", c.family, c.count, theta[0], cov[0]/size, c.theta, c.variance)
		}
		if s.Data[0] != c.count {
			t.Errorf("%s: the correction changed the sample", c.family)
		}
	}
	for f, v := range map[string]map[string]float64{
		"normal":      {"mean": 1, "sd": 1},
		"exponential": {"rate": 1},
		"lognormal":   {"meanlog": 0, "sdlog": 1},
	} {
		if _, ok := mustModel(t, f, v).Estimator.(HalfCorrector); ok {
			t.Errorf("%s is corrected for zero cells; only count families are", f)
		}
	}
}
