package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// weibullCases: shapes from 0.2 to 20, light to heavy censoring.
var weibullCases = []struct {
	shape, scale float64
	c            Censoring
}{
	{1, 2, Censoring{End: 3}},
	{0.2, 1, Censoring{End: 2}},
	{0.5, 3, Censoring{Entry: 2, End: 5, DropoutRate: 0.05}},
	{2, 10, Censoring{Entry: 2, End: 5}},          // heavy: P(event) ≈ 0.11
	{5, 1, Censoring{End: 0.8, DropoutRate: 0.3}}, // heavy
	{20, 4, Censoring{DropoutRate: 0.1}},
	{20, 4, Censoring{Entry: 0.5, End: 3.9}}, // very heavy: P(event) ≈ 0.2
	{3, 1, Censoring{DropoutRate: 2}},
}

func mustCensoredWeibull(t testing.TB, shape, scale float64, c Censoring) *censoredWeibull {
	t.Helper()
	m, err := newCensoredWeibull(map[string]float64{"shape": shape, "scale": scale}, c, ModelVariance)
	if err != nil {
		t.Fatalf("shape %v scale %v %+v: %v", shape, scale, c, err)
	}
	return m.Sampler.(*censoredWeibull)
}

// The quadrature of the expected information against closed forms where
// they exist, to 1e-9 relative: without censoring (an end far beyond any
// lifetime) the Weibull's own information (derived with E[z log z] =
// 1 − γ, E[z log² z] = π²/6 − 1 + (1 − γ)², DLMF 5.4.12, 5.15.1), and
// P(event) = 1 − exp(−(end/λ)^k) with an end only (derived), and
// λ'/(λ' + δ)… for the exponential shape with dropout only,
// P(event) = λ/(λ + δ), λ = 1/scale (derived: competing exponentials).
func TestCensoredWeibullInfoClosedForms(t *testing.T) {
	for _, k := range []float64{0.2, 1, 3.7, 20} {
		m := mustCensoredWeibull(t, k, 2, Censoring{End: 2 * math.Pow(80, 1/k)})
		info, p := m.expectedInfo(k, 2)
		g1 := 1 - 0.57721566490153286061 // 1 − γ, Euler–Mascheroni (DLMF 5.2.3)
		want := [4]float64{(math.Pi*math.Pi/6 + g1*g1) / (k * k), -g1 / 2, -g1 / 2, k * k / 4}
		for i := range info {
			if rel := math.Abs(info[i]-want[i]) / math.Abs(want[i]); !(rel <= 1e-9) {
				t.Errorf("shape %v uncensored: info[%d] = %.15g, closed form %.15g (relative %.2g)", k, i, info[i], want[i], rel)
			}
		}
		if math.Abs(p-1) > 1e-9 {
			t.Errorf("shape %v uncensored: P(event) = %.15g, want 1", k, p)
		}
		for _, end := range []float64{0.5, 2, 6} {
			m := mustCensoredWeibull(t, k, 2, Censoring{End: end})
			_, p := m.expectedInfo(k, 2)
			want := -math.Expm1(-math.Pow(end/2, k))
			if rel := math.Abs(p-want) / want; !(rel <= 1e-9) {
				t.Errorf("shape %v end %v: P(event) = %.15g, 1 − exp(−(end/λ)^k) = %.15g (relative %.2g)", k, end, p, want, rel)
			}
		}
	}
	m := mustCensoredWeibull(t, 1, 2, Censoring{DropoutRate: 0.3})
	if _, p := m.expectedInfo(1, 2); math.Abs(p-0.5/0.8) > 1e-9*0.625 {
		t.Errorf("exponential shape, dropout only: P(event) = %.15g, λ/(λ + δ) = 0.625", p)
	}
}

// censoredExpectedLogLik is E_θ0 ℓ_θ for one observation, by quadrature in t:
// ∫ G(t)[f0(t) log h_θ(t) − S0(t) h_θ(t)] dt (derived: E[d log h_θ(X)] =
// ∫ f0 G log h_θ and E H_θ(X) = ∫ P(X ≥ t) h_θ(t) dt), with log h_θ(t) =
// log k − log λ + (k − 1) log(t/λ). Gauss–Legendre (gonum) in u = log t,
// pieces of width 0.05/k0 from 60/k0 below to log 60/k0 above log λ0.
func censoredExpectedLogLik(k0, lam0 float64, c Censoring, theta []float64) float64 {
	k, lam := theta[0], theta[1]
	lo, hi := math.Log(lam0)-60/k0, math.Log(lam0)+math.Log(60)/k0
	if c.End > 0 {
		hi = math.Min(hi, math.Log(c.End))
	}
	cuts := []float64{lo}
	if c.Entry > 0 && c.End > 0 && math.Log(c.End-c.Entry) > lo {
		cuts = append(cuts, math.Log(c.End-c.Entry))
	}
	cuts = append(cuts, hi)
	f := func(u float64) float64 {
		t := math.Exp(u)
		z0 := math.Pow(t/lam0, k0)
		s0 := math.Exp(-z0)
		f0 := k0 / t * z0 * s0
		logh := math.Log(k) - math.Log(lam) + (k-1)*(u-math.Log(lam))
		return c.survivalOf(t) * (f0*logh - s0*math.Exp(logh)) * t
	}
	var sum float64
	for i := 0; i+1 < len(cuts); i++ {
		pieces := int(math.Ceil((cuts[i+1] - cuts[i]) * k0 / 0.05))
		h := (cuts[i+1] - cuts[i]) / float64(pieces)
		for j := range pieces {
			sum += quad.Fixed(f, cuts[i]+float64(j)*h, cuts[i]+float64(j+1)*h, 16, quad.Legendre{}, 0)
		}
	}
	return sum
}

// The expected information by quadrature against the negative Hessian
// of the expected log-likelihood (censoredExpectedLogLik) by gonum's diff/fd.
func TestCensoredWeibullInfoFiniteDifferences(t *testing.T) {
	for _, w := range weibullCases {
		m := mustCensoredWeibull(t, w.shape, w.scale, w.c)
		info, _ := m.expectedInfo(w.shape, w.scale)
		theta := []float64{w.shape, w.scale}
		h := relativeHessian(func(x []float64) float64 { return censoredExpectedLogLik(w.shape, w.scale, w.c, x) }, theta)
		for i := range 2 {
			for j := range 2 {
				got, want := info[2*i+j], -h[i][j]
				scale := math.Sqrt(info[0] * info[3]) // off-diagonals compare on the scale of the diagonals
				if i == j {
					scale = math.Abs(want)
				}
				// fd's own error is about 1e-7 here (truncation and the
				// quadrature's rounding at these steps); the quadrature's
				// 1e-9 is checked against closed forms above.
				if d := math.Abs(got-want) / scale; d > 2e-6 {
					t.Errorf("shape %v scale %v %+v: info[%d][%d] = %.10g, −fd Hessian %.10g (relative %.2g)", w.shape, w.scale, w.c, i, j, got, want, d)
				}
			}
		}
	}
}

// relativeHessian is the Hessian of f at θ by gonum's diff/fd, central
// differences in relative coordinates x = θ/θ0 (so one step suits
// parameters of any size) at steps 2e-4 and 1e-4, combined by Richardson
// extrapolation, (4H(h/2) − H(h))/3, which cancels the h² error term
// (the differences alone were off by 1e-6 relative for shape 20).
func relativeHessian(f func([]float64) float64, theta []float64) [2][2]float64 {
	at := func(step float64) *mat.SymDense {
		h := mat.NewSymDense(2, nil)
		fd.Hessian(h, func(x []float64) float64 { return f([]float64{x[0] * theta[0], x[1] * theta[1]}) },
			[]float64{1, 1}, &fd.Settings{Formula: fd.Central, Step: step})
		return h
	}
	coarse, fine := at(2e-4), at(1e-4)
	var out [2][2]float64
	for i := range 2 {
		for j := range 2 {
			out[i][j] = (4*fine.At(i, j) - coarse.At(i, j)) / 3 / (theta[i] * theta[j])
		}
	}
	return out
}

// censoredWeibullLogLik is the sample's censored log-likelihood
// Σ d(log k − log λ + (k − 1) log(x/λ)) − (x/λ)^k.
func censoredWeibullLogLik(s *Sample, k, lam float64) float64 {
	n := s.N
	var l float64
	for i := range n {
		x, d := s.Data[i], s.Data[n+i]
		v := math.Log(x / lam)
		l += d*(math.Log(k)-math.Log(lam)+(k-1)*v) - math.Exp(k*v)
	}
	return l
}

// The MLE against gonum's optimize (Nelder–Mead on (log k, log λ), from
// a start away from the fit) on fixed samples, and the plug-in covariance
// against the inverse of fd's Hessian of the log-likelihood at the MLE.
func TestCensoredWeibullMLE(t *testing.T) {
	rng := testRand(2015)
	for ci, w := range weibullCases {
		m := mustCensoredWeibull(t, w.shape, w.scale, w.c)
		tr := newTrial(Model{Truth: []float64{w.shape, w.scale}, Sampler: m, Estimator: m, Asymptotics: m}, 400)
		fitted := 0
		for _, n := range []int{15, 60, 400} {
			theta := []float64{0, 0}
			if !tr.fit(rng, n, theta) {
				continue
			}
			fitted++
			label := fmt.Sprintf("case %d (shape %v, %+v) n=%d", ci, w.shape, w.c, n)
			nll := func(x []float64) float64 { return -censoredWeibullLogLik(&tr.sample, math.Exp(x[0]), math.Exp(x[1])) }
			start := []float64{math.Log(theta[0]) + 0.3, math.Log(theta[1]) - 0.2}
			res, err := optimize.Minimize(optimize.Problem{Func: nll}, start,
				&optimize.Settings{Converger: &optimize.FunctionConverge{Absolute: 1e-14, Iterations: 200}, MajorIterations: 20000}, &optimize.NelderMead{})
			if err != nil {
				t.Fatalf("%s: optimize: %v", label, err)
			}
			ours := nll([]float64{math.Log(theta[0]), math.Log(theta[1])})
			if ours > res.F+1e-9*math.Abs(res.F) {
				t.Errorf("%s: −loglik %.15g at our fit, gonum optimize found %.15g", label, ours, res.F)
			}
			for i, name := range []string{"shape", "scale"} {
				if d := math.Abs(math.Exp(res.X[i]) - theta[i]); d > 1e-5*theta[i] {
					t.Errorf("%s: %s %.12g, gonum optimize %.12g", label, name, theta[i], math.Exp(res.X[i]))
				}
			}
			h := relativeHessian(func(x []float64) float64 { return censoredWeibullLogLik(&tr.sample, x[0], x[1]) }, theta)
			var inv mat.Dense
			neg := mat.NewDense(2, 2, []float64{-h[0][0], -h[0][1], -h[1][0], -h[1][1]})
			if err := inv.Inverse(neg); err != nil {
				t.Fatalf("%s: %v", label, err)
			}
			for i := range 2 {
				for j := range 2 {
					want := float64(n) * inv.At(i, j)
					scale := math.Sqrt(float64(n) * float64(n) * inv.At(0, 0) * inv.At(1, 1))
					if i == j {
						scale = math.Abs(want)
					}
					// fd's own error: the sums' rounding over h² ≈ 1e-8,
					// up to about 1e-5 of the entries at n = 400.
					if d := math.Abs(tr.cov[2*i+j]-want) / scale; d > 3e-5 {
						t.Errorf("%s: plug-in cov[%d][%d] %.8g, n·(−fd Hessian)⁻¹ %.8g", label, i, j, tr.cov[2*i+j], want)
					}
				}
			}
		}
		if fitted == 0 {
			t.Errorf("case %d: no sample could be fitted", ci)
		}
	}
}

// Fewer than two distinct event times: undefined.
func TestCensoredWeibullTooFewEvents(t *testing.T) {
	m := mustCensoredWeibull(t, 2, 1, Censoring{End: 1})
	f := m.NewFitter(4)
	theta, cov := make([]float64, 2), make([]float64, 4)
	for _, k := range []struct {
		data []float64
		ok   bool
	}{
		{[]float64{1, 1, 1, 1, 0, 0, 0, 0}, false},        // no event
		{[]float64{0.5, 1, 1, 1, 1, 0, 0, 0}, false},      // one event
		{[]float64{0.5, 0.5, 1, 1, 1, 1, 0, 0}, false},    // two events at one time
		{[]float64{0.5, 0.7, 1, 1, 1, 1, 0, 0}, true},     // two distinct
		{[]float64{0.5, 0.7, 0.2, 0.9, 1, 1, 1, 1}, true}, // no censoring
	} {
		s := Sample{N: 4, Data: k.data}
		if got := f.Fit(&s, theta, cov); got != k.ok {
			t.Errorf("%v: Fit = %v, want %v", k.data, got, k.ok)
		}
	}
}

// The sampler's share of events against P(event) by quadrature, within
// 4 MCSE (common practice).
func TestCensoredWeibullDraw(t *testing.T) {
	const n, reps = 50, 2000
	for ci, w := range weibullCases {
		m := mustCensoredWeibull(t, w.shape, w.scale, w.c)
		rng := testRand(uint64(300 + ci))
		s := Sample{Data: make([]float64, 2*n)}
		events := 0
		for range reps {
			m.Draw(rng, n, &s)
			events += m.Events(&s)
		}
		units := float64(n * reps)
		share := float64(events) / units
		if z := (share - m.share) / math.Sqrt(m.share*(1-m.share)/units); math.Abs(z) > 4 {
			t.Errorf("case %d: share of events %.5f, P(event) by quadrature %.5f: %+.1f MCSE", ci, share, m.share, z)
		}
	}
}

func TestCensoredWeibullAllocatesNothing(t *testing.T) {
	w := weibullCases[2]
	m := mustCensoredWeibull(t, w.shape, w.scale, w.c)
	tr := newTrial(Model{Truth: []float64{w.shape, w.scale}, Sampler: m, Estimator: m, Asymptotics: m}, 100)
	rng := testRand(3)
	theta := []float64{0, 0}
	if a := testing.AllocsPerRun(100, func() { tr.fit(rng, 100, theta) }); a != 0 {
		t.Errorf("%v allocations per draw and fit", a)
	}
}

// BenchmarkCensoredWeibull: one draw and fit at n = 100 (shape 1.5,
// entry, end and dropout: about half the units have an event).
func BenchmarkCensoredWeibull(b *testing.B) {
	m := mustCensoredWeibull(b, 1.5, 4, Censoring{Entry: 2, End: 6, DropoutRate: 0.05})
	tr := newTrial(Model{Truth: []float64{1.5, 4}, Sampler: m, Estimator: m, Asymptotics: m}, 100)
	rng := testRand(1)
	theta := []float64{0, 0}
	b.ReportAllocs()
	for b.Loop() {
		tr.fit(rng, 100, theta)
	}
}

// The sandwich of the censored Weibull fit against one built from gonum's
// diff/fd: each observation's score by fd.Gradient of its own
// log-likelihood term, A from relativeHessian of the whole
// log-likelihood, both at the MLE; A⁻¹BA⁻¹·n per observation.
func TestCensoredWeibullSandwich(t *testing.T) {
	rng := testRand(99)
	checked := 0
	for ci, w := range weibullCases {
		mr, err := newCensoredWeibull(map[string]float64{"shape": w.shape, "scale": w.scale}, w.c, RobustVariance)
		if err != nil {
			t.Fatal(err)
		}
		const n = 80
		tr := newTrial(mr, n)
		theta := []float64{0, 0}
		if !tr.fit(rng, n, theta) {
			continue
		}
		checked++
		s := &tr.sample
		h := relativeHessian(func(x []float64) float64 { return censoredWeibullLogLik(s, x[0], x[1]) }, theta)
		a := mat.NewDense(2, 2, []float64{-h[0][0], -h[0][1], -h[1][0], -h[1][1]})
		b := mat.NewDense(2, 2, nil)
		grad := make([]float64, 2)
		for i := range n {
			one := Sample{N: 1, Data: []float64{s.Data[i], s.Data[n+i]}}
			fd.Gradient(grad, func(x []float64) float64 { return censoredWeibullLogLik(&one, x[0], x[1]) }, theta,
				&fd.Settings{Formula: fd.Central, Step: 1e-6 * math.Min(theta[0], theta[1])})
			for r := range 2 {
				for c := range 2 {
					b.Set(r, c, b.At(r, c)+grad[r]*grad[c])
				}
			}
		}
		var ainv, sw mat.Dense
		if err := ainv.Inverse(a); err != nil {
			t.Fatal(err)
		}
		sw.Mul(&ainv, b)
		sw.Mul(&sw, &ainv)
		for r := range 2 {
			for c := range 2 {
				want := n * sw.At(r, c)
				scale := n * math.Sqrt(sw.At(0, 0)*sw.At(1, 1))
				if d := math.Abs(tr.cov[2*r+c]-want) / scale; d > 1e-4 {
					t.Errorf("case %d: sandwich[%d][%d] %.8g, from fd scores and Hessian %.8g", ci, r, c, tr.cov[2*r+c], want)
				}
			}
		}
	}
	if checked < len(weibullCases)-1 {
		t.Errorf("only %d of %d cases could be fitted", checked, len(weibullCases))
	}
}

// Robustness of the search: over many small, heavily censored samples at
// shapes from 0.2 to 20, the fit has a value exactly when there are two
// distinct event times, and there the profile score vanishes (derived:
// the MLE is its root) and the scale's score Σ(zᵢ − dᵢ) is 0.
func TestCensoredWeibullFitAlwaysConverges(t *testing.T) {
	rng := testRand(777)
	for ci, w := range weibullCases {
		m := mustCensoredWeibull(t, w.shape, w.scale, w.c)
		f := m.NewFitter(12).(*censoredWeibullFitter)
		s := Sample{Data: make([]float64, 24)}
		theta, cov := make([]float64, 2), make([]float64, 4)
		for range 3000 {
			m.Draw(rng, 12, &s)
			distinct := map[float64]bool{}
			for i := range 12 {
				if s.Data[12+i] != 0 {
					distinct[s.Data[i]] = true
				}
			}
			ok := f.Fit(&s, theta, cov)
			if ok != (len(distinct) >= 2) {
				t.Fatalf("case %d: Fit = %v with %d distinct event times: %v", ci, ok, len(distinct), s.Data)
			}
			if !ok {
				continue
			}
			k, lam := theta[0], theta[1]
			var sz, sd, scoreK float64
			for i := range 12 {
				x, d := s.Data[i], s.Data[12+i]
				v := math.Log(x / lam)
				z := math.Exp(k * v)
				sz += z
				sd += d
				scoreK += d*(1/k+v) - z*v
			}
			if math.Abs(sz-sd) > 1e-9*sd || math.Abs(scoreK)*k > 1e-7*sd {
				t.Fatalf("case %d: at the fit (%v, %v) the scores are %v (shape) and %v (scale)", ci, k, lam, scoreK, sz-sd)
			}
		}
	}
}

// With EnableOther, the model-variance fit also gives the sandwich and
// the robust fit the inverse observed information: each the other's
// plug-in on the same sample, to the last bits.
func TestCensoredWeibullOtherVariance(t *testing.T) {
	w := weibullCases[2]
	vals := map[string]float64{"shape": w.shape, "scale": w.scale}
	mm, _ := newCensoredWeibull(vals, w.c, ModelVariance)
	mr, _ := newCensoredWeibull(vals, w.c, RobustVariance)
	fm, fr := mm.Estimator.NewFitter(60), mr.Estimator.NewFitter(60)
	fm.(OtherVariance).EnableOther()
	fr.(OtherVariance).EnableOther()
	s := Sample{Data: make([]float64, 120)}
	rng := testRand(8)
	theta := make([]float64, 2)
	covM, covR, otherM, otherR := make([]float64, 4), make([]float64, 4), make([]float64, 4), make([]float64, 4)
	for range 50 {
		mm.Sampler.Draw(rng, 60, &s)
		okM, okR := fm.Fit(&s, theta, covM), fr.Fit(&s, theta, covR)
		if okM != okR {
			t.Fatalf("model fit %v, robust fit %v on one sample", okM, okR)
		}
		if !okM {
			continue
		}
		fm.(OtherVariance).OtherCov(otherM)
		fr.(OtherVariance).OtherCov(otherR)
		for i := range 4 {
			if otherM[i] != covR[i] || otherR[i] != covM[i] {
				t.Fatalf("entry %d: model %v other %v, robust %v other %v", i, covM[i], otherM[i], covR[i], otherR[i])
			}
		}
	}
}
