package regress

import (
	"math"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/stream"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

// rowLogLik is one row's log-likelihood of the whole chain at θ, written
// out from the densities (normal with sd, Bernoulli, Poisson without
// log y!); the test's own, independent of the fitter.
func rowLogLik(m *Model, row, theta []float64) float64 {
	var ll float64
	for _, q := range m.eqs {
		p := q.p()
		eta := theta[q.off]
		for j, c := range q.cols {
			eta += theta[q.off+j+1] * row[c]
		}
		y := row[q.out]
		switch q.fit {
		case Logistic:
			pr := 1 / (1 + math.Exp(-eta))
			ll += y*math.Log(pr) + (1-y)*math.Log(1-pr)
		case Poisson:
			ll += y*eta - math.Exp(eta)
		case Linear:
			sd := theta[q.off+p]
			r := y - eta
			ll += -math.Log(sd) - r*r/(2*sd*sd)
		}
	}
	return ll
}

// The robust plug-in against the sandwich A⁻¹BA⁻¹ (Huber 1967; White
// 1980) built independently: A the negative Hessian of the chain's total
// log-likelihood and B the sum of the outer products of each row's score,
// both by gonum's diff/fd at the fitted θ̂, on fixed samples. The chain's
// cross-equation blocks are checked too.
func TestRobustAgainstFiniteDifferences(t *testing.T) {
	for name, d := range map[string]*Design{"chain": chain(), "poisson derived": poissonNormal(), "logistic levels": logistic3(),
		"linear fit of logistic data": refit(logistic3(), Linear), "linear fit of poisson data": refit(poissonNormal(), Linear),
		"poisson fit of logistic data": refit(logisticNormal(), Poisson)} {
		m := mustNew(t, d)
		m.Robust = true
		const n = 150
		s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
		m.Draw(stream.New(11, 12), n, s)
		f := m.NewFitter(n)
		dim := m.Dim()
		theta, cov := make([]float64, dim), make([]float64, dim*dim)
		if !f.Fit(s, theta, cov) {
			t.Fatalf("%s: the fit failed", name)
		}
		total := func(th []float64) float64 {
			var ll float64
			for i := 0; i < n; i++ {
				ll += rowLogLik(m, s.Data[i*m.stride:(i+1)*m.stride], th)
			}
			return -ll
		}
		var h mat.SymDense
		fd.Hessian(&h, total, theta, &fd.Settings{Formula: fd.Central, Step: 1e-4})
		var ainv mat.Dense
		if err := ainv.Inverse(&h); err != nil {
			t.Fatal(err)
		}
		b := mat.NewDense(dim, dim, nil)
		g := make([]float64, dim)
		for i := 0; i < n; i++ {
			row := s.Data[i*m.stride : (i+1)*m.stride]
			fd.Gradient(g, func(th []float64) float64 { return rowLogLik(m, row, th) }, theta, &fd.Settings{Formula: fd.Central})
			gv := mat.NewVecDense(dim, g)
			var outer mat.Dense
			outer.Outer(1, gv, gv)
			b.Add(b, &outer)
		}
		var want mat.Dense
		want.Product(&ainv, b, &ainv)
		want.Scale(n, &want)
		for a := 0; a < dim; a++ {
			for c := 0; c < dim; c++ {
				scale := math.Sqrt(want.At(a, a) * want.At(c, c))
				if math.Abs(cov[a*dim+c]-want.At(a, c)) > 1e-4*scale {
					t.Errorf("%s: robust cov[%d,%d] = %.8g, n·A⁻¹BA⁻¹ by gonum diff/fd = %.8g", name, a, c, cov[a*dim+c], want.At(a, c))
				}
			}
		}
	}
}

// A linear model's robust covariance of β̂ is White's (1980) HC0,
// (XᵀX)⁻¹ XᵀΩX (XᵀX)⁻¹ with Ω = diag(r_i²), here by gonum/mat.
func TestRobustLinearHC0(t *testing.T) {
	d := &Design{
		Covariates: []Covariate{{Name: "x", Dist: Uniform, Min: 0, Max: 4}, {Name: "g", Dist: Bernoulli, P: 0.4}},
		Equations:  []Equation{{Outcome: "y", Kind: Linear, Intercept: 1, Terms: []Term{{"x", 0.5}, {"g", -1}}, SD: 2}},
	}
	m := mustNew(t, d)
	m.Robust = true
	const n = 60
	s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
	m.Draw(stream.New(3, 4), n, s)
	theta, cov := make([]float64, 4), make([]float64, 16)
	if !m.NewFitter(n).Fit(s, theta, cov) {
		t.Fatal("the fit failed")
	}
	x := mat.NewDense(n, 3, nil)
	omega := mat.NewDiagDense(n, nil)
	for i := 0; i < n; i++ {
		row := s.Data[i*m.stride : (i+1)*m.stride]
		x.Set(i, 0, 1)
		x.Set(i, 1, row[0])
		x.Set(i, 2, row[1])
		r := row[2] - theta[0] - theta[1]*row[0] - theta[2]*row[1]
		omega.SetDiag(i, r*r)
	}
	var xtx, xtxInv, meat, tmp, want mat.Dense
	xtx.Mul(x.T(), x)
	if err := xtxInv.Inverse(&xtx); err != nil {
		t.Fatal(err)
	}
	tmp.Mul(x.T(), omega)
	meat.Mul(&tmp, x)
	want.Product(&xtxInv, &meat, &xtxInv)
	for a := 0; a < 3; a++ {
		for c := 0; c < 3; c++ {
			w := want.At(a, c) * n
			if math.Abs(cov[a*4+c]-w) > 1e-10*math.Sqrt(want.At(a, a)*want.At(c, c))*n {
				t.Errorf("robust cov[%d,%d] = %.12g, HC0 (White 1980) by gonum/mat = %.12g", a, c, cov[a*4+c], w)
			}
		}
	}
}

// With EnableOther a fitter writes the other plug-in covariance beside
// its own: the sandwich beside the model-based one and the reverse, the
// same numbers the other setting's Fit writes.
func TestOtherVariance(t *testing.T) {
	const n = 120
	for _, robust := range []bool{false, true} {
		m := mustNew(t, chain())
		s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
		m.Draw(stream.New(21, 22), n, s)
		dim := m.Dim()
		m.Robust = robust
		f := m.NewFitter(n)
		ov := f.(family.OtherVariance)
		ov.EnableOther()
		theta, cov, other := make([]float64, dim), make([]float64, dim*dim), make([]float64, dim*dim)
		if !f.Fit(s, theta, cov) || !ov.OtherCov(other) {
			t.Fatal("the fit failed")
		}
		m.Robust = !robust
		want := make([]float64, dim*dim)
		if !m.NewFitter(n).Fit(s, theta, want) {
			t.Fatal("the fit failed")
		}
		for i := range want {
			if math.Abs(other[i]-want[i]) > 1e-12*math.Abs(want[i])+1e-15 {
				t.Errorf("robust=%v: other cov[%d] = %.15g, the other setting's Fit %.15g", robust, i, other[i], want[i])
			}
		}
		allocs := testing.AllocsPerRun(50, func() { f.Fit(s, theta, cov); ov.OtherCov(other) })
		if allocs != 0 {
			t.Errorf("robust=%v: %v allocations per Fit with the other variance", robust, allocs)
		}
	}
}
