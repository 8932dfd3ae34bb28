package family

import (
	"fmt"
	"math"

	"deltaprobe/sim/stream"
)

// newCensoredExponential is the exponential family's Censor: lifetimes of
// the given rate under the censoring law c, fitted by the censored MLE.
func newCensoredExponential(v map[string]float64, c Censoring, variance Variance) (Model, error) {
	m := &censoredExponential{rate: v["rate"], c: c, robust: variance == RobustVariance}
	m.share, _ = c.exponentialEvents(m.rate)
	if !(m.share > 0) {
		return Model{}, fmt.Errorf("under this censoring no event is expected at rate %v (P(event) = %v)", m.rate, m.share)
	}
	return Model{Truth: []float64{m.rate}, Sampler: m, Estimator: m, Asymptotics: m, EventShare: m.share}, nil
}

// censoredExponential is an exponential lifetime of rate λ under
// independent right censoring (Censoring), with the MLE under
// non-informative censoring: λ̂ = D/T, D the number of events and T the
// total time at risk (Lawless 2003, Statistical Models and Methods for
// Lifetime Data, 2nd ed., ch. 2, from memory). θ = (rate).
type censoredExponential struct {
	rate   float64
	c      Censoring
	share  float64 // P(event) at the truth
	robust bool    // plug-in variance: the sandwich, not the observed information
}

// SampleLen is 2: a censored exponential sample is (D, T), the number of
// events and the total time at risk, which are sufficient for λ; 4 for
// the sandwich, which also needs Σ dᵢxᵢ (the events' times) and Σ xᵢ².
func (m *censoredExponential) SampleLen(int) int {
	if m.robust {
		return 4
	}
	return 2
}

// Draw draws n units one by one (never the sufficient statistics
// directly: D and T are dependent, and their joint law under entry and
// dropout has no simple form). Lifetime and dropout are competing
// exponentials, so their minimum is exponential with rate μ = λ + δ and,
// independently of it, the lifetime is the smaller with probability λ/μ:
// one exponential draw per unit, and one 64-bit word when entry or
// dropout needs a uniform (its two 32-bit halves serve the entry time and
// the kind of ending).
func (m *censoredExponential) Draw(rng *stream.PCG, n int, s *Sample) {
	mu := m.rate + m.c.DropoutRate
	if m.robust {
		drawCensoredSums(rng, n, mu, m.c, m.rate/mu, s.Data[:4])
		s.N = n
		return
	}
	var events, time float64
	switch {
	case m.c.Entry == 0 && m.c.DropoutRate == 0:
		events, time = drawEndOnly(rng, n, mu, m.c.End)
	default:
		end := m.c.End
		if end == 0 {
			end = math.Inf(1)
		}
		events, time = drawEntryDropout(rng, n, mu, end, m.c.Entry, m.rate/mu)
	}
	s.N, s.Data[0], s.Data[1] = n, events, time
}

// drawEndOnly: every unit enters at 0 and is censored at end.
//
// Branch-free: whether a unit is censored is as good as a coin toss, and a
// mispredicted branch per draw cost more than the draw (2.3× the
// uncensored loop). Times are non-negative, so their IEEE bit patterns
// order as the numbers do (IEEE 754 layout) and an integer subtraction
// gives the comparison as a mask.
//
//go:noinline
func drawEndOnly(rng *stream.PCG, n int, rate, end float64) (events, time float64) {
	// Compare in standard units, so the division is per sample, not per draw.
	limit := end * rate
	lb := math.Float64bits(limit)
	var sum float64
	var censored uint64
	q := *rng // the generator in a local, so its state stays in registers
	for range n {
		u := q.Uint64()
		e, ok := stream.ExpFast(u)
		if !ok {
			e, q = stream.ExpFrom(q, u)
		}
		eb := math.Float64bits(e)
		over := (lb - eb) >> 63 // 1 when the draw passes the limit
		mask := -over
		censored += over
		sum += math.Float64frombits(eb&^mask | lb&mask)
	}
	*rng = q
	return float64(uint64(n) - censored), sum / rate
}

// drawEntryDropout: entry uniform on [0, entry], end of study at end
// (+Inf: none), the minimum of lifetime and dropout exponential with rate
// mu, and the lifetime the smaller with probability pLife; branch-free
// as drawEndOnly is.
//
//go:noinline
func drawEntryDropout(rng *stream.PCG, n int, mu, end, entry, pLife float64) (events, time float64) {
	// In standard units (times μ), so the division is per sample: the
	// censoring time μ(end − entry·U) is endMu − step·(U's 32 bits).
	endMu, step := end*mu, entry*mu*0x1p-32
	// u's low 32 bits below threshold: the lifetime ended first.
	threshold := uint64(math.Ceil(pLife * (1 << 32)))
	var count uint64
	var sum float64
	q := *rng // as in drawEndOnly
	for range n {
		e := q.Uint64()
		y, ok := stream.ExpFast(e)
		if !ok {
			y, q = stream.ExpFrom(q, e)
		}
		yb := math.Float64bits(y)
		u := q.Uint64()
		cb := math.Float64bits(endMu - step*float64(u>>32))
		over := (cb - yb) >> 63 // 1 when censored: y > c
		life := ((u & 0xffffffff) - threshold) >> 63
		count += life &^ over
		mask := -over
		sum += math.Float64frombits(yb&^mask | cb&mask)
	}
	*rng = q
	return float64(count), sum / mu
}

// drawCensoredSums draws as drawEntryDropout does and keeps the four
// sums the sandwich needs: D, T = Σxᵢ, Σdᵢxᵢ and Σxᵢ².
//
//go:noinline
func drawCensoredSums(rng *stream.PCG, n int, mu float64, c Censoring, pLife float64, sums []float64) {
	end := c.End
	if end == 0 {
		end = math.Inf(1)
	}
	var d, t, dt, tt float64
	for range n {
		y := rng.ExpFloat64() / mu
		u := rng.Uint64()
		limit := end - c.Entry*float64(u>>32)*0x1p-32
		if y > limit {
			t += limit
			tt += limit * limit
			continue
		}
		t += y
		tt += y * y
		if float64(u&0xffffffff)*0x1p-32 < pLife {
			d++
			dt += y
		}
	}
	sums[0], sums[1], sums[2], sums[3] = d, t, dt, tt
}

// Events is the number of events in the sample.
func (*censoredExponential) Events(s *Sample) int { return int(s.Data[0]) }

// MinEvents: one event gives the rate a value.
func (*censoredExponential) MinEvents() int { return 1 }

func (m *censoredExponential) NewFitter(int) Fitter { return m }

// Fit writes λ̂ = D/T and its plug-in covariance (censoredRateFit).
func (m *censoredExponential) Fit(s *Sample, theta, cov []float64) bool {
	return censoredRateFit(s, theta, cov, m.robust)
}

// censoredRateFit writes λ̂ = D/T and the plug-in covariance from the
// observed information: the log-likelihood D log λ − λT has −∂² = D/λ²,
// so Var λ̂ ≈ λ̂²/D, per observation n·λ̂²/D; robust, the sandwich, which
// reads Σdᵢxᵢ and Σxᵢ² from Data[2] and Data[3]. With no event the MLE
// is 0 on the boundary and its variance is not defined: it reports false
// (the runner counts the reason, see Events). The same formulas hold
// whatever law the lifetimes follow, so the exponential fit of censored
// Weibull lifetimes uses them too (censored_misfit.go).
func censoredRateFit(s *Sample, theta, cov []float64, robust bool) bool {
	d := s.Data[0]
	if d == 0 {
		return false
	}
	r := d / s.Data[1]
	theta[0] = r
	if robust {
		// Per observation, A = D/(nλ̂²) (the mean negative Hessian) and
		// B = Σ(dᵢ/λ̂ − xᵢ)²/n (the mean squared score; dᵢ² = dᵢ), so the
		// sandwich A⁻¹BA⁻¹ (Huber 1967; White 1982) is n·B'/A'² with the
		// sums A' = D/λ̂², B' = D/λ̂² − 2Σdᵢxᵢ/λ̂ + Σxᵢ².
		a := d / (r * r)
		b := a - 2*s.Data[2]/r + s.Data[3]
		cov[0] = float64(s.N) * b / (a * a)
		return true
	}
	cov[0] = r * r * float64(s.N) / d
	return true
}

// Cov is the inverse expected information of one observation,
// λ²/P(event): the expected information is E[D]/λ² per unit (Lawless
// 2003, ch. 2, from memory; derived from −∂² log L = D/λ²).
func (m *censoredExponential) Cov(theta, cov []float64) {
	p, _ := m.c.exponentialEvents(theta[0])
	cov[0] = theta[0] * theta[0] / p
}

// Bias is the Cox–Snell (1968) first-order bias (κ₁₁₁ + 2κ₁,₁₁)/(2i²) of
// one observation's log-likelihood ℓ = d log λ − λt (derived): i = p/λ²,
// κ₁₁₁ = E ℓ”' = 2p/λ³, κ₁,₁₁ = E[ℓ'ℓ”] = −p/λ³ + E[dt]/λ², so
// b = λ²·E[dt]/p², p = P(event) and E[dt] the expected time at risk of
// events (Censoring.exponentialEvents). Without censoring it is λ, the
// uncensored family's bias.
func (m *censoredExponential) Bias(theta, bias []float64) {
	lambda := theta[0]
	p, dt := m.c.exponentialEvents(lambda)
	bias[0] = lambda * lambda * dt / (p * p)
}
