package regress

import (
	"math"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/stream"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// designs used by the fit tests and benchmarks.
func logistic3() *Design {
	return &Design{
		Covariates: []Covariate{
			{Name: "dose", Dist: Levels, Values: []float64{0, 1, 2, 4}},
			{Name: "female", Dist: Bernoulli, P: 0.5},
		},
		Equations: []Equation{{Outcome: "y", Kind: Logistic, Intercept: -2, Terms: []Term{{"dose", 0.9}, {"female", 0.3}}}},
	}
}

func poissonNormal() *Design {
	return &Design{
		Covariates: []Covariate{
			{Name: "x", Dist: Normal, Mean: 0.5, SD: 1},
			{Name: "u", Dist: Uniform, Min: -1, Max: 2},
			{Name: "xu", Dist: Derived, Expr: "x * u"},
		},
		Equations: []Equation{{Outcome: "y", Kind: Poisson, Intercept: 0.4, Terms: []Term{{"x", 0.3}, {"u", -0.2}, {"xu", 0.1}}}},
	}
}

func logisticNormal() *Design {
	return &Design{
		Covariates: []Covariate{{Name: "x", Dist: Normal, Mean: 0, SD: 1.5}, {Name: "g", Dist: Bernoulli, P: 0.3}},
		Equations:  []Equation{{Outcome: "y", Kind: Logistic, Intercept: 0.2, Terms: []Term{{"x", 0.8}, {"g", -0.5}}}},
	}
}

func chain() *Design {
	return &Design{
		Chain:      true,
		Covariates: []Covariate{{Name: "x", Dist: Normal, Mean: 0, SD: 1}},
		Equations: []Equation{
			{Outcome: "m", Kind: Linear, Intercept: 0.3, Terms: []Term{{"x", 0.5}}, SD: 1},
			{Outcome: "y", Kind: Logistic, Intercept: -0.5, Terms: []Term{{"x", 0.2}, {"m", 0.6}}},
		},
	}
}

func mustNew(t testing.TB, d *Design) *Model {
	t.Helper()
	m, err := New(d)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// negLogLik is equation q's negative log-likelihood at beta over sample s,
// written out from the densities (Bernoulli, Poisson without log y!).
func negLogLik(m *Model, q *eqn, s *family.Sample, beta []float64) float64 {
	var ll float64
	for i := 0; i < s.N; i++ {
		row := s.Data[i*m.stride : (i+1)*m.stride]
		eta := beta[0]
		for j, c := range q.cols {
			eta += beta[j+1] * row[c]
		}
		y := row[q.out]
		if q.fit == Logistic {
			pr := 1 / (1 + math.Exp(-eta))
			ll += y*math.Log(pr) + (1-y)*math.Log(1-pr)
		} else {
			ll += y*eta - math.Exp(eta)
		}
	}
	return -ll
}

// negScore is the gradient of negLogLik: −Σ (y − μ) z.
func negScore(m *Model, q *eqn, s *family.Sample, beta, g []float64) {
	clear(g)
	for i := 0; i < s.N; i++ {
		row := s.Data[i*m.stride : (i+1)*m.stride]
		z := append([]float64{1}, make([]float64, len(q.cols))...)
		for j, c := range q.cols {
			z[j+1] = row[c]
		}
		eta := 0.0
		for j := range z {
			eta += beta[j] * z[j]
		}
		mu := math.Exp(eta)
		if q.fit == Logistic {
			mu = 1 / (1 + math.Exp(-eta))
		}
		for j := range z {
			g[j] -= (row[q.out] - mu) * z[j]
		}
	}
}

// IRLS against an independent solver: gonum's optimize (BFGS, with the
// score Σ(y − μ)z written out here) on the log-likelihood,
// on fixed samples; and the plug-in covariance against the inverse of
// gonum's finite-difference Hessian of the log-likelihood at the MLE.
func TestFitAgainstGonumOptimize(t *testing.T) {
	for name, d := range map[string]*Design{"logistic levels": logistic3(), "logistic normal": logisticNormal(), "poisson derived": poissonNormal(),
		"poisson fit of logistic data": refit(logisticNormal(), Poisson)} {
		m := mustNew(t, d)
		q := &m.eqs[0]
		p := q.p()
		for seed := uint64(1); seed <= 3; seed++ {
			n := 200
			s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
			m.Draw(stream.New(seed, 99), n, s)
			f := m.NewFitter(n).(*fitter)
			theta := make([]float64, m.Dim())
			cov := make([]float64, m.Dim()*m.Dim())
			if !f.Fit(s, theta, cov) {
				t.Fatalf("%s seed %d: the fit failed (%s)", name, seed, f.last.Name())
			}
			obj := func(b []float64) float64 { return negLogLik(m, q, s, b) }
			prob := optimize.Problem{
				Func: obj,
				Grad: func(g, b []float64) { negScore(m, q, s, b, g) },
			}
			// BFGS may end on a failed line search once it is at the
			// optimum to working precision; the score there decides.
			res, err := optimize.Minimize(prob, make([]float64, p), &optimize.Settings{GradientThreshold: 1e-9}, &optimize.BFGS{})
			if res == nil {
				t.Fatalf("%s: gonum optimize: %v", name, err)
			}
			g := make([]float64, p)
			negScore(m, q, s, res.X, g)
			for j := range g {
				if math.Abs(g[j]) > 1e-6*float64(n) {
					t.Fatalf("%s seed %d: gonum optimize stopped (%v) with score %v, not at an optimum", name, seed, err, g)
				}
			}
			for j := 0; j < p; j++ {
				if math.Abs(theta[j]-res.X[j]) > 1e-5*math.Max(1, math.Abs(res.X[j])) {
					t.Errorf("%s seed %d: β̂[%d] = %.10g by IRLS, %.10g by gonum optimize (BFGS)", name, seed, j, theta[j], res.X[j])
				}
			}
			var h mat.SymDense
			fd.Hessian(&h, obj, theta[:p], &fd.Settings{Formula: fd.Central})
			var inv mat.Dense
			if err := inv.Inverse(&h); err != nil {
				t.Fatal(err)
			}
			for a := 0; a < p; a++ {
				for b := 0; b < p; b++ {
					want := inv.At(a, b) * float64(n)
					scale := math.Sqrt(inv.At(a, a) * inv.At(b, b) * float64(n*n))
					if math.Abs(cov[a*p+b]-want) > 1e-4*scale {
						t.Errorf("%s seed %d: plug-in cov[%d,%d] = %.8g, n·(fd Hessian)⁻¹ = %.8g (gonum diff/fd)", name, seed, a, b, cov[a*p+b], want)
					}
				}
			}
		}
	}
}

// Separation on hand-made samples: the cause must be named, whatever the
// iteration count (complete separation stops at the first linear
// program; quasi-complete likewise).
func TestSeparationCauses(t *testing.T) {
	d := &Design{
		Covariates: []Covariate{{Name: "x", Dist: Levels, Values: []float64{0, 1, 2, 3}}},
		Equations:  []Equation{{Outcome: "y", Kind: Logistic, Intercept: 0, Terms: []Term{{"x", 1}}}},
	}
	m := mustNew(t, d)
	f := m.NewFitter(8).(*fitter)
	for _, c := range []struct {
		name string
		ys   []float64
		want family.Failure
		ok   bool
	}{
		{"complete", []float64{0, 0, 1, 1, 0, 0, 1, 1}, family.Separation, false},
		{"quasi-complete", []float64{0, 0, 1, 1, 0, 1, 1, 1}, family.Separation, false}, // x = 1 mixed, 0 all 0, 2 and 3 all 1
		{"overlap", []float64{0, 1, 0, 1, 1, 0, 1, 1}, family.NotConverged, true},       // an MLE exists
		{"all ones", []float64{1, 1, 1, 1, 1, 1, 1, 1}, family.Separation, false},
	} {
		s := &family.Sample{N: 8, Data: make([]float64, m.SampleLen(8))}
		for i := 0; i < 8; i++ {
			row := s.Data[i*m.stride : (i+1)*m.stride]
			row[0], row[1], row[2] = float64(i%4), c.ys[i], float64(i%4) // x, y, pattern
		}
		theta, cov := make([]float64, 2), make([]float64, 4)
		ok := f.Fit(s, theta, cov)
		if ok != c.ok || (!ok && f.last != c.want) {
			t.Errorf("%s: Fit = %v, cause %s; want %v, %s", c.name, ok, f.last.Name(), c.ok, c.want.Name())
		}
	}
}

// A Poisson fit whose counts are zero on one whole level has no MLE (the
// level's coefficient runs to −∞), nor one with every count zero.
func TestPoissonZeroCounts(t *testing.T) {
	d := &Design{
		Covariates: []Covariate{{Name: "g", Dist: Levels, Values: []float64{0, 1}}, {Name: "x", Dist: Normal, Mean: 0, SD: 1}},
		Equations:  []Equation{{Outcome: "y", Kind: Poisson, Intercept: 0, Terms: []Term{{"g", 1}, {"x", 0.2}}}},
	}
	m := mustNew(t, d)
	f := m.NewFitter(10).(*fitter)
	for _, c := range []struct {
		name string
		ys   []float64
		ok   bool
	}{
		{"level 0 all zero", []float64{0, 2, 0, 1, 0, 3, 0, 1, 0, 2}, false},
		{"all zero", []float64{0, 0, 0, 0, 0, 0, 0, 0, 0, 0}, false},
		{"some zero", []float64{0, 2, 1, 1, 0, 3, 0, 0, 2, 2}, true},
	} {
		s := &family.Sample{N: 10, Data: make([]float64, m.SampleLen(10))}
		if m.patterns != 0 {
			t.Fatal("a design with a normal covariate has no patterns")
		}
		for i := 0; i < 10; i++ {
			row := s.Data[i*m.stride : (i+1)*m.stride]
			row[0], row[1], row[2] = float64(i%2), math.Sin(float64(i)), c.ys[i] // g, any non-collinear x, y
		}
		theta, cov := make([]float64, 3), make([]float64, 9)
		ok := f.Fit(s, theta, cov)
		if ok != c.ok || (!ok && f.last != family.ZeroCounts) {
			t.Errorf("%s: Fit = %v, cause %s; want %v (zero_counts when false)", c.name, ok, f.last.Name(), c.ok)
		}
	}
}

// Draw and Fit allocate nothing per replicate, the linear program's path
// included.
func TestDrawAndFitAllocateNothing(t *testing.T) {
	for name, d := range map[string]*Design{"logistic": logistic3(), "poisson": poissonNormal(), "chain": chain(), "chain robust": chain()} {
		m := mustNew(t, d)
		m.Robust = name == "chain robust"
		for _, n := range []int{12, 100} {
			s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
			f := m.NewFitter(n)
			rng := stream.New(5, 6)
			theta := make([]float64, m.Dim())
			cov := make([]float64, m.Dim()*m.Dim())
			allocs := testing.AllocsPerRun(200, func() {
				m.Draw(rng, n, s)
				f.Fit(s, theta, cov)
			})
			if allocs != 0 {
				t.Errorf("%s n=%d: %v allocations per replicate", name, n, allocs)
			}
		}
	}
}

func benchFit(b *testing.B, d *Design, n int, robust bool) {
	m := mustNew(b, d)
	m.Robust = robust
	s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
	f := m.NewFitter(n)
	rng := stream.New(1, 2)
	theta := make([]float64, m.Dim())
	cov := make([]float64, m.Dim()*m.Dim())
	b.ReportAllocs()
	for b.Loop() {
		m.Draw(rng, n, s)
		f.Fit(s, theta, cov)
	}
}

// BenchmarkReplicate is one replicate's draw and fit: a logistic fit with
// three coefficients at n = 100 and 1000, and a two-equation chain.
func BenchmarkReplicate(b *testing.B) {
	b.Run("logistic3_n100", func(b *testing.B) { benchFit(b, logistic3(), 100, false) })
	b.Run("logistic3_n1000", func(b *testing.B) { benchFit(b, logistic3(), 1000, false) })
	b.Run("chain_n100", func(b *testing.B) { benchFit(b, chain(), 100, false) })
	b.Run("chain_n1000", func(b *testing.B) { benchFit(b, chain(), 1000, false) })
	b.Run("chain_robust_n100", func(b *testing.B) { benchFit(b, chain(), 100, true) })
}

// BenchmarkSolve compares the hand-rolled Cholesky factor-and-solve with
// gonum/mat's for the p×p systems of one Newton step.
func BenchmarkSolve(b *testing.B) {
	for _, p := range []int{3, 10} {
		a := make([]float64, p*p)
		for i := 0; i < p; i++ {
			for j := 0; j < p; j++ {
				a[i*p+j] = 1 / float64(1+i+j)
			}
			a[i*p+i] += float64(p)
		}
		rhs := make([]float64, p)
		for i := range rhs {
			rhs[i] = float64(i + 1)
		}
		work, x := make([]float64, p*p), make([]float64, p)
		b.Run("hand_p"+itoa(p), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				copy(work, a)
				copy(x, rhs)
				cholesky(work, p)
				cholSolve(work, p, x)
			}
		})
		sym := mat.NewSymDense(p, nil)
		var ch mat.Cholesky
		xv := mat.NewVecDense(p, nil)
		rv := mat.NewVecDense(p, rhs)
		b.Run("gonum_p"+itoa(p), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				for i := 0; i < p; i++ {
					for j := i; j < p; j++ {
						sym.SetSym(i, j, a[i*p+j])
					}
				}
				ch.Factorize(sym)
				_ = ch.SolveVecTo(xv, rv)
			}
		})
	}
}

func itoa(p int) string {
	if p < 10 {
		return string(rune('0' + p))
	}
	return "10"
}
