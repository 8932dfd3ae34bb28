package family

import (
	"fmt"
	"math"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "weibull",
		Summary:   "Weibull(shape, scale): P(Y > y) = exp(−(y/scale)^shape)",
		Estimator: "MLE: safeguarded Newton on the profile score of the shape, scale = (mean y^shape)^(1/shape) (bias not derived: bias_2nd empty)",
		Params: []ParamSpec{
			{Name: "shape", Accepts: "a number > 0", Check: positive},
			{Name: "scale", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"shape", "scale"},
		Support:   Positive,
		New: func(v map[string]float64) (Model, error) {
			l := &weibullLaw{shape: v["shape"], scale: v["scale"]}
			return newWeibullFit(l, l.shape, l.scale, false), nil
		},
		law:               func(v map[string]float64) (law, error) { return &weibullLaw{shape: v["shape"], scale: v["scale"]}, nil },
		Censor:            newCensoredWeibull,
		CensoredEstimator: "censored MLE: safeguarded Newton on the shape's profile score, variance 1/observed information or the sandwich; bias not derived; undefined with fewer than two distinct event times",
		fitsData: func(d *Family) bool {
			switch d.Name {
			case "weibull", "exponential", "gamma", "lognormal":
				return true
			}
			return false
		},
		fitLaw: func(d *Family, v map[string]float64, l law, variance Variance) (Model, error) {
			robust := variance == RobustVariance
			if d.Name == "exponential" {
				// The exponential is the Weibull of shape 1, so the fit
				// is of its own family: θ* = (1, 1/rate).
				return newWeibullFit(l, 1, 1/v["rate"], robust), nil
			}
			if w, ok := l.(*weibullLaw); ok {
				return newWeibullFit(l, w.shape, w.scale, robust), nil
			}
			return newWeibullMisfit(l.(mellinLaw), robust)
		},
	})
}

// weibullLaw is scale·E^(1/shape) with E ~ Exp(1) (inversion of the
// survival function). Its raw moments are E yʲ = scaleʲ·Γ(1 + j/shape)
// (Johnson, Kotz & Balakrishnan 1994, ch. 21, from memory; the tests
// check them by quadrature of gonum's density).
type weibullLaw struct{ shape, scale float64 }

func (l *weibullLaw) one(rng *stream.PCG) float64 {
	return l.scale * math.Pow(rng.ExpFloat64(), 1/l.shape)
}

func (l *weibullLaw) moments() lawMoments {
	raw := func(j float64) float64 { return math.Pow(l.scale, j) * math.Gamma(1+j/l.shape) }
	return centralFromRaw(raw(1), raw(2), raw(3), raw(4))
}

// weibullFitModel draws from a law with positive values and fits the
// Weibull, θ = (shape, scale); the law is a Weibull's (the exponential's
// being the Weibull of shape 1).
type weibullFitModel struct {
	law    law
	robust bool
	truth  []float64
	cov    []float64
}

// eulerMascheroni is γ = 0.5772156649015329 (DLMF 5.2.3).
const eulerMascheroni = 0.57721566490153286061

func newWeibullFit(l law, shape, scale float64, robust bool) Model {
	m := &weibullFitModel{law: l, robust: robust, truth: []float64{shape, scale}, cov: make([]float64, 4)}
	weibullInverseInfo(shape, scale, m.cov)
	return Model{Truth: m.truth, Sampler: m, Estimator: m, Asymptotics: m}
}

// weibullInverseInfo writes the inverse expected information of one
// observation. With z = (y/λ)^k ~ Exp(1), E[z log z] = 1 − γ and
// E[z log² z] = ψ1(2) + ψ(2)² = π²/6 − 1 + (1−γ)² (DLMF 5.4.12, 5.15.1),
// the information is I = [(π²/6 + (1−γ)²)/k², −(1−γ)/λ; −(1−γ)/λ, k²/λ²]
// (derived from the log-density log k − log λ + (k−1) log(y/λ) − z), its
// determinant π²/(6λ²), and
//
//	I⁻¹ = [6k²/π², 6λ(1−γ)/π²; 6λ(1−γ)/π², λ²(1 + 6(1−γ)²/π²)/k²].
func weibullInverseInfo(k, lam float64, cov []float64) {
	c := 6 / (math.Pi * math.Pi)
	g1 := 1 - eulerMascheroni
	cov[0] = c * k * k
	cov[1] = c * lam * g1
	cov[2] = cov[1]
	cov[3] = lam * lam * (1 + c*g1*g1) / (k * k)
}

// SampleLen is n: the sample is the observations themselves.
func (*weibullFitModel) SampleLen(n int) int { return n }

func (m *weibullFitModel) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	for i := range n {
		s.Data[i] = m.law.one(rng)
	}
}

// Events is n: every uncensored lifetime is an event (summary.csv's
// events is then 1, as for the uncensored exponential).
func (*weibullFitModel) Events(s *Sample) int { return s.N }

// MinEvents is 2: the fit needs two distinct lifetimes.
func (*weibullFitModel) MinEvents() int { return 2 }

// Cov is the inverse expected information at the truth when the data are
// Weibull, the sandwich at θ* otherwise; theta is not read.
func (m *weibullFitModel) Cov(_, cov []float64) { copy(cov, m.cov) }

// Bias is not derived for the Weibull MLE: NaN, not available.
func (*weibullFitModel) Bias(_, bias []float64) { bias[0], bias[1] = math.NaN(), math.NaN() }

func (m *weibullFitModel) NewFitter(maxN int) Fitter {
	return &weibullFitter{twoVariances: twoVariances{robust: m.robust}, u: make([]float64, maxN), z: make([]float64, maxN)}
}

// weibullFitter holds one worker's buffers: u = log(y/max y) and z = e^(k·u).
type weibullFitter struct {
	twoVariances
	u, z []float64
}

// weibullMaxIter bounds the search for the shape.
const weibullMaxIter = 200

// profile returns h(k) = 1/k + mean(u) − Σzu/Σz and its derivative
// −1/k² − (Σzu²/Σz − (Σzu/Σz)²), z = e^(k·u). h decreases in k, from +∞
// to mean(u) − max u < 0 when the observations are not all equal, so its
// root, the shape's MLE, is unique.
func (f *weibullFitter) profile(k, ubar float64, n int) (h, dh float64) {
	var sz, szu, szu2 float64
	for i := 0; i < n; i++ {
		u := f.u[i]
		z := math.Exp(k * u)
		sz += z
		szu += z * u
		szu2 += z * u * u
	}
	a, b := szu/sz, szu2/sz
	return 1/k + ubar - a, -1/(k*k) - (b - a*a)
}

// Fit solves the shape's profile score by Newton steps in log k, kept in
// a bracket and bisected when a step leaves it, from the moment estimate
// π/(√6·sd(log y)), to a relative change of 1e-13; the scale is
// (mean yᵏ)^(1/k). The logarithms are taken relative to the largest
// observation, so yᵏ cannot overflow. Fit reports false when the
// observations are all equal (no finite MLE), a value is not positive, or
// the search fails.
func (f *weibullFitter) Fit(s *Sample, theta, cov []float64) bool {
	n := s.N
	fn := float64(n)
	ymax := 0.0
	for i := 0; i < n; i++ {
		y := s.Data[i]
		if !(y > 0) {
			return false
		}
		ymax = max(ymax, y)
	}
	lmax := math.Log(ymax)
	var ubar, uu float64
	for i := 0; i < n; i++ {
		f.u[i] = math.Log(s.Data[i]) - lmax
		ubar += f.u[i]
	}
	ubar /= fn
	for i := 0; i < n; i++ {
		d := f.u[i] - ubar
		uu += d * d
	}
	if !(uu > 0) {
		return false
	}
	k, ok := logNewtonRoot(math.Pi/math.Sqrt(6*uu/fn), weibullMaxIter, func(k float64) (float64, float64) { return f.profile(k, ubar, n) })
	if !ok || !(k > 0) || math.IsInf(k, 0) {
		return false
	}
	var sz float64
	for i := 0; i < n; i++ {
		sz += math.Exp(k * f.u[i])
	}
	// λ = max y·(mean e^(k·u))^(1/k); v = log(y/λ) = u − log(λ/max y).
	ll := math.Log(sz/fn) / k
	lam := ymax * math.Exp(ll)
	theta[0], theta[1] = k, lam
	// Per observation, with v = log(y/λ) and z = e^(k·v):
	//   −∂²ℓ/∂k² = 1/k² + z v², −∂²ℓ/∂k∂λ = (1 − z − k z v)/λ,
	//   −∂²ℓ/∂λ² = (k(k+1)z − k)/λ²;
	//   scores s_k = 1/k + v − z v, s_λ = (k/λ)(z − 1).
	var akk, akl, all, bkk, bkl, bll float64
	for i := 0; i < n; i++ {
		v := f.u[i] - ll
		z := math.Exp(k * v)
		akk += 1/(k*k) + z*v*v
		akl += (1 - z - k*z*v) / lam
		all += (k*(k+1)*z - k) / (lam * lam)
		if f.robust || f.both {
			sk := 1/k + v - z*v
			sl := k / lam * (z - 1)
			bkk += sk * sk
			bkl += sk * sl
			bll += sl * sl
		}
	}
	akk, akl, all = akk/fn, akl/fn, all/fn
	det := akk*all - akl*akl
	if !(det > 0) {
		return false
	}
	// A⁻¹ of the 2×2.
	ikk, ikl, ill := all/det, -akl/det, akk/det
	model := [4]float64{ikk, ikl, ikl, ill}
	if !f.robust && !f.both {
		copy(cov, model[:])
		return true
	}
	bkk, bkl, bll = bkk/fn, bkl/fn, bll/fn
	// A⁻¹ B A⁻¹ with A⁻¹ = [ikk ikl; ikl ill].
	var sand [4]float64
	sandwich2(model[:], bkk, bkl, bll, sand[:])
	f.keep(cov, model, sand)
	return true
}

// log y = log scale + (log E)/shape.
func (l *weibullLaw) logOne(rng *stream.PCG) float64 {
	return math.Log(l.scale) + math.Log(rng.ExpFloat64())/l.shape
}
func (l *weibullLaw) logMoments() lawMoments { return logExpMoments(math.Log(l.scale), l.shape) }

// newWeibullMisfit is the Weibull fit of a law that is not a Weibull's.
// θ* maximises E log f_θ(Y), the Kullback–Leibler projection (White
// 1982): for a given shape k the scale's score gives λᵏ = E yᵏ, and the
// shape's profile score is
//
//	h(k) = 1/k + E log y − E[yᵏ log y]/E[yᵏ],
//
// which decreases in k (its derivative is −1/k² minus a variance), so its
// root is unique. It is found by bisection to the last bits, with h
// evaluated from the law's closed-form tilted moments (mellin), so no
// integral is approximated. The sandwich A⁻¹BA⁻¹ at θ* takes the
// expectations of the Weibull fitter's Hessian and score products (see
// weibullFitter.Fit) from the same moments: with v = log(y/λ) and
// z = (y/λ)ᵏ, E[zᵃvʲ] = λ^(−ak)·E[y^(ak)(log y − log λ)ʲ]. The O(1/n)
// bias is not derived: NaN.
func newWeibullMisfit(l mellinLaw, robust bool) (Model, error) {
	h := func(k float64) float64 {
		_, e1, _ := l.mellin(0)
		m0, m1, _ := l.mellin(k)
		return 1/k + e1 - m1/m0
	}
	_, e1, e2 := l.mellin(0)
	k := math.Pi / math.Sqrt(6*(e2-e1*e1))
	lo, hi := k, k
	for i := 0; h(hi) > 0; i++ {
		if i == 100 {
			return Model{}, fmt.Errorf("sim: no pseudo-true Weibull shape found for these data")
		}
		lo, hi = hi, hi*2
	}
	for i := 0; h(lo) < 0; i++ {
		if i == 100 {
			return Model{}, fmt.Errorf("sim: no pseudo-true Weibull shape found for these data")
		}
		hi, lo = lo, lo/2
	}
	for range 200 {
		mid := (lo + hi) / 2
		if mid == lo || mid == hi {
			break
		}
		if h(mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	k = (lo + hi) / 2
	m0, _, _ := l.mellin(k)
	lam := math.Pow(m0, 1/k)
	ll := math.Log(lam)
	// z moments: Z(a, j) = E[zᵃ vʲ].
	z := func(a float64, j int) float64 {
		n0, n1, n2 := l.mellin(a * k)
		scale := math.Exp(-a * k * ll)
		switch j {
		case 0:
			return scale * n0
		case 1:
			return scale * (n1 - ll*n0)
		}
		return scale * (n2 - 2*ll*n1 + ll*ll*n0)
	}
	akk := 1/(k*k) + z(1, 2)
	akl := (1 - z(1, 0) - k*z(1, 1)) / lam
	all := (k*(k+1)*z(1, 0) - k) / (lam * lam)
	bkk := 1/(k*k) + z(0, 2) + z(2, 2) + 2/k*z(0, 1) - 2/k*z(1, 1) - 2*z(1, 2)
	bkl := k / lam * (z(1, 0)/k - 1/k + 2*z(1, 1) - z(0, 1) - z(2, 1))
	bll := k * k / (lam * lam) * (z(2, 0) - 2*z(1, 0) + 1)
	det := akk*all - akl*akl
	ikk, ikl, ill := all/det, -akl/det, akk/det
	r00 := ikk*bkk + ikl*bkl
	r01 := ikk*bkl + ikl*bll
	r10 := ikl*bkk + ill*bkl
	r11 := ikl*bkl + ill*bll
	m := &weibullFitModel{law: l, robust: robust, truth: []float64{k, lam}, cov: []float64{
		r00*ikk + r01*ikl, r00*ikl + r01*ill,
		r10*ikk + r11*ikl, r10*ikl + r11*ill,
	}}
	if !(det > 0) || math.IsNaN(m.cov[0]+m.cov[3]) {
		return Model{}, fmt.Errorf("sim: the Weibull fit's sandwich at the pseudo-true value is not finite for these data")
	}
	return Model{Truth: m.truth, Sampler: m, Estimator: m, Asymptotics: m}, nil
}
