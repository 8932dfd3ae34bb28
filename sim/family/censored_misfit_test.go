package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// censoredMisfitCases: Weibull lifetimes of shapes 0.5 to 20 under end
// of study, staggered entry and dropout, light to heavy censoring; shape
// 1 is the exponential, where the exponential fit is of its own family.
var censoredMisfitCases = []struct {
	shape, scale float64
	c            Censoring
}{
	{1.5, 2, Censoring{End: 3}},
	{0.5, 3, Censoring{Entry: 2, End: 5, DropoutRate: 0.05}},
	{3, 1, Censoring{DropoutRate: 2}},
	{2, 10, Censoring{Entry: 2, End: 5}}, // heavy
	{20, 4, Censoring{Entry: 0.5, End: 3.9}},
	{1, 2, Censoring{End: 3, DropoutRate: 0.1}},
}

// lifetimeLaw is a lifetime's density and survival from gonum's distuv,
// with the scale of its times and the speed k at which its log-density
// changes in log t (the Weibull's shape, 1 for the exponential), which
// set the quadrature's range and pieces.
type lifetimeLaw struct {
	prob, survival func(float64) float64
	scale, k       float64
}

func weibullLifetime(k, lam float64) lifetimeLaw {
	w := distuv.Weibull{K: k, Lambda: lam}
	return lifetimeLaw{prob: w.Prob, survival: w.Survival, scale: lam, k: k}
}

func exponentialLifetime(rate float64) lifetimeLaw {
	e := distuv.Exponential{Rate: rate}
	return lifetimeLaw{prob: e.Prob, survival: e.Survival, scale: 1 / rate, k: 1}
}

// observationExpectation is E h(d, X) for one unit with lifetime Y of
// law l under c, X = min(Y, C), d = 1(Y ≤ C), by quadrature from the
// definition of the observation, independently of the code under test:
// given the unit's administrative censoring time a (End − entry, entry
// uniform on [0, Entry]; +∞ without an end) and dropout D ~ Exp(δ)
// (gonum distuv),
//
//	E[h | a] = ∫₀ᵃ [f(t)P(D > t)h(1, t) + S(t)f_D(t)h(0, t)] dt
//	           + S(a)P(D > a)h(0, a),
//
// integrated by gonum's 16-point Gauss–Legendre in u = log t, pieces of
// width 0.5/k, from t = scale·e^(−max(35, 60/k)) (below it (t/scale)^k
// < e^(−60) and t < e^(−35)·scale) to scale·60^(1/k) (survival e^(−60));
// over a by 48 Gauss–Legendre nodes on [End − Entry, End].
func observationExpectation(l lifetimeLaw, c Censoring, h func(d, x float64) float64) float64 {
	drop := distuv.Exponential{Rate: c.DropoutRate}
	dropSurv := func(t float64) float64 {
		if c.DropoutRate == 0 {
			return 1
		}
		return drop.Survival(t)
	}
	dropProb := func(t float64) float64 {
		if c.DropoutRate == 0 {
			return 0
		}
		return drop.Prob(t)
	}
	lo := math.Log(l.scale) - math.Max(35, 60/l.k)
	hiAll := math.Log(l.scale) + math.Log(60)/l.k
	given := func(a float64) float64 {
		hi := hiAll
		if !math.IsInf(a, 1) {
			hi = math.Min(hi, math.Log(a))
		}
		f := func(u float64) float64 {
			t := math.Exp(u)
			return t * (l.prob(t)*dropSurv(t)*h(1, t) + l.survival(t)*dropProb(t)*h(0, t))
		}
		pieces := int(math.Ceil((hi - lo) * l.k / 0.5))
		w := (hi - lo) / float64(pieces)
		var sum float64
		for j := range pieces {
			sum += quad.Fixed(f, lo+float64(j)*w, lo+float64(j+1)*w, 16, quad.Legendre{}, 0)
		}
		if !math.IsInf(a, 1) {
			sum += l.survival(a) * dropSurv(a) * h(0, a)
		}
		return sum
	}
	switch {
	case c.End == 0:
		return given(math.Inf(1))
	case c.Entry == 0:
		return given(c.End)
	}
	const nodes = 48
	xs, ws := make([]float64, nodes), make([]float64, nodes)
	quad.Legendre{}.FixedLocations(xs, ws, c.End-c.Entry, c.End)
	var sum float64
	for i, a := range xs {
		sum += ws[i] / c.Entry * given(a)
	}
	return sum
}

// The moments the exponential fit reads (censoredWeibullMoments, in
// s = log z from −min(60, 35k)) against observationExpectation (in log t,
// over the entry time, from gonum's densities), to 1e-9 relative.
func TestCensoredWeibullMomentsQuadrature(t *testing.T) {
	for _, w := range censoredMisfitCases {
		ed, ex, edx, ex2 := censoredWeibullMoments(w.shape, w.scale, w.c)
		l := weibullLifetime(w.shape, w.scale)
		for _, q := range []struct {
			name string
			got  float64
			h    func(d, x float64) float64
		}{
			{"E d", ed, func(d, x float64) float64 { return d }},
			{"E X", ex, func(d, x float64) float64 { return x }},
			{"E dX", edx, func(d, x float64) float64 { return d * x }},
			{"E X²", ex2, func(d, x float64) float64 { return x * x }},
		} {
			want := observationExpectation(l, w.c, q.h)
			if rel := math.Abs(q.got-want) / want; !(rel <= 1e-9) {
				t.Errorf("shape %v scale %v %+v: %s = %.15g, quadrature of the definition %.15g (relative %.2g)", w.shape, w.scale, w.c, q.name, q.got, want, rel)
			}
		}
	}
}

// censoredRateLogLik is one observation's censored exponential
// log-likelihood d log λ − λx.
func censoredRateLogLik(lambda, d, x float64) float64 { return d*math.Log(lambda) - lambda*x }

// θ* of the exponential fit of censored Weibull lifetimes against gonum
// optimize maximising the expected censored log-likelihood
// E[d] log λ − λE[X] (the expectations by observationExpectation, gonum
// densities), and the sandwich A⁻¹BA⁻¹ at θ* against A = −∂²/∂λ² of that
// expectation and B = E[(∂ℓ/∂λ)²], both derivatives by gonum diff/fd, B's
// expectation by the same quadrature. Tolerances: 1e-6 relative for θ*
// (Nelder–Mead on a function flat to second order at its top) and 1e-5
// for the sandwich (fd's steps; common practice).
func TestCensoredExponentialOfWeibullPseudoTrueAndSandwich(t *testing.T) {
	weibull, _ := Lookup("weibull")
	exponential, _ := Lookup("exponential")
	for _, w := range censoredMisfitCases {
		t.Run(fmt.Sprintf("shape %v %+v", w.shape, w.c), func(t *testing.T) {
			m, err := BuildCensored(weibull, map[string]float64{"shape": w.shape, "scale": w.scale}, w.c, exponential, ModelVariance)
			if err != nil {
				t.Fatal(err)
			}
			l := weibullLifetime(w.shape, w.scale)
			ed := observationExpectation(l, w.c, func(d, x float64) float64 { return d })
			ex := observationExpectation(l, w.c, func(d, x float64) float64 { return x })
			expected := func(th []float64) float64 { return ed*math.Log(th[0]) - th[0]*ex }
			star := maximise(t, expected, []float64{1 / w.scale})[0]
			if rel := math.Abs(m.Truth[0]-star) / star; !(rel <= 1e-6) {
				t.Errorf("rate* = %.12g, gonum optimize %.12g (relative %.2g)", m.Truth[0], star, rel)
			}
			if rel := math.Abs(m.EventShare-ed) / ed; !(rel <= 1e-9) {
				t.Errorf("EventShare = %.12g, P(event) by quadrature %.12g", m.EventShare, ed)
			}
			r := m.Truth[0]
			settings := &fd.Settings{Formula: fd.Central2nd, Step: 1e-4 * r}
			a := -fd.Derivative(func(x float64) float64 { return expected([]float64{x}) }, r, settings)
			score := func(d, x float64) float64 {
				return fd.Derivative(func(lam float64) float64 { return censoredRateLogLik(lam, d, x) }, r, &fd.Settings{Formula: fd.Central, Step: 1e-6 * r})
			}
			b := observationExpectation(l, w.c, func(d, x float64) float64 { s := score(d, x); return s * s })
			want := b / (a * a)
			cov := []float64{0}
			m.Asymptotics.Cov(m.Truth, cov)
			if rel := math.Abs(cov[0]-want) / want; !(rel <= 1e-5) {
				t.Errorf("sandwich at rate* = %.10g, fd and quadrature %.10g (relative %.2g)", cov[0], want, rel)
			}
		})
	}
}

// For exponential lifetimes (shape 1) the exponential fit is of its own
// family: θ* is the rate, the sandwich the censored exponential's inverse
// expected information λ²/P(event), and the ratio-of-means bias its
// Cox–Snell bias λ²·E[T; event]/P(event)² (both closed forms,
// Censoring.exponentialEvents, derived there and tested against
// quadrature), to 1e-9 relative.
func TestCensoredExponentialOfWeibullShapeOne(t *testing.T) {
	for _, c := range censoringLaws {
		const scale = 2.5
		m, err := newCensoredExponentialOfWeibull(1, scale, c, ModelVariance == RobustVariance)
		if err != nil {
			t.Fatal(err)
		}
		own, err := newCensoredExponential(map[string]float64{"rate": 1 / scale}, c, ModelVariance)
		if err != nil {
			t.Fatal(err)
		}
		got, want := make([]float64, 3), make([]float64, 3)
		got[0], want[0] = m.Truth[0], 1/scale
		m.Asymptotics.Cov(m.Truth, got[1:2])
		own.Asymptotics.Cov(own.Truth, want[1:2])
		m.Asymptotics.Bias(m.Truth, got[2:3])
		own.Asymptotics.Bias(own.Truth, want[2:3])
		for i, name := range []string{"rate*", "sandwich", "bias"} {
			if rel := math.Abs(got[i]-want[i]) / want[i]; !(rel <= 1e-9) {
				t.Errorf("%+v: %s = %.15g, closed form %.15g (relative %.2g)", c, name, got[i], want[i], rel)
			}
		}
	}
}

// Monte Carlo: at n = 1000 over 4000 replicates, n·Var(λ̂) matches the
// sandwich at θ*, and the mean robust plug-in (the sandwich from each
// sample) matches it too, while the mean model plug-in matches
// λ*²/P(event), the inverse expected information of the wrong model; at
// n = 100 over 20000 replicates the mean of λ̂ − λ* matches b/n. The
// tolerance is 4 MCSE plus 10/n of the value for the O(1/n) remainder
// (common practice, as in TestMisfitMonteCarlo).
func TestCensoredExponentialOfWeibullMonteCarlo(t *testing.T) {
	weibull, _ := Lookup("weibull")
	exponential, _ := Lookup("exponential")
	for ci, w := range censoredMisfitCases[:4] {
		t.Run(fmt.Sprintf("shape %v %+v", w.shape, w.c), func(t *testing.T) {
			t.Parallel()
			vals := map[string]float64{"shape": w.shape, "scale": w.scale}
			m, err := BuildCensored(weibull, vals, w.c, exponential, RobustVariance)
			if err != nil {
				t.Fatal(err)
			}
			sand := []float64{0}
			m.Asymptotics.Cov(m.Truth, sand)
			r := m.Truth[0]
			const n, reps = 1000, 4000
			tr := newTrial(m, n)
			tr.fitter.(OtherVariance).EnableOther()
			rng := testRand(uint64(7100 + ci))
			est, robust, model := make([]float64, reps), make([]float64, reps), make([]float64, reps)
			other := []float64{0}
			for k := range reps {
				if !tr.fit(rng, n, est[k:k+1]) {
					t.Fatal("no fit at n = 1000")
				}
				robust[k] = tr.cov[0]
				tr.fitter.(OtherVariance).OtherCov(other)
				model[k] = other[0]
			}
			mean, _ := meanSE(est)
			sq := make([]float64, reps)
			for k := range est {
				sq[k] = n * (est[k] - mean) * (est[k] - mean)
			}
			tol := func(se float64) float64 { return 4*se + 10*sand[0]/n }
			if got, se := meanSE(sq); math.Abs(got-sand[0]) > tol(se) {
				t.Errorf("n·Var(λ̂) = %.5g ± %.2g (MCSE), sandwich at θ* = %.5g", got, se, sand[0])
			}
			if got, se := meanSE(robust); math.Abs(got-sand[0]) > tol(se) {
				t.Errorf("mean robust plug-in = %.5g ± %.2g (MCSE), sandwich at θ* = %.5g", got, se, sand[0])
			}
			wantModel := r * r / m.EventShare
			if got, se := meanSE(model); math.Abs(got-wantModel) > 4*se+10*wantModel/n {
				t.Errorf("mean model plug-in = %.5g ± %.2g (MCSE), λ*²/P(event) = %.5g", got, se, wantModel)
			}
			bias := []float64{0}
			m.Asymptotics.Bias(m.Truth, bias)
			const nb, rb = 100, 20000
			rng = testRand(uint64(7200 + ci))
			d := make([]float64, rb)
			for k := range rb {
				if !tr.fit(rng, nb, d[k:k+1]) {
					t.Fatal("no fit at n = 100")
				}
				d[k] -= r
			}
			got, se := meanSE(d)
			want := bias[0] / nb
			if tol := 4*se + 10*math.Abs(bias[0])/(nb*nb); math.Abs(got-want) > tol {
				t.Errorf("E λ̂ − λ* = %.5g ± %.2g (MCSE), b/n = %.5g", got, se, want)
			}
		})
	}
}

// The model fit's other variance is the robust fit's variance and the
// reverse, on the same samples, to the last bits.
func TestCensoredExponentialOfWeibullOtherVariance(t *testing.T) {
	w := censoredMisfitCases[1]
	mm, _ := newCensoredExponentialOfWeibull(w.shape, w.scale, w.c, false)
	mr, _ := newCensoredExponentialOfWeibull(w.shape, w.scale, w.c, true)
	fm, fr := mm.Estimator.NewFitter(60), mr.Estimator.NewFitter(60)
	fm.(OtherVariance).EnableOther()
	fr.(OtherVariance).EnableOther()
	s := Sample{Data: make([]float64, 4)}
	rng := testRand(9)
	theta := []float64{0}
	covM, covR, otherM, otherR := []float64{0}, []float64{0}, []float64{0}, []float64{0}
	for range 50 {
		mm.Sampler.Draw(rng, 60, &s)
		okM, okR := fm.Fit(&s, theta, covM), fr.Fit(&s, theta, covR)
		if !okM || !okR {
			t.Fatalf("model fit %v, robust fit %v", okM, okR)
		}
		if !fm.(OtherVariance).OtherCov(otherM) || !fr.(OtherVariance).OtherCov(otherR) {
			t.Fatal("no other variance after EnableOther")
		}
		if otherM[0] != covR[0] || otherR[0] != covM[0] {
			t.Fatalf("model %v other %v, robust %v other %v", covM[0], otherM[0], covR[0], otherR[0])
		}
	}
}

// A replicate (draw and fit, both variances) allocates nothing.
func TestCensoredExponentialOfWeibullAllocatesNothing(t *testing.T) {
	for _, w := range censoredMisfitCases[:3] {
		m, _ := newCensoredExponentialOfWeibull(w.shape, w.scale, w.c, true)
		tr := newTrial(m, 100)
		tr.fitter.(OtherVariance).EnableOther()
		rng := testRand(3)
		theta := []float64{0}
		if a := testing.AllocsPerRun(100, func() { tr.fit(rng, 100, theta) }); a != 0 {
			t.Errorf("%+v: %v allocations per draw and fit", w.c, a)
		}
	}
}

// BenchmarkCensoredExponentialOfWeibull: one draw and fit at n = 100
// (shape 1.5, scale 4, entry 2, end 5, dropout 0.05).
func BenchmarkCensoredExponentialOfWeibull(b *testing.B) {
	m, _ := newCensoredExponentialOfWeibull(1.5, 4, Censoring{Entry: 2, End: 5, DropoutRate: 0.05}, false)
	tr := newTrial(m, 100)
	rng := testRand(1)
	theta := []float64{0}
	b.ReportAllocs()
	for b.Loop() {
		tr.fit(rng, 100, theta)
	}
}

// Which fits of censored lifetimes are offered, and that the others are
// refused with a message naming those that are.
func TestBuildCensoredPairs(t *testing.T) {
	c := Censoring{End: 3}
	for _, k := range []struct {
		data, fit string
		values    map[string]float64
		ok        bool
	}{
		{"weibull", "exponential", map[string]float64{"shape": 1.5, "scale": 2}, true},
		{"exponential", "weibull", map[string]float64{"rate": 0.5}, true},
		{"exponential", "exponential", map[string]float64{"rate": 0.5}, true},
		{"weibull", "weibull", map[string]float64{"shape": 1.5, "scale": 2}, true},
		{"exponential", "lognormal", map[string]float64{"rate": 0.5}, false},
		{"weibull", "gamma", map[string]float64{"shape": 1.5, "scale": 2}, false},
	} {
		data, _ := Lookup(k.data)
		fit, _ := Lookup(k.fit)
		_, err := BuildCensored(data, k.values, c, fit, ModelVariance)
		if (err == nil) != k.ok {
			t.Errorf("%s data, %s fit: error %v, want offered %v", k.data, k.fit, err, k.ok)
		}
		if err != nil && !k.ok {
			want := fmt.Sprintf(`fit = %q with censoring is not offered for %s lifetimes: censored %s lifetimes can be fitted by "exponential" or "weibull"`, k.fit, k.data, k.data)
			if err.Error() != want {
				t.Errorf("message %q, want %q", err, want)
			}
		}
	}
	poisson, _ := Lookup("poisson")
	if _, err := BuildCensored(poisson, map[string]float64{"mean": 2}, c, nil, ModelVariance); err == nil {
		t.Error("censored poisson counts accepted")
	}
}

// The Weibull fit of censored exponential lifetimes: θ* = (1, 1/rate)
// against gonum optimize maximising the expected censored Weibull
// log-likelihood E[d log h_θ(X) − H_θ(X)] (h_θ = (k/λ)(x/λ)^(k−1) the
// Weibull hazard, H_θ = (x/λ)^k its integral) with the expectation by
// observationExpectation over gonum's exponential density; and the
// sandwich A⁻¹BA⁻¹ at θ*, A the negative Hessian of that expectation and
// B = E[∇ℓ ∇ℓᵀ] (derivatives by gonum diff/fd), against the model's Cov.
// Tolerances: 1e-6 for θ* (Nelder–Mead) and 1e-5 for the sandwich (fd).
func TestCensoredWeibullOfExponential(t *testing.T) {
	weibull, _ := Lookup("weibull")
	exponential, _ := Lookup("exponential")
	for _, k := range []struct {
		rate float64
		c    Censoring
	}{
		{0.5, Censoring{End: 3}},
		{0.25, Censoring{End: 5, DropoutRate: 0.05}},
		{2, Censoring{DropoutRate: 1}},
	} {
		t.Run(fmt.Sprintf("rate %v %+v", k.rate, k.c), func(t *testing.T) {
			m, err := BuildCensored(exponential, map[string]float64{"rate": k.rate}, k.c, weibull, RobustVariance)
			if err != nil {
				t.Fatal(err)
			}
			l := exponentialLifetime(k.rate)
			loglik := func(th []float64, d, x float64) float64 {
				sh, lam := th[0], th[1]
				v := math.Log(x / lam)
				return d*(math.Log(sh/lam)+(sh-1)*v) - math.Exp(sh*v)
			}
			expected := func(th []float64) float64 {
				return observationExpectation(l, k.c, func(d, x float64) float64 { return loglik(th, d, x) })
			}
			star := maximise(t, expected, []float64{1.3, 0.8 / k.rate})
			for i := range 2 {
				if rel := math.Abs(m.Truth[i]-star[i]) / star[i]; !(rel <= 1e-6) {
					t.Errorf("θ*[%d] = %.12g, gonum optimize %.12g (relative %.2g)", i, m.Truth[i], star[i], rel)
				}
			}
			th := m.Truth
			h := relativeHessian(expected, th)
			a := mat.NewDense(2, 2, []float64{-h[0][0], -h[0][1], -h[1][0], -h[1][1]})
			grad := func(d, x float64) []float64 {
				return fd.Gradient(nil, func(p []float64) float64 { return loglik([]float64{p[0] * th[0], p[1] * th[1]}, d, x) },
					[]float64{1, 1}, &fd.Settings{Formula: fd.Central, Step: 1e-6})
			}
			b := mat.NewDense(2, 2, nil)
			for i := range 2 {
				for j := range 2 {
					b.Set(i, j, observationExpectation(l, k.c, func(d, x float64) float64 {
						g := grad(d, x)
						return g[i] / th[i] * g[j] / th[j]
					}))
				}
			}
			var ai, tmp, sand mat.Dense
			if err := ai.Inverse(a); err != nil {
				t.Fatal(err)
			}
			tmp.Mul(&ai, b)
			sand.Mul(&tmp, &ai)
			cov := make([]float64, 4)
			m.Asymptotics.Cov(m.Truth, cov)
			for i := range 2 {
				for j := range 2 {
					scale := math.Sqrt(sand.At(i, i) * sand.At(j, j))
					if d := math.Abs(cov[2*i+j]-sand.At(i, j)) / scale; !(d <= 1e-5) {
						t.Errorf("sandwich[%d][%d] = %.10g, fd and quadrature %.10g (relative %.2g)", i, j, cov[2*i+j], sand.At(i, j), d)
					}
				}
			}
		})
	}
}
