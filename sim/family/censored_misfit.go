package family

import (
	"fmt"
	"math"
	"strings"

	"deltaprobe/sim/stream"
)

// Fits of censored lifetimes by another lifetime family: the exponential
// fit of censored Weibull lifetimes (its pseudo-true rate and sandwich by
// quadrature under the censoring law), and the Weibull fit of censored
// exponential lifetimes (the exponential being the Weibull of shape 1,
// a fit of its own family).

// BuildCensored returns the model that draws lifetimes of family data at
// values under the censoring law c and fits family fit (nil: data itself)
// by its MLE under non-informative censoring, with variance v. A fit of
// the data's own family is the family's Censor; of the other pairs only
// those in CensoredFitsFor are offered, and any other is refused with a
// message naming what is.
func BuildCensored(data *Family, values map[string]float64, c Censoring, fit *Family, v Variance) (Model, error) {
	if fit == nil {
		fit = data
	}
	if data.Censor == nil {
		return Model{}, fmt.Errorf("censoring is for lifetimes: the %s family has none; families with censoring: %s", data.Name, strings.Join(censorable(), ", "))
	}
	if fit == data {
		return data.Censor(values, c, v)
	}
	switch {
	case data.Name == "weibull" && fit.Name == "exponential":
		return newCensoredExponentialOfWeibull(values["shape"], values["scale"], c, v == RobustVariance)
	case data.Name == "exponential" && fit.Name == "weibull":
		// The exponential of rate λ is the Weibull of shape 1 and scale
		// 1/λ, so the fit is of the data's own family: θ* = (1, 1/λ)
		// exactly, and the sandwich at θ* is the inverse expected
		// information of the censored Weibull there.
		return newCensoredWeibull(map[string]float64{"shape": 1, "scale": 1 / values["rate"]}, c, v)
	}
	return Model{}, fmt.Errorf("fit = %q with censoring is not offered for %s lifetimes: censored %s lifetimes can be fitted by %s", fit.Name, data.Name, data.Name, quotedOr(CensoredFitsFor(data)))
}

// CensoredFitsFor names the families that can be fitted to censored
// lifetimes of family d (BuildCensored), sorted; none when d has no
// lifetimes.
func CensoredFitsFor(d *Family) []string {
	switch {
	case d.Censor == nil:
		return nil
	case d.Name == "weibull" || d.Name == "exponential":
		return []string{"exponential", "weibull"}
	}
	return []string{d.Name}
}

// censorable names the families whose lifetimes can be censored.
func censorable() []string {
	var names []string
	for _, f := range All() {
		if f.Censor != nil {
			names = append(names, f.Name)
		}
	}
	return names
}

// censoredWeibullMoments returns, for a Weibull lifetime Y of shape k and
// scale λ under the censoring law c, with X = min(Y, C) the observed time
// and d = 1(Y ≤ C): P(event) = E d, E X, E[dX] and E X². By the
// independence of Y and C (G(t) = P(C > t), f and S the Weibull's density
// and survival; derived):
//
//	E d = ∫ f G dt,  E[dX] = ∫ t f G dt,
//	E X = ∫ P(X > t) dt = ∫ S G dt,  E X² = ∫ 2t S G dt.
//
// In s = log z, z = (t/λ)^k, so t = λe^(s/k), f dt = e^(s − e^s) ds and
// dt = (t/k) ds, they are integrated by censoredWeibullQuadrature (the
// expected information's Gauss–Legendre pieces). The lower end is
// s₀ = min(−60, −35k): below it t < t₀ = λe^(s₀/k) ≤ λe^(−35), where
// S·G = 1 − O(z + δt), so E X gains t₀ and E X² gains t₀² from (−∞, s₀)
// (added), E d and E[dX] less than e^(s₀) of their values (dropped).
func censoredWeibullMoments(k, lam float64, c Censoring) (ed, ex, edx, ex2 float64) {
	lower := math.Min(-60, -35*k)
	censoredWeibullQuadrature(k, lam, c, lower, func(s, w float64) {
		t := lam * math.Exp(s/k)
		z := math.Exp(s)
		g := w * math.Exp(-z) * c.survivalOf(t) // S·G, times the weight
		ed += g * z
		edx += g * z * t
		ex += g * t / k
		ex2 += g * 2 * t * t / k
	})
	t0 := lam * math.Exp(lower/k)
	return ed, ex + t0, edx, ex2 + t0*t0
}

// censoredExponentialOfWeibull draws Weibull lifetimes under censoring
// and fits the exponential by its censored MLE λ̂ = D/T. θ = (rate).
type censoredExponentialOfWeibull struct {
	invShape, scale float64
	c               Censoring
	robust          bool
	star            []float64 // θ* = (rate*)
	sand            float64   // the sandwich at θ* per observation
	bias            float64   // b: E λ̂ − λ* = b/n + O(1/n²)
}

// newCensoredExponentialOfWeibull derives the pseudo-true rate, the
// sandwich and the first-order bias of the exponential fit of Weibull
// lifetimes under c. One observation's censored exponential
// log-likelihood is ℓ = d log λ − λx, whose expectation E d·log λ − λE X
// is largest at λ* = E d/E X = P(event)/E min(Y, C): the rate closest to
// the data law in Kullback–Leibler divergence among censored exponential
// likelihoods (White 1982). At λ*, A = −E ℓ” = E d/λ*² and
// B = E(d/λ* − X)² = E d/λ*² − 2E[dX]/λ* + E X², so Σ = B/A². λ̂ = D̄/X̄
// is a ratio of means, whose expansion E[D̄/X̄] = λ* + (λ*·Var X −
// Cov(d, X))/(n(E X)²) + O(n⁻²) (second-order Taylor expansion, derived)
// gives, with λ*·E X = E d, b = λ*²(λ*·E X² − E[dX])/(E d)²: for
// exponential lifetimes it is the censored exponential's Cox–Snell bias
// (there λ·E X² = 2E[dX]). The expectations are censoredWeibullMoments'.
func newCensoredExponentialOfWeibull(shape, scale float64, c Censoring, robust bool) (Model, error) {
	ed, ex, edx, ex2 := censoredWeibullMoments(shape, scale, c)
	if !(ed > 0) || !(ex > 0) {
		return Model{}, fmt.Errorf("under this censoring no event is expected (P(event) = %v)", ed)
	}
	r := ed / ex
	a := ed / (r * r)
	b := a - 2*edx/r + ex2
	m := &censoredExponentialOfWeibull{
		invShape: 1 / shape, scale: scale, c: c, robust: robust,
		star: []float64{r},
		sand: b / (a * a),
		bias: r * r * (r*ex2 - edx) / (ed * ed),
	}
	if !(m.sand > 0) || math.IsInf(m.sand, 0) {
		return Model{}, fmt.Errorf("the exponential fit's sandwich at the pseudo-true rate is not finite under this censoring (%v)", m.sand)
	}
	return Model{Truth: m.star, Sampler: m, Estimator: m, Asymptotics: m, EventShare: ed}, nil
}

// SampleLen is 4: (D, T, Σdᵢxᵢ, Σxᵢ²), the censored exponential's
// sandwich layout (censoredRateFit), kept whatever the variance, so both
// plug-ins are at hand (OtherVariance).
func (*censoredExponentialOfWeibull) SampleLen(int) int { return 4 }

// Draw draws each unit as the censored Weibull's sampler does (the
// lifetime λE^(1/k), the entry, end-of-study and dropout times) and keeps
// the four sums.
func (m *censoredExponentialOfWeibull) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	drawCensoredWeibullSums(rng, n, m.invShape, m.scale, m.c, s.Data[:4])
}

//go:noinline
func drawCensoredWeibullSums(rng *stream.PCG, n int, invShape, scale float64, c Censoring, sums []float64) {
	end := c.End
	if end == 0 {
		end = math.Inf(1)
	}
	var d, t, dt, tt float64
	for range n {
		y := scale * math.Pow(rng.ExpFloat64(), invShape)
		limit := end
		if c.Entry > 0 {
			limit -= c.Entry * rng.Float64()
		}
		if c.DropoutRate > 0 {
			limit = math.Min(limit, rng.ExpFloat64()/c.DropoutRate)
		}
		if y <= limit {
			d++
			dt += y
		} else {
			y = limit
		}
		t += y
		tt += y * y
	}
	sums[0], sums[1], sums[2], sums[3] = d, t, dt, tt
}

// Events is the number of events in the sample.
func (*censoredExponentialOfWeibull) Events(s *Sample) int { return int(s.Data[0]) }

// MinEvents: one event gives the rate a value.
func (*censoredExponentialOfWeibull) MinEvents() int { return 1 }

// NewFitter returns a fitter of the worker's own, which keeps the other
// variance of its latest fit.
func (m *censoredExponentialOfWeibull) NewFitter(int) Fitter {
	return &censoredRateFitter{robust: m.robust}
}

// Cov writes the sandwich at θ* under the data law; theta is not read.
func (m *censoredExponentialOfWeibull) Cov(_, cov []float64) { cov[0] = m.sand }

// Bias writes b(θ*); theta is not read.
func (m *censoredExponentialOfWeibull) Bias(_, bias []float64) { bias[0] = m.bias }

// censoredRateFitter is the censored exponential fit of a four-sum sample
// (censoredRateFit) that can also give the other plug-in variance.
type censoredRateFitter struct {
	robust, both bool
	other        [1]float64 // the other variance of the latest fit
	otherTheta   [1]float64 // λ̂ again, discarded
}

func (f *censoredRateFitter) Fit(s *Sample, theta, cov []float64) bool {
	if !censoredRateFit(s, theta, cov, f.robust) {
		return false
	}
	if f.both {
		censoredRateFit(s, f.otherTheta[:], f.other[:], !f.robust)
	}
	return true
}

func (f *censoredRateFitter) EnableOther() { f.both = true }

func (f *censoredRateFitter) OtherCov(cov []float64) bool {
	cov[0] = f.other[0]
	return f.both
}
