package family

import (
	"math"

	"deltaprobe/sim/stream"
)

// StatisticsSampler is a Sampler whose sample is a set of sufficient
// statistics with a known exact joint law. DrawStatistics draws them
// directly from that law, leaving Sample.Data in the layout Draw leaves,
// at a cost that does not grow with n; it allocates nothing. The two
// draws give samples of the same distribution, not the same numbers.
type StatisticsSampler interface {
	Sampler
	DrawStatistics(rng *stream.PCG, n int, s *Sample)
}

// Statistics returns a Sampler that draws s's sufficient statistics
// directly (DrawStatistics) when s is a StatisticsSampler, and s itself
// otherwise (a sampler whose fitter needs the observations).
func Statistics(s Sampler) Sampler {
	if ss, ok := s.(StatisticsSampler); ok {
		if ec, counts := s.(EventCounter); counts {
			return countedStatisticsDraws{statisticsDraws{ss}, ec}
		}
		return statisticsDraws{ss}
	}
	return s
}

// HasStatistics reports whether s can draw its statistics directly.
func HasStatistics(s Sampler) bool {
	_, ok := s.(StatisticsSampler)
	return ok
}

// DrawsStatistics reports whether s is a sampler made by Statistics that
// draws statistics directly.
func DrawsStatistics(s Sampler) bool {
	switch s.(type) {
	case statisticsDraws, countedStatisticsDraws:
		return true
	}
	return false
}

type statisticsDraws struct{ s StatisticsSampler }

func (d statisticsDraws) SampleLen(n int) int { return d.s.SampleLen(n) }

func (d statisticsDraws) Draw(rng *stream.PCG, n int, s *Sample) { d.s.DrawStatistics(rng, n, s) }

// countedStatisticsDraws keeps a lifetime sampler's EventCounter (the
// uncensored exponential: every observation an event) when its
// statistics are drawn directly. Censored samplers draw unit by unit and
// have no StatisticsSampler, so they are never wrapped.
type countedStatisticsDraws struct {
	statisticsDraws
	EventCounter
}

// stdGamma draws one Gamma(shape, 1) variate, shape > 0, by Marsaglia &
// Tsang (gammaGen), its constants set up for this shape.
func stdGamma(rng *stream.PCG, shape float64) float64 {
	g := newGammaGen(shape)
	return g.std(rng)
}

// chiSquare draws one χ²_k variate: 2·Gamma(k/2, 1); χ²_0 is 0.
func chiSquare(rng *stream.PCG, k int) float64 {
	if k <= 0 {
		return 0
	}
	return 2 * stdGamma(rng, float64(k)/2)
}

// poissonVariate draws one Poisson(mu) variate exactly: by sequential
// inversion (the least k whose cumulative probability exceeds a uniform)
// for mu < 10, by PTRS (Hörmann 1993, see ptrsPoisson) from 10 on.
func poissonVariate(rng *stream.PCG, mu float64) float64 {
	if mu >= 10 {
		p := newPTRSPoisson(mu)
		return p.draw(rng)
	}
	u := rng.Float64()
	f := math.Exp(-mu)
	cum := f
	k := 0
	// P(K > 120) for μ < 10 is below 10⁻⁶⁰: the bound only stops a loop
	// that rounding has left short of u.
	for u >= cum && k < 120 {
		k++
		f *= mu / float64(k)
		cum += f
	}
	return float64(k)
}

// binomialVariate draws one Binomial(trials, p) variate exactly, for
// whole trials up to 2⁵³ and 0 < p < 1: with p ≤ ½ (else trials less a
// Binomial(trials, 1−p)), by sequential inversion when trials·p < 10, and
// otherwise by the transformed rejection with squeeze BTRS of Hörmann
// (1993), "The generation of binomial random variates", Journal of
// Statistical Computation and Simulation 46:101–110 (constants from
// memory; TestStatisticsSamplersMatchTheirLaws checks the output against
// gonum's binomial pmf).
func binomialVariate(rng *stream.PCG, trials, p float64) float64 {
	if p > 0.5 {
		return trials - binomialVariate(rng, trials, 1-p)
	}
	q := 1 - p
	if trials*p < 10 {
		u := rng.Float64()
		f := math.Exp(trials * math.Log1p(-p))
		cum := f
		odds := p / q
		k := 0.0
		for u >= cum && k < trials && k < 200 {
			f *= (trials - k) / (k + 1) * odds
			k++
			cum += f
		}
		return k
	}
	b := newBTRS(trials, p)
	return b.draw(rng)
}

// btrs holds BTRS's constants for Binomial(n, p), p ≤ ½, np ≥ 10.
type btrs struct {
	n, p, logP, logQ  float64
	a, b, c, vr, alph float64
	logFm             float64 // log f(m) at the mode m
}

func newBTRS(n, p float64) btrs {
	q := 1 - p
	spq := math.Sqrt(n * p * q)
	b := 1.15 + 2.53*spq
	t := btrs{
		n: n, p: p, logP: math.Log(p), logQ: math.Log1p(-p),
		a:    -0.0873 + 0.0248*b + 0.01*p,
		b:    b,
		c:    n*p + 0.5,
		vr:   0.92 - 4.2/b,
		alph: (2.83 + 5.1/b) * spq,
	}
	t.logFm = t.logPMF(math.Floor((n + 1) * p))
	return t
}

func (t *btrs) draw(rng *stream.PCG) float64 {
	for {
		u := rng.Float64() - 0.5
		v := rng.Float64()
		us := 0.5 - math.Abs(u)
		k := math.Floor((2*t.a/us+t.b)*u + t.c)
		if k < 0 || k > t.n {
			continue
		}
		if us >= 0.07 && v <= t.vr {
			return k
		}
		if math.Log(v*t.alph/(t.a/(us*us)+t.b)) <= t.logPMF(k)-t.logFm {
			return k
		}
	}
}

// logPMF returns log f(k) of Binomial(n, p). Where k and n−k are both at
// least 10 it uses Stirling's form with its correction δ (as
// ptrsPoisson.logPMF does) and writes the deviance as
// np·φ((k−np)/np) + nq·φ((n−k−nq)/nq), φ(r) = (1+r)log1p(r) − r, which
// keeps full precision for n far beyond 10⁶; near the ends it sums the
// logarithms of the binomial coefficient's few factors.
func (t *btrs) logPMF(k float64) float64 {
	n := t.n
	switch {
	case k >= 10 && n-k >= 10:
		np, nq := n*t.p, n*(1-t.p)
		phi := func(r float64) float64 { return (1+r)*math.Log1p(r) - r }
		dev := np*phi((k-np)/np) + nq*phi((n-k-nq)/nq)
		return -dev - 0.5*math.Log(2*math.Pi*k*(n-k)/n) - stirlingCorrection(k) - stirlingCorrection(n-k) + stirlingCorrection(n)
	case k < 10:
		lc := 0.0
		for i := 0.0; i < k; i++ {
			lc += math.Log((n - i) / (i + 1))
		}
		return lc + k*t.logP + (n-k)*t.logQ
	default: // n − k < 10
		lc := 0.0
		for i := 0.0; i < n-k; i++ {
			lc += math.Log((n - i) / (i + 1))
		}
		return lc + k*t.logP + (n-k)*t.logQ
	}
}

// DrawStatistics draws the normal sample's statistics in standard units:
// Σz = √n·Z with Z ~ N(0, 1), and, independent of it, the sum of squares
// about the mean Σ(z − z̄)² ~ χ²ₙ₋₁, so Σz² = χ²ₙ₋₁ + (Σz)²/n (Cochran's
// theorem; Casella & Berger 2002, Theorem 5.3.1, from memory).
func (*normalModel) DrawStatistics(rng *stream.PCG, n int, s *Sample) {
	s1 := math.Sqrt(float64(n)) * rng.NormFloat64()
	s.N = n
	s.Data[0], s.Data[1] = s1, chiSquare(rng, n-1)+s1*s1/float64(n)
}

// DrawStatistics draws the sum of n standard exponentials, Gamma(n, 1).
func (*exponentialModel) DrawStatistics(rng *stream.PCG, n int, s *Sample) {
	s.N, s.Data[0] = n, stdGamma(rng, float64(n))
}

// DrawStatistics draws the total count, Poisson(n·mean).
func (m *poissonModel) DrawStatistics(rng *stream.PCG, n int, s *Sample) {
	s.N, s.Data[0] = n, poissonVariate(rng, float64(n)*m.mean)
}

// DrawStatistics draws the number of ones, Binomial(n, p).
func (m *bernoulliModel) DrawStatistics(rng *stream.PCG, n int, s *Sample) {
	s.N, s.Data[0] = n, binomialVariate(rng, float64(n), m.p)
}

// DrawStatistics draws the total successes, Binomial(n·size, p).
func (m *binomialModel) DrawStatistics(rng *stream.PCG, n int, s *Sample) {
	s.N, s.Data[0] = n, binomialVariate(rng, float64(n)*m.size, m.p)
}

// DrawStatistics draws the standard-unit sums of pair. The sums (Σz, Σw)
// are n times the mean, N(0, nR) with R = [1 ρ; ρ 1]; independent of
// them, the scatter matrix about the mean is Wishart₂(n − 1, R), drawn
// by Bartlett's decomposition (Anderson 2003, An Introduction to
// Multivariate Statistical Analysis, §7.2, from memory): with L the
// Cholesky factor of R, [1 0; ρ c], and A lower triangular with
// a₁₁² ~ χ²ₙ₋₁, a₂₂² ~ χ²ₙ₋₂, a₂₁ ~ N(0, 1), independent, the scatter is
// (LA)(LA)ᵀ. The raw sums of squares and products add back n·mean·meanᵀ.
func (m *bivariateNormalModel) DrawStatistics(rng *stream.PCG, n int, s *Sample) {
	rn := math.Sqrt(float64(n))
	z1, z2 := rng.NormFloat64(), rng.NormFloat64()
	sz := rn * z1
	sw := rn * (m.rho*z1 + m.c*z2)
	var a11, a21, a22 float64
	if n >= 2 {
		a11 = math.Sqrt(chiSquare(rng, n-1))
		a21 = rng.NormFloat64()
		a22 = math.Sqrt(chiSquare(rng, n-2))
	}
	// LA = [a11 0; ρa11 + c·a21  c·a22].
	l21 := m.rho*a11 + m.c*a21
	l22 := m.c * a22
	fn := float64(n)
	s.N = n
	s.Data[0], s.Data[1] = sz, sw
	s.Data[2] = a11*a11 + sz*sz/fn
	s.Data[3] = l21*l21 + l22*l22 + sw*sw/fn
	s.Data[4] = a11*l21 + sz*sw/fn
}
