package regress

import (
	"math"
	"strings"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/stream"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
	"gonum.org/v1/gonum/stat/distuv"
)

// refit makes the design's one equation fitted by kind fit.
func refit(d *Design, fit Kind) *Design {
	d.Equations[0].Refit, d.Equations[0].Fit = true, fit
	return d
}

// poissonLevels is a count design on levels and a bernoulli covariate.
func poissonLevels() *Design {
	return &Design{
		Covariates: []Covariate{
			{Name: "exposure", Dist: Levels, Values: []float64{0, 1, 2, 3}},
			{Name: "urban", Dist: Bernoulli, P: 0.4},
		},
		Equations: []Equation{{Outcome: "y", Kind: Poisson, Intercept: 0.2, Terms: []Term{{"exposure", 0.35}, {"urban", -0.4}}}},
	}
}

// riskLevels is a binary outcome whose risk stays far from 1, where a
// log-linear fit is the usual way to a risk ratio.
func riskLevels() *Design {
	return &Design{
		Covariates: []Covariate{
			{Name: "dose", Dist: Levels, Values: []float64{0, 1, 2, 4}},
			{Name: "female", Dist: Bernoulli, P: 0.5},
		},
		Equations: []Equation{{Outcome: "y", Kind: Logistic, Intercept: -2, Terms: []Term{{"dose", 0.4}, {"female", 0.3}}}},
	}
}

// point is one covariate pattern of a levels-and-bernoulli design with
// its probability, enumerated here independently of the walk.
type point struct {
	z  []float64
	wt float64
}

// patternsOf enumerates the design vectors of a design whose covariates
// are levels and bernoulli only, each with its probability (the levels
// balanced, the bernoulli independent).
func patternsOf(d *Design) []point {
	pts := []point{{z: []float64{}, wt: 1}}
	for _, c := range d.Covariates {
		var next []point
		for _, pt := range pts {
			switch c.Dist {
			case Levels:
				for _, v := range c.Values {
					next = append(next, point{append(append([]float64{}, pt.z...), v), pt.wt / float64(len(c.Values))})
				}
			case Bernoulli:
				next = append(next, point{append(append([]float64{}, pt.z...), 0), pt.wt * (1 - c.P)})
				next = append(next, point{append(append([]float64{}, pt.z...), 1), pt.wt * c.P})
			default:
				panic("patternsOf: levels and bernoulli only")
			}
		}
		pts = next
	}
	// Design vector 1, then the terms (in covariate order, as declared).
	e := d.Equations[0]
	for i := range pts {
		z := []float64{1}
		for _, t := range e.Terms {
			for c, cv := range d.Covariates {
				if cv.Name == t.Name {
					z = append(z, pts[i].z[c])
				}
			}
		}
		pts[i].z = z
	}
	return pts
}

// outcomes lists y's values given the pattern with their probabilities:
// both binary values, or Poisson counts until the tail is below 1e-17,
// from gonum's pmfs.
func outcomes(e Equation, z []float64) (ys, ps []float64) {
	eta := e.Intercept
	for j, t := range e.Terms {
		eta += t.Value * z[j+1]
	}
	if e.Kind == Logistic {
		pr := 1 / (1 + math.Exp(-eta))
		return []float64{0, 1}, []float64{1 - pr, pr}
	}
	pois := distuv.Poisson{Lambda: math.Exp(eta)}
	for k := 0.0; ; k++ {
		ys, ps = append(ys, k), append(ps, pois.Prob(k))
		if k > pois.Lambda && pois.Survival(k) < 1e-17 {
			return ys, ps
		}
	}
}

// logF is the fitted family's log-density of y at θ (β, and σ for a
// linear fit), up to terms free of θ.
func logF(fit Kind, z []float64, y float64, theta []float64) float64 {
	p := len(z)
	eta := 0.0
	for j := range z {
		eta += theta[j] * z[j]
	}
	switch fit {
	case Linear:
		sd := theta[p]
		r := y - eta
		return -math.Log(sd) - r*r/(2*sd*sd)
	case Poisson:
		return y*eta - math.Exp(eta)
	}
	panic("logF")
}

// expectedLogF is E log f_θ(y | x) under the data law, by exact sums
// over the patterns and the outcomes.
func expectedLogF(d *Design, fit Kind, theta []float64) float64 {
	var s float64
	for _, pt := range patternsOf(d) {
		ys, ps := outcomes(d.Equations[0], pt.z)
		for i, y := range ys {
			s += pt.wt * ps[i] * logF(fit, pt.z, y, theta)
		}
	}
	return s
}

// θ* of each misfit against gonum's optimize (BFGS, gradient by gonum
// diff/fd) maximising E log f_θ over exact sums on a levels design
// (White 1982: θ* minimises the Kullback–Leibler divergence); and the
// sandwich A⁻¹BA⁻¹ at θ* against A the gonum diff/fd Hessian of
// −E log f and B = E[s sᵀ] with each score by gonum diff/fd, the same
// exact sums.
func TestPseudoTrueAndSandwich(t *testing.T) {
	cases := []struct {
		name string
		d    func() *Design
		fit  Kind
	}{
		{"linear fit of logistic data", logistic3, Linear},
		{"linear fit of poisson data", poissonLevels, Linear},
		{"poisson fit of logistic data", riskLevels, Poisson},
		{"poisson fit of logistic data, risk near 1 at the top", logistic3, Poisson},
	}
	for _, c := range cases {
		d := refit(c.d(), c.fit)
		m := mustNew(t, d)
		dim := m.Dim()
		p := m.eqs[0].p()
		if m.Nodes != 0 {
			t.Fatalf("%s: a levels design needs no quadrature, got %d nodes", c.name, m.Nodes)
		}
		// Optimise over log σ for a linear fit, so the search is free.
		toTheta := func(x []float64) []float64 {
			th := append([]float64(nil), x...)
			if c.fit == Linear {
				th[p] = math.Exp(x[p])
			}
			return th
		}
		obj := func(x []float64) float64 { return -expectedLogF(d, c.fit, toTheta(x)) }
		start := make([]float64, dim)
		prob := optimize.Problem{Func: obj, Grad: func(g, x []float64) { fd.Gradient(g, obj, x, &fd.Settings{Formula: fd.Central}) }}
		res, err := optimize.Minimize(prob, start, &optimize.Settings{GradientThreshold: 1e-10}, &optimize.BFGS{})
		if res == nil {
			t.Fatalf("%s: gonum optimize: %v", c.name, err)
		}
		want := toTheta(res.X)
		for j := range want {
			if math.Abs(m.truth[j]-want[j]) > 1e-6*math.Max(1, math.Abs(want[j])) {
				t.Errorf("%s: θ*[%d] = %.10g, gonum optimize on E log f (exact sums) %.10g", c.name, j, m.truth[j], want[j])
			}
		}
		theta := m.truth
		var h mat.SymDense
		fd.Hessian(&h, func(th []float64) float64 { return -expectedLogF(d, c.fit, th) }, theta, &fd.Settings{Formula: fd.Central, Step: 1e-4})
		var ainv mat.Dense
		if err := ainv.Inverse(&h); err != nil {
			t.Fatal(err)
		}
		b := mat.NewDense(dim, dim, nil)
		g := make([]float64, dim)
		for _, pt := range patternsOf(d) {
			ys, ps := outcomes(d.Equations[0], pt.z)
			for i, y := range ys {
				fd.Gradient(g, func(th []float64) float64 { return logF(c.fit, pt.z, y, th) }, theta, &fd.Settings{Formula: fd.Central, Step: 1e-4})
				for a := 0; a < dim; a++ {
					for e := 0; e < dim; e++ {
						b.Set(a, e, b.At(a, e)+pt.wt*ps[i]*g[a]*g[e])
					}
				}
			}
		}
		var sw mat.Dense
		sw.Product(&ainv, b, &ainv)
		cov := make([]float64, dim*dim)
		m.Cov(theta, cov)
		for a := 0; a < dim; a++ {
			for e := 0; e < dim; e++ {
				scale := math.Sqrt(sw.At(a, a) * sw.At(e, e))
				if math.Abs(cov[a*dim+e]-sw.At(a, e)) > 1e-5*scale {
					t.Errorf("%s: sandwich[%d,%d] = %.10g, A⁻¹BA⁻¹ by gonum diff/fd on exact sums %.10g", c.name, a, e, cov[a*dim+e], sw.At(a, e))
				}
			}
		}
		bias := make([]float64, dim)
		m.Bias(theta, bias)
		for j, v := range bias {
			if !math.IsNaN(v) {
				t.Errorf("%s: bias[%d] = %v; the O(1/n) bias of a misfit is not derived and must be NaN", c.name, j, v)
			}
		}
	}
}

// With a normal covariate θ* and the sandwich come from the product rule;
// here against the same quantities by gonum's Gauss–Legendre rule on
// [−12, 12] standard deviations with 400 nodes in one dimension (common
// practice: the integrand is smooth and the tails beyond are below
// 1e-30), to 1e-9 relative.
func TestPseudoTrueNormalCovariate(t *testing.T) {
	for _, fit := range []Kind{Linear, Poisson} {
		d := refit(&Design{
			Covariates: []Covariate{{Name: "x", Dist: Normal, Mean: 0.3, SD: 1.2}},
			Equations:  []Equation{{Outcome: "y", Kind: Logistic, Intercept: -1.5, Terms: []Term{{"x", 0.7}}}},
		}, fit)
		m := mustNew(t, d)
		if m.Nodes == 0 {
			t.Fatal("a normal covariate needs quadrature")
		}
		xs, ws := make([]float64, 400), make([]float64, 400)
		legendre(xs, ws, -12, 12)
		norm := distuv.Normal{Mu: 0, Sigma: 1}
		expect := func(f func(x, mu float64) []float64) []float64 {
			var out []float64
			for i, u := range xs {
				x := 0.3 + 1.2*u
				mu := 1 / (1 + math.Exp(-(-1.5 + 0.7*x)))
				v := f(x, mu)
				if out == nil {
					out = make([]float64, len(v))
				}
				for j := range v {
					out[j] += ws[i] * norm.Prob(u) * v[j]
				}
			}
			return out
		}
		var want []float64
		if fit == Linear {
			// β* = E[zzᵀ]⁻¹E[zμ], σ*² = E[μ(1−μ) + (μ − zᵀβ*)²] (derived).
			mom := expect(func(x, mu float64) []float64 { return []float64{1, x, x * x, mu, x * mu} })
			det := mom[0]*mom[2] - mom[1]*mom[1]
			b0 := (mom[2]*mom[3] - mom[1]*mom[4]) / det
			b1 := (mom[0]*mom[4] - mom[1]*mom[3]) / det
			s2 := expect(func(x, mu float64) []float64 { r := mu - b0 - b1*x; return []float64{mu*(1-mu) + r*r} })[0]
			want = []float64{b0, b1, math.Sqrt(s2)}
		} else {
			// Newton on E[z(μ − exp(zᵀβ))] = 0, here by the test's own loop.
			b := []float64{math.Log(expect(func(x, mu float64) []float64 { return []float64{mu} })[0]), 0}
			for it := 0; it < 100; it++ {
				e := expect(func(x, mu float64) []float64 {
					l := math.Exp(b[0] + b[1]*x)
					return []float64{mu - l, x * (mu - l), l, x * l, x * x * l}
				})
				det := e[2]*e[4] - e[3]*e[3]
				b[0] += (e[4]*e[0] - e[3]*e[1]) / det
				b[1] += (e[2]*e[1] - e[3]*e[0]) / det
			}
			want = b
		}
		for j, w := range want {
			if math.Abs(m.truth[j]-w) > 1e-9*math.Max(1, math.Abs(w)) {
				t.Errorf("fit %s: θ*[%d] = %.14g, by gonum's Gauss–Legendre on [−12, 12] sd %.14g", fit, j, m.truth[j], w)
			}
		}
	}
}

// legendre fills Gauss–Legendre nodes and weights on [a, b] by gonum's
// integrate/quad, independently of the walk.
func legendre(xs, ws []float64, a, b float64) {
	quad.Legendre{}.FixedLocations(xs, ws, a, b)
}

// Through Draw and Fit: n·Cov(θ̂) over replicates matches the sandwich
// at θ* within Monte Carlo standard errors (the variance's MCSE from the
// fourth sample moment, common practice), the mean robust plug-in
// matches it too, and the mean model-based plug-in of the Poisson fit of
// binary data does not (for binary y, Var(y | x) = μ(1 − μ) < μ, so the
// model-based variance is too large: a known property of log-linear
// risk-ratio fits).
func TestMisfitMonteCarlo(t *testing.T) {
	if testing.Short() {
		t.Skip("Monte Carlo")
	}
	cases := []struct {
		name     string
		d        *Design
		n        int
		modelOff bool // the model-based plug-in must miss the sandwich
	}{
		{"linear fit of logistic data", refit(logistic3(), Linear), 800, false},
		{"linear fit of poisson data", refit(poissonLevels(), Linear), 800, false},
		{"poisson fit of logistic data", refit(riskLevels(), Poisson), 800, true},
	}
	const reps = 4000
	for ci, c := range cases {
		m := mustNew(t, c.d)
		m.Robust = true
		dim := m.Dim()
		sigma := make([]float64, dim*dim)
		m.Cov(m.truth, sigma)
		s := &family.Sample{Data: make([]float64, m.SampleLen(c.n))}
		f := m.NewFitter(c.n)
		ov := f.(family.OtherVariance)
		ov.EnableOther()
		rng := stream.New(uint64(ci)+40, 41)
		theta, cov, other := make([]float64, dim), make([]float64, dim*dim), make([]float64, dim*dim)
		est := make([][]float64, dim)
		robust := make([][]float64, dim)
		model := make([][]float64, dim)
		for r := 0; r < reps; r++ {
			m.Draw(rng, c.n, s)
			if !f.Fit(s, theta, cov) {
				t.Fatalf("%s: a fit failed at n = %d", c.name, c.n)
			}
			ov.OtherCov(other)
			for j := 0; j < dim; j++ {
				est[j] = append(est[j], theta[j])
				robust[j] = append(robust[j], cov[j*dim+j])
				model[j] = append(model[j], other[j*dim+j])
			}
		}
		for j := 0; j < dim; j++ {
			v, vse := varianceWithMCSE(est[j])
			target := sigma[j*dim+j] / float64(c.n)
			if math.Abs(v-target) > 4*vse {
				t.Errorf("%s: Var(θ̂[%d]) = %.5g ± %.2g (MCSE), sandwich/n %.5g", c.name, j, v, vse, target)
			}
			rm, rse := meanWithMCSE(robust[j])
			// HC0 is biased down by O(p/n) relative; allow 2% beside 4 MCSE.
			if math.Abs(rm-sigma[j*dim+j]) > 4*rse+0.02*sigma[j*dim+j] {
				t.Errorf("%s: mean robust plug-in[%d] = %.5g ± %.2g, sandwich %.5g", c.name, j, rm, rse, sigma[j*dim+j])
			}
			if c.modelOff {
				mm, mse := meanWithMCSE(model[j])
				if math.Abs(mm-sigma[j*dim+j]) < 10*mse {
					t.Errorf("%s: mean model-based plug-in[%d] = %.5g ± %.2g is within 10 MCSE of the sandwich %.5g; the misfit should show", c.name, j, mm, mse, sigma[j*dim+j])
				}
			}
		}
	}
}

func meanWithMCSE(x []float64) (mean, se float64) {
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	var ss float64
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(ss / float64(len(x)-1) / float64(len(x)))
}

// varianceWithMCSE is the sample variance and its standard error
// sqrt((m4 − s⁴)/R) (common practice, from the delta method).
func varianceWithMCSE(x []float64) (v, se float64) {
	mean, _ := meanWithMCSE(x)
	var m2, m4 float64
	for _, e := range x {
		d := e - mean
		m2 += d * d
		m4 += d * d * d * d
	}
	r := float64(len(x))
	m2 /= r
	m4 /= r
	return m2 * r / (r - 1), math.Sqrt((m4 - m2*m2) / r)
}

// A misfit replicate allocates nothing, with either variance and the
// other beside it.
func TestMisfitReplicateAllocatesNothing(t *testing.T) {
	for name, d := range map[string]func() *Design{
		"linear fit of logistic data": func() *Design { return refit(logistic3(), Linear) },
		"linear fit of poisson data":  func() *Design { return refit(poissonNormal(), Linear) },
		"poisson fit of logistic":     func() *Design { return refit(logisticNormal(), Poisson) },
		"poisson fit, grouped":        func() *Design { return refit(riskLevels(), Poisson) },
	} {
		for _, robust := range []bool{false, true} {
			m := mustNew(t, d())
			m.Robust = robust
			const n = 100
			s := &family.Sample{Data: make([]float64, m.SampleLen(n))}
			f := m.NewFitter(n)
			f.(family.OtherVariance).EnableOther()
			rng := stream.New(5, 6)
			theta := make([]float64, m.Dim())
			cov := make([]float64, m.Dim()*m.Dim())
			allocs := testing.AllocsPerRun(200, func() {
				m.Draw(rng, n, s)
				f.Fit(s, theta, cov)
			})
			if allocs != 0 {
				t.Errorf("%s robust=%v: %v allocations per replicate", name, robust, allocs)
			}
		}
	}
}

// BenchmarkMisfitReplicate is one replicate's draw and fit of a misfit
// at n = 100 on the levels-and-bernoulli design, model-based and robust.
func BenchmarkMisfitReplicate(b *testing.B) {
	for _, robust := range []bool{false, true} {
		v := "model"
		if robust {
			v = "robust"
		}
		b.Run("linear_fit_of_logistic_n100_"+v, func(b *testing.B) { benchFit(b, refit(logistic3(), Linear), 100, robust) })
		b.Run("poisson_fit_of_logistic_n100_"+v, func(b *testing.B) { benchFit(b, refit(riskLevels(), Poisson), 100, robust) })
	}
}

// New refuses a pair of families FitsData does not list, and a misfit in
// a chain, rather than computing a θ* it has no formula for.
func TestMisfitRefused(t *testing.T) {
	lin := &Design{
		Covariates: []Covariate{{Name: "x", Dist: Levels, Values: []float64{0, 1}}},
		Equations:  []Equation{{Outcome: "y", Kind: Linear, Intercept: 1, Terms: []Term{{"x", 0.5}}, SD: 1}},
	}
	if _, err := New(refit(lin, Poisson)); err == nil || !strings.Contains(err.Error(), "not offered") {
		t.Errorf("a Poisson fit of linear data: error %v", err)
	}
	c := chain()
	c.Equations[1].Refit, c.Equations[1].Fit = true, Linear
	if _, err := New(c); err == nil || !strings.Contains(err.Error(), "one equation only") {
		t.Errorf("a misfit in a chain: error %v", err)
	}
}
