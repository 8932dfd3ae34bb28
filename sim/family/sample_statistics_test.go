package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// The exact sufficient-statistic draws against their laws, by gonum's
// distributions, at the 0.1% level with fixed seeds. Power (normal
// approximations, from memory): a KS test on 20000 draws rejects with
// probability about 95% when the CDF is off by 0.025 anywhere
// (√N·0.025 ≈ 3.5 against the critical 1.95); a χ² test on 200000 draws
// with about 50 cells rejects with probability about 90% when the
// probabilities of cells holding half the mass are off by 2.4% relative
// (noncentrality N·Σδ²/p ≈ 57).

const statDraws = 20000

func statSampler(t *testing.T, family string, v map[string]float64) StatisticsSampler {
	t.Helper()
	ss, ok := mustModel(t, family, v).Sampler.(StatisticsSampler)
	if !ok {
		t.Fatalf("%s has no exact statistics sampler", family)
	}
	return ss
}

// Normal (and lognormal, the same model on log y): Σz/√n ~ N(0, 1),
// Σ(z − z̄)² ~ χ²ₙ₋₁, and, which needs their independence, the t statistic
// z̄/√(S²/n) ~ Student t with n − 1 degrees of freedom.
func TestNormalStatisticsLaw(t *testing.T) {
	ss := statSampler(t, "normal", map[string]float64{"mean": 3, "sd": 2})
	for i, n := range []int{2, 3, 7, 40, 2500, 1000000} {
		rng := testRand(700 + uint64(i))
		s := Sample{Data: make([]float64, 2)}
		mean, ssq, tstat := make([]float64, statDraws), make([]float64, statDraws), make([]float64, statDraws)
		fn := float64(n)
		for j := range mean {
			ss.DrawStatistics(rng, n, &s)
			if s.N != n {
				t.Fatalf("N = %d, want %d", s.N, n)
			}
			mean[j] = s.Data[0] / math.Sqrt(fn)
			ssq[j] = s.Data[1] - s.Data[0]*s.Data[0]/fn
			tstat[j] = (s.Data[0] / fn) / math.Sqrt(ssq[j]/(fn-1)/fn)
		}
		name := fmt.Sprintf("normal n=%d", n)
		ksCheck(t, name+" Σz/√n", mean, distuv.UnitNormal.CDF)                          // gonum distuv.Normal
		ksCheck(t, name+" Σ(z−z̄)²", ssq, distuv.ChiSquared{K: fn - 1}.CDF)             // gonum distuv.ChiSquared
		ksCheck(t, name+" t", tstat, distuv.StudentsT{Mu: 0, Sigma: 1, Nu: fn - 1}.CDF) // gonum distuv.StudentsT
	}
	// n = 1: no spread at all, as when the one observation is drawn.
	s := Sample{Data: make([]float64, 2)}
	ss.DrawStatistics(testRand(1), 1, &s)
	if d := s.Data[1] - s.Data[0]*s.Data[0]; math.Abs(d) > 1e-15*s.Data[1] {
		t.Errorf("n = 1: Σz² − (Σz)² = %g, want 0", d)
	}
}

// Exponential: the sum of n standard exponentials is Gamma(n, 1).
func TestExponentialStatisticsLaw(t *testing.T) {
	ss := statSampler(t, "exponential", map[string]float64{"rate": 0.5})
	for i, n := range []int{1, 2, 9, 150, 1000000} {
		rng := testRand(720 + uint64(i))
		s := Sample{Data: make([]float64, 1)}
		xs := make([]float64, statDraws)
		for j := range xs {
			ss.DrawStatistics(rng, n, &s)
			xs[j] = s.Data[0]
		}
		ksCheck(t, fmt.Sprintf("exponential sum n=%d", n), xs, distuv.Gamma{Alpha: float64(n), Beta: 1}.CDF) // gonum distuv.Gamma
	}
}

func countsOf(t *testing.T, ss StatisticsSampler, seed uint64, n, draws int) []int {
	t.Helper()
	rng := testRand(seed)
	s := Sample{Data: make([]float64, 1)}
	out := make([]int, draws)
	for j := range out {
		ss.DrawStatistics(rng, n, &s)
		if s.Data[0] != math.Trunc(s.Data[0]) || s.Data[0] < 0 {
			t.Fatalf("count %v is not a whole number ≥ 0", s.Data[0])
		}
		out[j] = int(s.Data[0])
	}
	return out
}

// Poisson: the total of n counts is Poisson(n·mean), by inversion below
// a total mean of 10 and PTRS from 10 on.
func TestPoissonStatisticsLaw(t *testing.T) {
	for i, c := range []struct {
		mean float64
		n    int
	}{{0.01, 5}, {0.3, 10}, {0.99, 10}, {1, 10}, {2.5, 12}, {0.05, 20000}, {40, 1000}} {
		ss := statSampler(t, "poisson", map[string]float64{"mean": c.mean})
		mu := c.mean * float64(c.n)
		draws := countsOf(t, ss, 740+uint64(i), c.n, 200000)
		d := distuv.Poisson{Lambda: mu} // gonum distuv.Poisson Prob and CDF
		chiSquareCheck(t, fmt.Sprintf("poisson total, n·mean=%g", mu), draws, d.Prob, d.CDF)
	}
}

// Bernoulli and binomial: the total successes of n observations is
// Binomial(n·size, p), by inversion when the smaller of p and 1 − p
// times the trials is below 10, by BTRS otherwise, both sides of ½.
func TestBinomialStatisticsLaw(t *testing.T) {
	cases := []struct {
		family  string
		size, p float64
		n       int
	}{
		{"bernoulli", 1, 0.03, 50},
		{"bernoulli", 1, 0.5, 19},
		{"bernoulli", 1, 0.9, 60},
		{"bernoulli", 1, 0.2, 50},
		{"bernoulli", 1, 0.2, 51},
		{"bernoulli", 1, 0.7, 2000},
		{"binomial", 12, 0.35, 30},
		{"binomial", 1000, 0.001, 200},
		{"binomial", 50, 0.6, 100000},
	}
	for i, c := range cases {
		v := map[string]float64{"p": c.p}
		if c.family == "binomial" {
			v["size"] = c.size
		}
		ss := statSampler(t, c.family, v)
		trials := c.size * float64(c.n)
		draws := countsOf(t, ss, 760+uint64(i), c.n, 200000)
		d := distuv.Binomial{N: trials, P: c.p} // gonum distuv.Binomial Prob and CDF
		chiSquareCheck(t, fmt.Sprintf("%s total, %g trials, p=%g", c.family, trials, c.p), draws, d.Prob, d.CDF)
	}
}

// Bivariate normal: the sums are N(0, nR); by normal regression theory
// given z (exact, e.g. Seber & Lee 2003, Linear Regression Analysis,
// §3, from memory), the scatter's S_zz ~ χ²ₙ₋₁, its residual sum of
// squares S_ww − S_zw²/S_zz ~ (1 − ρ²)χ²ₙ₋₂ and the slope's t statistic
// (b − ρ)/√(RSS/((n−2)S_zz)) ~ t with n − 2 degrees of freedom, where
// b = S_zw/S_zz: together they pin down the Wishart's Bartlett draw.
func TestBivariateNormalStatisticsLaw(t *testing.T) {
	for i, c := range []struct {
		rho float64
		n   int
	}{{0, 3}, {0.5, 4}, {-0.9, 30}, {0.99, 500}} {
		ss := statSampler(t, "bivariate_normal", map[string]float64{"mean_x": 1, "mean_y": -1, "sd_x": 2, "sd_y": 0.5, "rho": c.rho})
		rng := testRand(780 + uint64(i))
		s := Sample{Data: make([]float64, 5)}
		fn := float64(c.n)
		sum, szz, rss, tb := make([]float64, statDraws), make([]float64, statDraws), make([]float64, statDraws), make([]float64, statDraws)
		for j := range sum {
			ss.DrawStatistics(rng, c.n, &s)
			sz, sw := s.Data[0], s.Data[1]
			zz := s.Data[2] - sz*sz/fn
			ww := s.Data[3] - sw*sw/fn
			zw := s.Data[4] - sz*sw/fn
			sum[j] = (sz + sw) / math.Sqrt(2*fn*(1+c.rho))
			szz[j] = zz
			b := zw / zz
			rss[j] = (ww - zw*b) / ((1 - c.rho) * (1 + c.rho))
			tb[j] = (b - c.rho) / math.Sqrt(rss[j]*(1-c.rho)*(1+c.rho)/((fn-2)*zz))
		}
		name := fmt.Sprintf("bivariate_normal rho=%g n=%d", c.rho, c.n)
		ksCheck(t, name+" (Σz+Σw)", sum, distuv.UnitNormal.CDF)                            // gonum distuv.Normal
		ksCheck(t, name+" S_zz", szz, distuv.ChiSquared{K: fn - 1}.CDF)                    // gonum distuv.ChiSquared
		ksCheck(t, name+" RSS", rss, distuv.ChiSquared{K: fn - 2}.CDF)                     // gonum distuv.ChiSquared
		ksCheck(t, name+" slope t", tb, distuv.StudentsT{Mu: 0, Sigma: 1, Nu: fn - 2}.CDF) // gonum distuv.StudentsT
	}
}

// Every family whose fit needs only its sufficient statistics has an
// exact sampler, and the gamma (whose statistics Σy, Σlog y have no
// simple joint law) does not.
func TestWhichFamiliesDrawStatistics(t *testing.T) {
	for _, name := range []string{"normal", "lognormal", "exponential", "poisson", "bernoulli", "binomial", "bivariate_normal"} {
		f, _ := Lookup(name)
		v := map[string]float64{}
		for _, p := range f.Params {
			v[p.Name] = 0.5
			if p.Integer {
				v[p.Name] = 3
			}
		}
		if !HasStatistics(mustModel(t, name, v).Sampler) {
			t.Errorf("%s: no exact statistics sampler", name)
		}
	}
	if HasStatistics(mustModel(t, "gamma", map[string]float64{"shape": 2, "rate": 1}).Sampler) {
		t.Error("gamma claims an exact statistics sampler")
	}
}

// DrawStatistics allocates nothing, at small and large n alike.
func TestStatisticsDrawsAllocateNothing(t *testing.T) {
	cases := map[string]map[string]float64{
		"normal":           {"mean": 1, "sd": 2},
		"exponential":      {"rate": 3},
		"poisson":          {"mean": 4},
		"bernoulli":        {"p": 0.4},
		"binomial":         {"size": 7, "p": 0.2},
		"bivariate_normal": {"mean_x": 0, "mean_y": 0, "sd_x": 1, "sd_y": 1, "rho": 0.3},
	}
	for name, v := range cases {
		ss := statSampler(t, name, v)
		s := Sample{Data: make([]float64, ss.SampleLen(1))}
		rng := testRand(5)
		for _, n := range []int{2, 1000000} {
			if a := testing.AllocsPerRun(100, func() { ss.DrawStatistics(rng, n, &s) }); a != 0 {
				t.Errorf("%s n=%d: %v allocations a draw", name, n, a)
			}
		}
	}
}

// BenchmarkStatistics times one exact statistics draw and fit per family,
// at n = 10 and n = 10⁶ (the same cost, which is the point).
func BenchmarkStatistics(b *testing.B) {
	cases := []struct {
		name string
		v    map[string]float64
	}{
		{"normal", map[string]float64{"mean": 1, "sd": 2}},
		{"exponential", map[string]float64{"rate": 3}},
		{"poisson", map[string]float64{"mean": 4}},
		{"bernoulli", map[string]float64{"p": 0.4}},
		{"binomial", map[string]float64{"size": 7, "p": 0.2}},
		{"bivariate_normal", map[string]float64{"mean_x": 0, "mean_y": 0, "sd_x": 1, "sd_y": 1, "rho": 0.3}},
	}
	for _, c := range cases {
		for _, n := range []int{10, 1000000} {
			b.Run(fmt.Sprintf("%s/n=%d", c.name, n), func(b *testing.B) {
				m := mustModel(b, c.name, c.v)
				ss := m.Sampler.(StatisticsSampler)
				s := Sample{Data: make([]float64, ss.SampleLen(n))}
				f := m.Estimator.NewFitter(n)
				theta := make([]float64, len(m.Truth))
				cov := make([]float64, len(m.Truth)*len(m.Truth))
				rng := testRand(9)
				b.ReportAllocs()
				for b.Loop() {
					ss.DrawStatistics(rng, n, &s)
					f.Fit(&s, theta, cov)
				}
			})
		}
	}
}
