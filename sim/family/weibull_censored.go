package family

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/integrate/quad"

	"deltaprobe/sim/stream"
)

// newCensoredWeibull is the Weibull family's Censor: lifetimes with
// P(T > t) = exp(−(t/scale)^shape) under the censoring law c, fitted by
// the censored MLE, θ = (shape, scale).
func newCensoredWeibull(v map[string]float64, c Censoring, variance Variance) (Model, error) {
	m := &censoredWeibull{shape: v["shape"], scale: v["scale"], c: c, robust: variance == RobustVariance}
	info, p := m.expectedInfo(m.shape, m.scale)
	if !(p > 0) {
		return Model{}, fmt.Errorf("under this censoring no event is expected (P(event) = %v)", p)
	}
	det := info[0]*info[3] - info[1]*info[2]
	if !(det > 0) {
		return Model{}, fmt.Errorf("under this censoring the Weibull's expected information is singular (determinant %v)", det)
	}
	m.share = p
	m.cov = []float64{info[3] / det, -info[1] / det, -info[2] / det, info[0] / det}
	return Model{Truth: []float64{m.shape, m.scale}, Sampler: m, Estimator: m, Asymptotics: m, EventShare: p}, nil
}

// censoredWeibull is a Weibull lifetime under independent right
// censoring, with the MLE under non-informative censoring.
type censoredWeibull struct {
	shape, scale float64
	c            Censoring
	share        float64   // P(event) at the truth
	cov          []float64 // inverse expected information at the truth
	robust       bool      // plug-in variance: the sandwich, not the observed information
}

// expectedInfo returns the expected information of one observation at
// (k, λ) and P(event), by quadrature. With Y(t) the at-risk indicator,
// the score is ∫ ∇log h (dN − Y h dt), so the information is
// ∫ f(t)·G(t)·∇log h ∇log hᵀ dt, G(t) = P(C ≥ t) the censoring survival
// (Andersen, Borgan, Gill & Keiding 1993, ch. VI, from memory; derived
// from the counting-process form of the score). For the Weibull,
// ∇log h = (1/k + log(t/λ), −k/λ). With z = (t/λ)^k = e^s the integral
// becomes ∫ e^(s − e^s)·G(λe^(s/k))·w(s) ds, w = ((1 + s)²/k², −(1 + s)/λ,
// k²/λ²) — smooth but for the kinks of G where an entry period starts and
// the study ends, so Gauss–Legendre (gonum) is applied piecewise between
// them, in pieces of unit length, from s = −60 (the integrand is below
// e^(−60)·60²) to the end or to s = log 60 (e^(−60) of survival left).
func (m *censoredWeibull) expectedInfo(k, lam float64) (info [4]float64, p float64) {
	var kk, kl, ll, pe float64
	censoredWeibullQuadrature(k, lam, m.c, -60, func(s, w float64) {
		f := w * math.Exp(s-math.Exp(s)) * m.c.survivalOf(lam*math.Exp(s/k))
		pe += f
		kk += f * (1 + s) * (1 + s) / (k * k)
		kl -= f * (1 + s) / lam
		ll += f * k * k / (lam * lam)
	})
	return [4]float64{kk, kl, kl, ll}, pe
}

// censoredWeibullQuadrature visits the Gauss–Legendre nodes s and
// weights w (gonum, 32 points a piece) that integrate a function of
// s = log z, z = (t/λ)^k, from lower to the end of study or to s = log 60
// (e^(−60) of the Weibull survival left), in pieces of unit length cut
// at the kinks of the censoring survival G (where an entry period starts
// and the study ends), so each piece holds a smooth stretch.
func censoredWeibullQuadrature(k, lam float64, c Censoring, lower float64, visit func(s, w float64)) {
	toS := func(t float64) float64 { return k * math.Log(t/lam) }
	cuts := []float64{lower}
	upper := math.Log(60)
	if c.End > 0 {
		if c.Entry > 0 {
			cuts = append(cuts, toS(c.End-c.Entry))
		}
		upper = math.Min(upper, toS(c.End))
	}
	cuts = append(cuts, upper)
	xs, ws := make([]float64, 32), make([]float64, 32)
	for i := 0; i+1 < len(cuts); i++ {
		a, b := max(cuts[i], lower), cuts[i+1]
		if !(b > a) {
			continue
		}
		pieces := int(math.Ceil(b - a))
		h := (b - a) / float64(pieces)
		for j := range pieces {
			quad.Legendre{}.FixedLocations(xs, ws, a+float64(j)*h, a+float64(j+1)*h)
			for q, s := range xs {
				visit(s, ws[q])
			}
		}
	}
}

// SampleLen is 2n: the sample is the observed times x₁…xₙ followed by
// the event indicators d₁…dₙ (1 event, 0 censored).
func (*censoredWeibull) SampleLen(n int) int { return 2 * n }

// Draw draws each unit's lifetime λE^(1/k) (E standard exponential), its
// entry, end-of-study and dropout times, and keeps what is observed.
func (m *censoredWeibull) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	drawCensoredWeibull(rng, s.Data[:n], s.Data[n:2*n], 1/m.shape, m.scale, m.c)
}

//go:noinline
func drawCensoredWeibull(rng *stream.PCG, x, d []float64, invShape, scale float64, c Censoring) {
	end := c.End
	if end == 0 {
		end = math.Inf(1)
	}
	for i := range x {
		t := scale * math.Pow(rng.ExpFloat64(), invShape)
		limit := end
		if c.Entry > 0 {
			limit -= c.Entry * rng.Float64()
		}
		if c.DropoutRate > 0 {
			limit = math.Min(limit, rng.ExpFloat64()/c.DropoutRate)
		}
		if t <= limit {
			x[i], d[i] = t, 1
		} else {
			x[i], d[i] = limit, 0
		}
	}
}

// Events counts the event indicators.
func (*censoredWeibull) Events(s *Sample) int {
	e := 0
	for _, d := range s.Data[s.N : 2*s.N] {
		if d != 0 {
			e++
		}
	}
	return e
}

// MinEvents: the shape needs two distinct event times, so at least two
// events.
func (*censoredWeibull) MinEvents() int { return 2 }

// Cov is the inverse expected information at the truth; theta is not
// read.
func (m *censoredWeibull) Cov(_, cov []float64) { copy(cov, m.cov) }

// Bias is not derived for the censored Weibull MLE: NaN, not available.
func (*censoredWeibull) Bias(_, bias []float64) { bias[0], bias[1] = math.NaN(), math.NaN() }

func (m *censoredWeibull) NewFitter(maxN int) Fitter {
	return &censoredWeibullFitter{u: make([]float64, maxN), twoVariances: twoVariances{robust: m.robust}}
}

// censoredWeibullFitter holds one worker's buffer u = log(x/max x).
type censoredWeibullFitter struct {
	u []float64
	twoVariances
}

// profile returns h(k) = 1/k + ū_D − Σzu/Σz and its derivative
// −1/k² − (Σzu²/Σz − (Σzu/Σz)²), z = e^(k·u) over every observation and
// ū_D the mean of u over the events: the shape's profile score divided
// by D (derived: with λᵏ = Σxᵏ/D the scale's MLE at shape k, the score
// D/k + Σ_D log x − D·Σxᵏ log x/Σxᵏ). h decreases in k; as k → ∞ it tends
// to ū_D − max u < 0 unless every event is at the largest time, so with
// two distinct event times its root is unique.
func (f *censoredWeibullFitter) profile(k, ubarD float64, n int) (h, dh float64) {
	var sz, szu, szu2 float64
	for i := 0; i < n; i++ {
		u := f.u[i]
		z := math.Exp(k * u)
		sz += z
		szu += z * u
		szu2 += z * u * u
	}
	a, b := szu/sz, szu2/sz
	return 1/k + ubarD - a, -1/(k*k) - (b - a*a)
}

// censoredWeibullMaxIter bounds the safeguarded Newton search.
const censoredWeibullMaxIter = 300

// Fit finds the shape by safeguarded Newton steps in log k on the
// profile score, inside a bracket found by doubling or halving from
// k = 1 and bisected whenever a step leaves it, to a relative change of
// 1e-13; the scale is max x·(Σzᵢ/D)^(1/k). Times are taken relative to the
// largest, so no power overflows at any shape. The plug-in covariance is
// the inverse observed information per observation, n·(−∇²ℓ)⁻¹ at θ̂. Fit
// reports false with no event, with fewer than two distinct event times,
// or when the search fails.
func (f *censoredWeibullFitter) Fit(s *Sample, theta, cov []float64) bool {
	n := s.N
	x, d := s.Data[:n], s.Data[n:2*n]
	xmax := 0.0
	var events float64
	first, distinct := 0.0, false
	for i := range x {
		if !(x[i] > 0) {
			return false
		}
		xmax = max(xmax, x[i])
		if d[i] != 0 {
			if events == 0 {
				first = x[i]
			} else if x[i] != first {
				distinct = true
			}
			events++
		}
	}
	if events == 0 || !distinct {
		return false
	}
	lmax := math.Log(xmax)
	var ubarD float64
	for i := range x {
		f.u[i] = math.Log(x[i]) - lmax
		if d[i] != 0 {
			ubarD += f.u[i]
		}
	}
	ubarD /= events
	// The root of the profile score in the shape, from k = 1.
	k, ok := logNewtonRoot(1, censoredWeibullMaxIter, func(k float64) (float64, float64) { return f.profile(k, ubarD, n) })
	if !ok || !(k > 0) || math.IsInf(k, 0) {
		return false
	}
	var sz float64
	for i := range x {
		sz += math.Exp(k * f.u[i])
	}
	ll := math.Log(sz/events) / k // log(λ/max x)
	lam := xmax * math.Exp(ll)
	theta[0], theta[1] = k, lam
	// −∂²ℓ, summed, with v = log(x/λ), z = e^(k·v) (derived from
	// ℓ = d(log k − log λ + (k − 1)v) − z):
	//   −ℓ_kk = d/k² + z v², −ℓ_kλ = (d − z − k z v)/λ,
	//   −ℓ_λλ = k((k + 1)z − d)/λ².
	// Scores s_k = d(1/k + v) − z v, s_λ = (k/λ)(z − d) for the sandwich.
	var akk, akl, all, bkk, bkl, bll float64
	for i := range x {
		v := f.u[i] - ll
		z := math.Exp(k * v)
		akk += d[i]/(k*k) + z*v*v
		akl += (d[i] - z - k*z*v) / lam
		all += k * ((k+1)*z - d[i]) / (lam * lam)
		if f.robust || f.both {
			sk := d[i]*(1/k+v) - z*v
			sl := k / lam * (z - d[i])
			bkk += sk * sk
			bkl += sk * sl
			bll += sl * sl
		}
	}
	det := akk*all - akl*akl
	if !(det > 0) {
		return false
	}
	fn := float64(n)
	// A⁻¹ of the summed information.
	ikk, ikl, ill := all/det, -akl/det, akk/det
	model := [4]float64{fn * ikk, fn * ikl, fn * ikl, fn * ill}
	if !f.robust && !f.both {
		copy(cov, model[:])
		return true
	}
	// The sandwich A⁻¹BA⁻¹ of the sums (Huber 1967; White 1982), times n
	// per observation.
	var sand [4]float64
	sandwich2([]float64{ikk, ikl, ikl, ill}, bkk, bkl, bll, sand[:])
	for i := range sand {
		sand[i] *= fn
	}
	f.keep(cov, model, sand)
	return true
}
