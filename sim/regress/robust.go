package regress

import (
	"math"

	"deltaprobe/sim/family"
)

// The robust plug-in covariance is the sandwich of the stacked estimating
// equations (Huber 1967; White 1980, HC0): with every equation's score
// s_i at its estimate stacked into one vector per row, A the
// block-diagonal total information (each equation's own) and
// B = Σ s_i s_iᵀ over the rows, the covariance of θ̂ is A⁻¹BA⁻¹, so the
// per-observation covariance Fit writes is n·A⁻¹BA⁻¹ = C B C / n, C the
// model-based per-observation covariance n·A⁻¹ already in cov. The
// blocks between equations are B's cross-products of their scores, so a
// chain's cross-equation covariance is estimated, not assumed zero.
//
// Scores per row: a logistic or Poisson equation (y − μ)z; a linear one
// (r z/σ², (r² − σ²)/σ³) for (β, σ), r = y − zᵀβ̂, σ = σ̂ (the derivatives
// of its log-density, derived). The information of a linear equation at
// its MLE is block-diagonal, XᵀX/σ̂² and 2n/σ̂² (the cross term Σ r z
// vanishes there), which is what cov holds.

// sandwich replaces the model-based cov (dim×dim) by the robust one.
func (f *fitter) sandwich(s *family.Sample, theta, cov []float64) {
	d := len(theta)
	b, tmp, score := f.sb[:d*d], f.stmp[:d*d], f.score[:d]
	clear(b)
	stride := f.m.stride
	for i := 0; i < s.N; i++ {
		row := s.Data[i*stride : (i+1)*stride]
		for e := range f.m.eqs {
			q := &f.m.eqs[e]
			p := q.p()
			f.design(q, row)
			z := f.z[:p]
			beta := theta[q.off : q.off+p]
			eta := 0.0
			for j := range z {
				eta += beta[j] * z[j]
			}
			y := row[q.out]
			switch q.fit {
			case Logistic:
				r := y - expit(eta)
				for j := range z {
					score[q.off+j] = r * z[j]
				}
			case Poisson:
				r := y - math.Exp(eta)
				for j := range z {
					score[q.off+j] = r * z[j]
				}
			case Linear:
				sigma := theta[q.off+p]
				s2 := sigma * sigma
				r := y - eta
				for j := range z {
					score[q.off+j] = r * z[j] / s2
				}
				score[q.off+p] = (r*r - s2) / (s2 * sigma)
			}
		}
		for a := 0; a < d; a++ {
			sa := score[a]
			row := b[a*d : a*d+a+1]
			for c := range row {
				row[c] += sa * score[c]
			}
		}
	}
	mirror(b, d)
	// tmp = C·B, then cov = tmp·C / n.
	copy(f.sc[:d*d], cov)
	c := f.sc[:d*d]
	for a := 0; a < d; a++ {
		for j := 0; j < d; j++ {
			var v float64
			for k := 0; k < d; k++ {
				v += c[a*d+k] * b[k*d+j]
			}
			tmp[a*d+j] = v
		}
	}
	inv := 1 / float64(s.N)
	for a := 0; a < d; a++ {
		for j := 0; j < d; j++ {
			var v float64
			for k := 0; k < d; k++ {
				v += tmp[a*d+k] * c[k*d+j]
			}
			cov[a*d+j] = v * inv
		}
	}
}
