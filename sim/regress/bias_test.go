package regress

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// Cox & Snell's O(1/n) bias against the exact bias of the logistic MLE
// on a levels design: with m rows at each of the levels 0, 1, 2 the MLE
// depends on the three binomial success counts alone, so its exact mean
// is a sum over count vectors with gonum's binomial pmf (derived; counts
// whose pmf is below 1e-16 are left out, and so is every vector with a
// level all failures or all successes, which holds the separated ones:
// their total probability is below 1e-12 here). The exact bias times n
// approaches the coefficient b with a remainder of O(1/n): observed 1.96%
// at n = 300 and 0.97% at n = 600, halving as it should; the check allows
// 4% and 2%.
func TestBiasAgainstExactLogistic(t *testing.T) {
	const b0, b1 = -1.0, 0.8
	x := []float64{0, 1, 2}
	d := &Design{
		Covariates: []Covariate{{Name: "dose", Dist: Levels, Values: x}},
		Equations:  []Equation{{Outcome: "y", Kind: Logistic, Intercept: b0, Terms: []Term{{"dose", b1}}}},
	}
	m := mustNew(t, d)
	b := make([]float64, 2)
	m.Bias(m.truth, b)
	for _, c := range []struct {
		n   int
		tol float64
	}{{300, 0.04}, {600, 0.02}} {
		per := float64(c.n / 3)
		var ranges [3][]float64
		var pmfs [3][]float64
		for j, xv := range x {
			bin := distuv.Binomial{N: per, P: 1 / (1 + math.Exp(-(b0 + b1*xv)))}
			for k := 0.0; k <= per; k++ {
				if pr := bin.Prob(k); pr > 1e-16 && k > 0 && k < per {
					ranges[j] = append(ranges[j], k)
					pmfs[j] = append(pmfs[j], pr)
				}
			}
		}
		var mass, mean0, mean1 float64
		s := make([]float64, 3)
		for i0, k0 := range ranges[0] {
			for i1, k1 := range ranges[1] {
				for i2, k2 := range ranges[2] {
					s[0], s[1], s[2] = k0, k1, k2
					pr := pmfs[0][i0] * pmfs[1][i1] * pmfs[2][i2]
					e0, e1 := groupedNewton(x, s, per)
					mass += pr
					mean0 += pr * e0
					mean1 += pr * e1
				}
			}
		}
		mean0 /= mass
		mean1 /= mass
		for j, got := range []float64{(mean0 - b0) * float64(c.n), (mean1 - b1) * float64(c.n)} {
			t.Logf("n=%d coefficient %d: n·(exact bias) = %.6g, Cox–Snell b = %.6g (ratio %.4f)", c.n, j, got, b[j], got/b[j])
			if math.Abs(got/b[j]-1) > c.tol {
				t.Errorf("n=%d coefficient %d: n·(exact bias) = %.6g, Cox & Snell (1968) b = %.6g: off by more than %.0f%%", c.n, j, got, b[j], 100*c.tol)
			}
		}
	}
}

// groupedNewton fits intercept + slope to success counts s of m trials
// at levels x (the test's own, with the 2×2 inverse in closed form).
func groupedNewton(x, s []float64, m float64) (b0, b1 float64) {
	var tot float64
	for _, v := range s {
		tot += v
	}
	pbar := tot / (m * float64(len(s)))
	b0 = math.Log(pbar / (1 - pbar))
	for it := 0; it < 100; it++ {
		var g0, g1, i00, i01, i11 float64
		for j := range x {
			p := 1 / (1 + math.Exp(-(b0 + b1*x[j])))
			r, w := s[j]-m*p, m*p*(1-p)
			g0, g1 = g0+r, g1+r*x[j]
			i00, i01, i11 = i00+w, i01+w*x[j], i11+w*x[j]*x[j]
		}
		det := i00*i11 - i01*i01
		d0 := (i11*g0 - i01*g1) / det
		d1 := (i00*g1 - i01*g0) / det
		b0, b1 = b0+d0, b1+d1
		if math.Abs(d0)+math.Abs(d1) < 1e-13 {
			break
		}
	}
	return b0, b1
}
