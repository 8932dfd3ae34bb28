package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// Goodness of fit of every sampler against gonum's distributions. Where the
// fit at n = 1 returns a one-to-one function of its single observation
// (exponential, lognormal, poisson, bernoulli, binomial), the draws are
// taken through Draw and Fit themselves, so the code under test is the
// code the runner calls. All checks are at the 0.1% level with fixed seeds.

func TestSampleExponentialKS(t *testing.T) {
	for i, rate := range []float64{0.05, 1, 7.5} {
		tr := newTrial(mustModel(t, "exponential", map[string]float64{"rate": rate}), 1)
		rng := testRand(100 + uint64(i))
		xs := make([]float64, 20000)
		var th [1]float64
		for j := range xs {
			tr.fit(rng, 1, th[:])
			xs[j] = 1 / th[0] // n = 1: λ̂ = 1/y
		}
		ksCheck(t, fmt.Sprintf("exponential(rate=%g)", rate), xs, distuv.Exponential{Rate: rate}.CDF) // gonum distuv.Exponential CDF
	}
}

func TestSampleLognormalKS(t *testing.T) {
	for i, c := range []struct{ meanlog, sdlog float64 }{{0, 1}, {-3, 0.1}, {2, 2.5}} {
		tr := newTrial(mustModel(t, "lognormal", map[string]float64{"meanlog": c.meanlog, "sdlog": c.sdlog}), 1)
		rng := testRand(200 + uint64(i))
		xs := make([]float64, 20000)
		var th [2]float64
		for j := range xs {
			tr.fit(rng, 1, th[:])
			xs[j] = math.Exp(th[0]) // n = 1: meanloĝ = log y
		}
		ksCheck(t, fmt.Sprintf("lognormal(%g, %g)", c.meanlog, c.sdlog), xs,
			distuv.LogNormal{Mu: c.meanlog, Sigma: c.sdlog}.CDF) // gonum distuv.LogNormal CDF
	}
}

func TestSampleGammaKS(t *testing.T) {
	// Shapes below 1 exercise the boost, 1 the boundary, 1000 the regime
	// where V = (1+cZ)³ stays near 1.
	for i, shape := range []float64{0.05, 0.3, 0.999, 1, 2.5, 30, 1000} {
		const rate = 2
		g := newGammaGen(shape)
		rng := testRand(300 + uint64(i))
		xs := make([]float64, 20000)
		for j := range xs {
			xs[j] = g.std(rng) / rate
		}
		ksCheck(t, fmt.Sprintf("gamma(shape=%g)", shape), xs, distuv.Gamma{Alpha: shape, Beta: rate}.CDF) // gonum distuv.Gamma CDF
	}
}

// TestSampleGammaLogW checks that the log w returned beside w is its
// logarithm, since the MLE uses it instead of log(w).
func TestSampleGammaLogW(t *testing.T) {
	for i, shape := range []float64{0.05, 0.7, 3, 1000} {
		g := newGammaGen(shape)
		rng := testRand(350 + uint64(i))
		for range 1000 {
			w, lw := g.draw(rng)
			if w == 0 { // underflow for tiny shapes: log w must still be finite
				if math.IsInf(lw, 0) || math.IsNaN(lw) {
					t.Fatalf("shape %g: w = 0 with log w = %v", shape, lw)
				}
				continue
			}
			if d := math.Abs(lw - math.Log(w)); d > 1e-12*math.Max(1, math.Abs(lw)) {
				t.Fatalf("shape %g: log w = %v but log(w) = %v", shape, lw, math.Log(w))
			}
		}
	}
}

func TestSampleBivariateNormalKS(t *testing.T) {
	std := distuv.UnitNormal.CDF // gonum distuv.Normal CDF
	for i, rho := range []float64{-0.95, 0, 0.5} {
		m := mustModel(t, "bivariate_normal", map[string]float64{
			"mean_x": 0, "mean_y": 0, "sd_x": 1, "sd_y": 1, "rho": rho}).Sampler.(*bivariateNormalModel)
		rng := testRand(400 + uint64(i))
		const n = 20000
		zs, ws, sum, cond := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
		for j := range n {
			z, w := m.pair(rng)
			zs[j], ws[j] = z, w
			// z + w ~ N(0, 2(1+ρ)) checks the correlation; the
			// conditional residual (w − ρz)/√(1−ρ²) ~ N(0,1).
			sum[j] = (z + w) / math.Sqrt(2*(1+rho))
			cond[j] = (w - rho*z) / math.Sqrt(1-rho*rho)
		}
		name := fmt.Sprintf("bivariate_normal(rho=%g)", rho)
		ksCheck(t, name+" x", zs, std)
		ksCheck(t, name+" y", ws, std)
		ksCheck(t, name+" (x+y)", sum, std)
		ksCheck(t, name+" y|x residual", cond, std)
	}
}

func TestSamplePoissonChiSquare(t *testing.T) {
	// Table inversion up to poissonTableMax, PTRS above it.
	for i, mean := range []float64{1e-3, 0.2, 1, 4.5, 30, 250, 9e4, 2e5, 1e7, 1e13} {
		tr := newTrial(mustModel(t, "poisson", map[string]float64{"mean": mean}), 1)
		rng := testRand(500 + uint64(i))
		draws := make([]int, 200000)
		var th [1]float64
		for j := range draws {
			tr.fit(rng, 1, th[:])
			draws[j] = int(th[0])
		}
		d := distuv.Poisson{Lambda: mean} // gonum distuv.Poisson Prob and CDF
		if mean == 1e13 {
			// distuv's log-gamma loses relative accuracy at 10¹³; compare
			// the standardised counts with the normal limit instead, which
			// at μ = 10¹³ is within ~10⁻⁷ in CDF (skewness 1/√μ).
			xs := make([]float64, len(draws))
			for j, k := range draws {
				xs[j] = (float64(k) - mean) / math.Sqrt(mean)
			}
			ksCheck(t, "poisson(1e13) standardised", xs, distuv.UnitNormal.CDF)
			continue
		}
		chiSquareCheck(t, fmt.Sprintf("poisson(%g)", mean), draws, d.Prob, d.CDF)
	}
}

// TestSamplePTRS runs PTRS directly at means where the table would serve,
// down to its lower limit 10, where its envelope is least tight.
func TestSamplePTRS(t *testing.T) {
	for i, mean := range []float64{10, 23.7, 100, 1000} {
		p := newPTRSPoisson(mean)
		rng := testRand(600 + uint64(i))
		draws := make([]int, 400000)
		for j := range draws {
			draws[j] = int(p.draw(rng))
		}
		d := distuv.Poisson{Lambda: mean} // gonum distuv.Poisson Prob and CDF
		chiSquareCheck(t, fmt.Sprintf("PTRS(%g)", mean), draws, d.Prob, d.CDF)
	}
}

// TestSamplePTRSLogPMF checks the stable log-pmf used in PTRS's acceptance
// test against gonum's, and the Stirling correction against math.Lgamma.
func TestSamplePTRSLogPMF(t *testing.T) {
	for _, mean := range []float64{10, 57.3, 1e4, 1e6} {
		p := newPTRSPoisson(mean)
		d := distuv.Poisson{Lambda: mean}
		for _, z := range []float64{-5, -1, 0, 0.5, 3, 8} {
			k := math.Max(0, math.Floor(mean+z*math.Sqrt(mean)))
			got, want := p.logPMF(k), d.LogProb(k) // gonum distuv.Poisson LogProb
			// distuv forms k log μ − μ − lgamma(k+1) directly, with
			// absolute rounding ~ε·k·log μ; allow 100 times that.
			if tol := 100 * 2.2e-16 * (1 + k*math.Abs(math.Log(mean)) + mean); math.Abs(got-want) > tol {
				t.Errorf("logPMF(μ=%g, k=%g) = %.15g, distuv %.15g", mean, k, got, want)
			}
		}
	}
	for _, k := range []float64{10, 11, 50, 1000, 1e6} {
		lg, _ := math.Lgamma(k + 1)
		want := lg - (k*math.Log(k) - k + 0.5*math.Log(2*math.Pi*k)) // exact definition of δ(k)
		if got := stirlingCorrection(k); math.Abs(got-want) > 1e-13+1e-15*lg {
			t.Errorf("stirlingCorrection(%g) = %.17g, from math.Lgamma %.17g", k, got, want)
		}
	}
}

func TestSampleBinomialChiSquare(t *testing.T) {
	cases := []struct{ size, p float64 }{
		{1, 0.3}, {5, 0.5}, {20, 0.03}, {40, 0.97}, {1000, 0.4}, {1e6, 1e-4}, {1e7, 0.5}, {3, 1e-6},
	}
	for i, c := range cases {
		tr := newTrial(mustModel(t, "binomial", map[string]float64{"size": c.size, "p": c.p}), 1)
		rng := testRand(700 + uint64(i))
		draws := make([]int, 200000)
		var th [1]float64
		for j := range draws {
			tr.fit(rng, 1, th[:])
			draws[j] = int(math.Round(th[0] * c.size)) // n = 1: p̂ = y/size
		}
		d := distuv.Binomial{N: c.size, P: c.p} // gonum distuv.Binomial Prob and CDF
		chiSquareCheck(t, fmt.Sprintf("binomial(%g, %g)", c.size, c.p), draws, d.Prob, d.CDF)
	}
}

func TestSampleBernoulliChiSquare(t *testing.T) {
	for i, p := range []float64{0.001, 0.37, 0.9} {
		tr := newTrial(mustModel(t, "bernoulli", map[string]float64{"p": p}), 1)
		rng := testRand(800 + uint64(i))
		draws := make([]int, 200000)
		var th [1]float64
		for j := range draws {
			tr.fit(rng, 1, th[:])
			draws[j] = int(th[0])
		}
		d := distuv.Bernoulli{P: p} // gonum distuv.Bernoulli Prob and CDF
		chiSquareCheck(t, fmt.Sprintf("bernoulli(%g)", p), draws, d.Prob, d.CDF)
	}
}

// TestSampleTableExact checks the inversion tables entry by entry: the
// probability each assigns to k must match gonum's pmf to rounding, the
// mass left outside must be below tableTail, and the guide must point at
// or before the first entry above j/m.
func TestSampleTableExact(t *testing.T) {
	type tc struct {
		name  string
		table *cdfTable
		dist  interface {
			Prob(float64) float64
			CDF(float64) float64
		}
	}
	var cases []tc
	for _, mean := range []float64{1e-3, 0.7, 12, 3000, poissonTableMax} {
		m, err := newPoissonModel(mean)
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, tc{fmt.Sprintf("poisson(%g)", mean), m.table, distuv.Poisson{Lambda: mean}})
	}
	for _, c := range []struct{ size, p float64 }{{1, 0.5}, {7, 0.2}, {500, 0.999}, {1e5, 0.3}} {
		m, err := newBinomialModel(c.size, c.p)
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, tc{fmt.Sprintf("binomial(%g, %g)", c.size, c.p), m.table, distuv.Binomial{N: c.size, P: c.p}})
	}
	for _, c := range cases {
		tb := c.table
		prev := 0.0
		for i, f := range tb.cdf {
			k := float64(tb.lo + i)
			// distuv's pmf goes through log-gamma, whose rounding grows
			// with k (~ε·k·log k in the exponent, ~1e-10 relative at
			// k = 10⁵); the largest probabilities here are ≈ 1, so 1e-12
			// absolute covers that and the table's own summation.
			if got, want := f-prev, c.dist.Prob(k); math.Abs(got-want) > 1e-12 {
				t.Errorf("%s: P(%g) = %.17g from the table, %.17g from distuv", c.name, k, got, want)
				break
			}
			if f < prev {
				t.Errorf("%s: cdf decreases at %g", c.name, k)
			}
			prev = f
		}
		if tb.cdf[len(tb.cdf)-1] != 1 {
			t.Errorf("%s: last cdf entry %v ≠ 1", c.name, tb.cdf[len(tb.cdf)-1])
		}
		lower := c.dist.CDF(float64(tb.lo - 1))
		upper := 1 - c.dist.CDF(float64(tb.lo+len(tb.cdf)-1))
		// The upper tail from 1 − CDF is only good to ~ε.
		if lower > 10*tableTail || upper > 1e-15 {
			t.Errorf("%s: mass outside the table %g below, %g above", c.name, lower, upper)
		}
		for j, g := range tb.guide {
			k := int(g)
			if tb.cdf[k] <= float64(j)/tb.m || (k > 0 && tb.cdf[k-1] > float64(j)/tb.m) {
				t.Errorf("%s: guide[%d] = %d is not the least k with cdf[k] > j/m", c.name, j, k)
				break
			}
		}
	}
}
