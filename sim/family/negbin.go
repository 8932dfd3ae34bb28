package family

import (
	"fmt"
	"math"
	"slices"

	"deltaprobe/sim/stream"
)

func init() {
	register(&Family{
		Name:      "negative_binomial",
		Summary:   "NegativeBinomial(mean, dispersion): variance mean + dispersion·mean², size 1/dispersion",
		Estimator: "MLE: mean = ȳ (unbiased); dispersion by safeguarded Newton on its profile score (exists when the sample variance exceeds ȳ; bias not derived: bias_2nd empty where the dispersion enters)",
		Discrete:  true,
		Params: []ParamSpec{
			{Name: "mean", Accepts: "a number > 0", Check: positive},
			{Name: "dispersion", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"mean", "dispersion"},
		Support:   Counts,
		New: func(v map[string]float64) (Model, error) {
			l, err := newNBLaw(v["mean"], v["dispersion"])
			if err != nil {
				return Model{}, err
			}
			return newNBFit(l, false), nil
		},
		law:      func(v map[string]float64) (law, error) { return newNBLaw(v["mean"], v["dispersion"]) },
		fitsData: func(d *Family) bool { return d.Name == "negative_binomial" },
		fitLaw: func(_ *Family, _ map[string]float64, l law, v Variance) (Model, error) {
			return newNBFit(l.(*nbLaw), v == RobustVariance), nil
		},
	})
}

// nbLaw is the negative binomial with mean m and dispersion k, size
// r = 1/k: f(y) = Γ(y+r)/(Γ(r)·y!)·pʳ·(1−p)ʸ with p = r/(r+m). It is
// drawn by table inversion from the ratios f(y+1)/f(y) = (y+r)q/(y+1),
// q = 1 − p.
type nbLaw struct {
	mean, disp float64
	table      *cdfTable
}

func newNBLaw(mean, disp float64) (*nbLaw, error) {
	r := 1 / disp
	q := mean / (r + mean)
	mode, bound := 0, q
	if r > 1 {
		// log-concave: f(y+1)/f(y) falls through 1 at ⌊(r−1)q/(1−q)⌋.
		mode, bound = int(math.Floor((r-1)*q/(1-q))), 0
	}
	t, err := newTableUpBound(mode, 0, math.MaxInt,
		func(k int) float64 { return (float64(k) + r) / float64(k+1) * q },
		func(k int) float64 { return float64(k) / ((float64(k) - 1 + r) * q) }, bound)
	if err != nil {
		return nil, fmt.Errorf("sim: negative_binomial(mean %g, dispersion %g): %w; accepted are variances mean + dispersion·mean² up to about 10⁸", mean, disp, err)
	}
	return &nbLaw{mean: mean, disp: disp, table: t}, nil
}

func (l *nbLaw) one(rng *stream.PCG) float64 { return float64(l.table.draw(rng)) }

// moments: the cumulants of the negative binomial are κ2 = m(1+km),
// κ3 = m(1+km)(1+2km), κ4 = m(1+km)(1+6km+6k²m²) (from the cumulants
// r(1−p)/p², r(1−p)(2−p)/p³, r(1−p)(6−6p+p²)/p⁴ of Johnson, Kemp & Kotz
// 2005, §5.5, from memory; the tests check them by summing the pmf), and
// μ4 = κ4 + 3κ2².
func (l *nbLaw) moments() lawMoments {
	m, km := l.mean, l.disp*l.mean
	k2 := m * (1 + km)
	k3 := k2 * (1 + 2*km)
	k4 := k2 * (1 + 6*km + 6*km*km)
	return lawMoments{m, k2, k3, k4 + 3*k2*k2}
}

// nbFitModel draws negative binomial observations and fits the negative
// binomial, θ = (mean, dispersion).
type nbFitModel struct {
	law    *nbLaw
	robust bool
	cov    []float64 // inverse expected information at the truth
}

func newNBFit(l *nbLaw, robust bool) Model {
	m := &nbFitModel{law: l, robust: robust, cov: make([]float64, 4)}
	nbInverseInfo(l, m.cov)
	return Model{Truth: []float64{l.mean, l.disp}, Sampler: m, Estimator: m, Asymptotics: m}
}

// SampleLen is n: the sample is the counts themselves, as float64.
func (*nbFitModel) SampleLen(n int) int { return n }

func (m *nbFitModel) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	t := m.law.table
	for i := range n {
		s.Data[i] = float64(t.draw(rng))
	}
}

// Cov is the inverse expected information at the truth (the fit is of
// its own data, so it is the sandwich too); theta is not read.
func (m *nbFitModel) Cov(_, cov []float64) { copy(cov, m.cov) }

// Bias: ȳ is unbiased; the dispersion's O(1/n) bias is not derived here,
// so it is NaN (not available), and a transform that reads the
// dispersion gets no second-order bias.
func (*nbFitModel) Bias(_, bias []float64) { bias[0], bias[1] = 0, math.NaN() }

// nbInverseInfo writes the inverse expected information of one
// observation at (m, k). The mean and the size r = 1/k are orthogonal:
// I_mm = 1/(m(1+km)), and
//
//	I_rr = −E[ψ1(Y+r) − ψ1(r)] − 1/r + 1/(r+m) = Σ_{j≥0} P(Y>j)/(r+j)² − m/(r(r+m))
//
// (since ψ1(y+r) − ψ1(r) = −Σ_{j<y} 1/(r+j)², DLMF 5.15.5), summed over
// the pmf until the omitted tail is below 1e-17 of the sum; I_kk = r⁴·I_rr
// (dr/dk = −r², and the mean score vanishes).
func nbInverseInfo(l *nbLaw, cov []float64) {
	m, k := l.mean, l.disp
	r := 1 / k
	p, q := r/(r+m), m/(r+m)
	// pmf from f(0) = pʳ upwards, kept so the tails P(Y > j) can be
	// summed from the far end, without cancellation.
	var pmf []float64
	f := math.Exp(r * math.Log(p))
	var cum float64
	for j := 0; ; j++ {
		pmf = append(pmf, f)
		cum += f
		if float64(j) > m && f*(1+q/(1-q)*float64(j+1)) < 1e-18*cum || len(pmf) > 1<<24 {
			break
		}
		f *= (float64(j) + r) / float64(j+1) * q
	}
	var sum, tail float64
	for j := len(pmf) - 1; j >= 0; j-- {
		// tail is P(Y > j) here.
		sum += tail / ((r + float64(j)) * (r + float64(j)))
		tail += pmf[j]
	}
	irr := sum - m/(r*(r+m))
	cov[0], cov[1], cov[2], cov[3] = m*(1+k*m), 0, 0, 1/(irr*r*r*r*r)
}

func (m *nbFitModel) NewFitter(maxN int) Fitter {
	return &nbFitter{twoVariances: twoVariances{robust: m.robust}, sorted: make([]float64, maxN), vals: make([]float64, maxN), counts: make([]float64, maxN)}
}

// nbFitter holds one worker's buffers: the sorted sample and its distinct
// values with their counts.
type nbFitter struct {
	twoVariances
	sorted []float64
	vals   []float64
	counts []float64
	nd     int // distinct values in the latest sample
}

// nbDirectMax is the largest count whose digamma and trigamma
// differences are summed term by term; above it they come from the
// asymptotic series (gamma_psi.go).
const nbDirectMax = 64

// psiDiff returns ψ(y+r) − ψ(r) and ψ1(y+r) − ψ1(r) for a count y.
func psiDiff(y, r float64) (d1, d2 float64) {
	if y <= nbDirectMax {
		for j := 0.0; j < y; j++ {
			x := 1 / (r + j)
			d1 += x
			d2 -= x * x
		}
		return d1, d2
	}
	d1 = math.Log((y+r)/r) - logMinusDigamma(y+r) + logMinusDigamma(r)
	return d1, trigamma(y+r) - trigamma(r)
}

// profile returns the profile score in r and its derivative in r, per
// observation: g(r) = mean[ψ(y+r) − ψ(r)] + log(r/(r+ȳ)).
func (f *nbFitter) profile(r, ybar, n float64) (g, dg float64) {
	for i := 0; i < f.nd; i++ {
		d1, d2 := psiDiff(f.vals[i], r)
		g += f.counts[i] * d1
		dg += f.counts[i] * d2
	}
	g = g/n + math.Log(r/(r+ybar))
	dg = dg/n + 1/r - 1/(r+ybar)
	return g, dg
}

// nbMaxIter bounds the search for the size r.
const nbMaxIter = 200

// Fit: m̂ = ȳ (the mean's score Σ(y−m)/(m(1+km)) vanishes there), and r̂
// = 1/k̂ solves the profile score g(r) = 0. The MLE is finite only when
// the sample variance (divisor n) exceeds ȳ (Levin & Reeds 1977, from
// memory: then g < 0 for large r, while g → +∞ as r → 0); otherwise, or
// when ȳ = 0 or the search fails, Fit reports false. The search
// (logNewtonRoot) brackets the root by doubling from the moment estimate
// ȳ²/(s² − ȳ) and then takes Newton steps in log r, bisecting whenever a
// step leaves the bracket, to a relative change of 1e-13.
func (f *nbFitter) Fit(s *Sample, theta, cov []float64) bool {
	n := s.N
	fn := float64(n)
	copy(f.sorted, s.Data[:n])
	slices.Sort(f.sorted[:n])
	f.nd = 0
	var sum, ss float64
	for i := 0; i < n; i++ {
		y := f.sorted[i]
		sum += y
		if f.nd > 0 && f.vals[f.nd-1] == y {
			f.counts[f.nd-1]++
			continue
		}
		f.vals[f.nd], f.counts[f.nd] = y, 1
		f.nd++
	}
	ybar := sum / fn
	for i := 0; i < f.nd; i++ {
		d := f.vals[i] - ybar
		ss += f.counts[i] * d * d
	}
	m2 := ss / fn
	if !(ybar > 0) || !(m2 > ybar*(1+1e-12)) {
		return false
	}
	r, ok := logNewtonRoot(ybar*ybar/(m2-ybar), nbMaxIter, func(r float64) (float64, float64) { return f.profile(r, ybar, fn) })
	if !ok || !(r > 0) || math.IsInf(r, 0) {
		return false
	}
	k := 1 / r
	theta[0], theta[1] = ybar, k
	// Observed information per observation at the MLE, in (m, r): A_mm =
	// r/(ȳ(r+ȳ)), A_mr = 0, A_rr = −mean[ψ1(y+r) − ψ1(r)] − 1/r + 1/(r+ȳ);
	// in k, A_kk = r⁴·A_rr.
	_, dg := f.profile(r, ybar, fn)
	amm := r / (ybar * (r + ybar))
	akk := -dg * r * r * r * r
	if !(akk > 0) {
		return false
	}
	model := [4]float64{1 / amm, 0, 0, 1 / akk}
	if !f.robust && !f.both {
		copy(cov, model[:])
		return true
	}
	// Scores per observation: s_m = y/m − (y+r)/(r+m), s_k = −r²·s_r with
	// s_r = ψ(y+r) − ψ(r) + log(r/(r+m)) + (m−y)/(r+m).
	var bmm, bmk, bkk float64
	lr := math.Log(r / (r + ybar))
	for i := 0; i < f.nd; i++ {
		y, c := f.vals[i], f.counts[i]
		d1, _ := psiDiff(y, r)
		sm := y/ybar - (y+r)/(r+ybar)
		sk := -r * r * (d1 + lr + (ybar-y)/(r+ybar))
		bmm += c * sm * sm
		bmk += c * sm * sk
		bkk += c * sk * sk
	}
	bmm, bmk, bkk = bmm/fn, bmk/fn, bkk/fn
	sand := [4]float64{bmm / (amm * amm), bmk / (amm * akk), bmk / (amm * akk), bkk / (akk * akk)}
	f.keep(cov, model, sand)
	return true
}
