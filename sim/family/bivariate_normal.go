package family

import (
	"math"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "bivariate_normal",
		Summary:   "(x, y) bivariate normal: means mean_x, mean_y, sds sd_x, sd_y, correlation rho",
		Estimator: "MLE: means (unbiased), sds with divisor n (bias ≈ −3·sd/(4n)), Pearson r (bias ≈ −rho(1−rho²)/(2n))",
		Params: []ParamSpec{
			{Name: "mean_x", Accepts: "any real number", Check: anyReal},
			{Name: "mean_y", Accepts: "any real number", Check: anyReal},
			{Name: "sd_x", Accepts: "a number > 0", Check: positive},
			{Name: "sd_y", Accepts: "a number > 0", Check: positive},
			{Name: "rho", Accepts: "a number strictly between −1 and 1", Check: openSigned},
		},
		Support:   Pairs,
		Estimates: []string{"mean_x", "mean_y", "sd_x", "sd_y", "rho"},
		New: func(v map[string]float64) (Model, error) {
			rho := v["rho"]
			m := &bivariateNormalModel{
				mx: v["mean_x"], my: v["mean_y"], sx: v["sd_x"], sy: v["sd_y"],
				rho: rho, c: math.Sqrt((1 - rho) * (1 + rho)),
			}
			return Model{Truth: []float64{m.mx, m.my, m.sx, m.sy, m.rho}, Sampler: m, Estimator: m, Asymptotics: m}, nil
		},
	})
}

// bivariateNormalModel is the bivariate normal family with its MLE,
// θ = (mean_x, mean_y, sd_x, sd_y, rho).
type bivariateNormalModel struct {
	mx, my, sx, sy, rho float64
	c                   float64 // √(1−ρ²), as (1−ρ)(1+ρ) to keep digits near |ρ| = 1
}

// pair returns one draw in standard units: x = mean_x + sd_x·z,
// y = mean_y + sd_y·w, with z, w standard normal and corr(z, w) = ρ.
func (m *bivariateNormalModel) pair(rng *stream.PCG) (z, w float64) {
	z = rng.NormFloat64()
	return z, m.rho*z + m.c*rng.NormFloat64()
}

// SampleLen is 5: a bivariate normal sample is (Σz, Σw, Σz², Σw², Σzw)
// over the standard-unit draws of pair.
func (*bivariateNormalModel) SampleLen(int) int { return 5 }

// Draw accumulates the standard-unit draws, whose sums are centred at the
// true means (no cancellation).
func (m *bivariateNormalModel) Draw(rng *stream.PCG, n int, s *Sample) {
	var sz, sw, szz, sww, szw float64
	for range n {
		z, w := m.pair(rng)
		sz += z
		sw += w
		szz += z * z
		sww += w * w
		szw += z * w
	}
	s.N = n
	s.Data[0], s.Data[1], s.Data[2], s.Data[3], s.Data[4] = sz, sw, szz, sww, szw
}

func (m *bivariateNormalModel) NewFitter(int) Fitter { return m }

// Fit rescales the standard-unit sums once: the sds scale by sd_x, sd_y
// and Pearson r is scale-free. It reports false when a sample has no
// spread (n = 1), where r is undefined.
func (m *bivariateNormalModel) Fit(s *Sample, theta, cov []float64) bool {
	sz, sw, szz, sww, szw := s.Data[0], s.Data[1], s.Data[2], s.Data[3], s.Data[4]
	fn := float64(s.N)
	cz, cw := sz/fn, sw/fn
	vzz := szz - sz*cz
	vww := sww - sw*cw
	vzw := szw - sz*cw
	if !(vzz > 0 && vww > 0) {
		return false
	}
	r := vzw / math.Sqrt(vzz*vww)
	theta[0] = m.mx + m.sx*cz
	theta[1] = m.my + m.sy*cw
	theta[2] = m.sx * math.Sqrt(vzz/fn)
	theta[3] = m.sy * math.Sqrt(vww/fn)
	theta[4] = math.Max(-1, math.Min(1, r)) // rounding can push |r| past 1
	m.Cov(theta, cov)
	return true
}

// Cov is the inverse of the per-observation Fisher information for
// (μx, μy, σx, σy, ρ). The means block is the covariance matrix itself,
// [σx² ρσxσy; ρσxσy σy²]; the means are uncorrelated with the rest. The
// (σx, σy, ρ) block follows by the delta method (MLEs are invariant) from
// the second moments with divisor n, n·Cov(S_ij, S_kl) → σ_ik σ_jl + σ_il σ_jk:
//
//	Var σ̂x = σx²/2,  Var σ̂y = σy²/2,  Cov(σ̂x, σ̂y) = ρ²σxσy/2,
//	Cov(σ̂x, r) = ρ(1−ρ²)σx/2,  Cov(σ̂y, r) = ρ(1−ρ²)σy/2,  Var r = (1−ρ²)².
func (*bivariateNormalModel) Cov(theta, cov []float64) {
	sx, sy, rho := theta[2], theta[3], theta[4]
	for i := range 25 {
		cov[i] = 0
	}
	set := func(i, j int, v float64) { cov[5*i+j], cov[5*j+i] = v, v }
	q := (1 - rho) * (1 + rho)
	set(0, 0, sx*sx)
	set(1, 1, sy*sy)
	set(0, 1, rho*sx*sy)
	set(2, 2, sx*sx/2)
	set(3, 3, sy*sy/2)
	set(2, 3, rho*rho*sx*sy/2)
	set(2, 4, rho*q*sx/2)
	set(3, 4, rho*q*sy/2)
	set(4, 4, q*q)
}

// Bias: the means are unbiased; each sd with divisor n has the univariate
// bias −3σ/(4n); Pearson r has E r = ρ − ρ(1−ρ²)/(2n) + O(n⁻²)
// (Fisher 1915; Olkin & Pratt 1958).
func (*bivariateNormalModel) Bias(theta, bias []float64) {
	bias[0], bias[1] = 0, 0
	bias[2] = -0.75 * theta[2]
	bias[3] = -0.75 * theta[3]
	rho := theta[4]
	bias[4] = -rho * (1 - rho) * (1 + rho) / 2
}
