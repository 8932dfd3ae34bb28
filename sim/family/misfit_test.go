package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
	"gonum.org/v1/gonum/stat/distuv"
)

// Checks of the fits of one family to another family's data, and of the
// new families, against sources outside the code under test: exact pmf
// sums, gonum's densities integrated by quadrature, gonum's optimize for
// maximisers and gonum diff/fd for derivatives.

// nbLogPMF is log f(y) of the negative binomial with mean m and
// dispersion k, from its definition Γ(y+r)/(Γ(r)·y!)·pʳ(1−p)ʸ,
// r = 1/k, p = r/(r+m) (math.Lgamma; gonum has no negative binomial).
func nbLogPMF(y, m, k float64) float64 {
	r := 1 / k
	a, _ := math.Lgamma(y + r)
	b, _ := math.Lgamma(r)
	c, _ := math.Lgamma(y + 1)
	return a - b - c + r*math.Log(r/(r+m)) + y*math.Log(m/(r+m))
}

// nbNodes sums over the negative binomial's support until the omitted
// tail is negligible (the pmf there is below 1e-30 and falling).
func nbNodes(m, k float64) []node {
	var out []node
	for y := 0; ; y++ {
		p := math.Exp(nbLogPMF(float64(y), m, k))
		out = append(out, node{[]float64{float64(y)}, p})
		if float64(y) > m*(1+k*m)*5+50 && p < 1e-30 {
			return out
		}
	}
}

// zipNodes: P(0) = π + (1−π)e^{−μ}, P(y) = (1−π)·Pois(y; μ) (the
// definition), Poisson pmf from gonum distuv.
func zipNodes(mu, zero float64) []node {
	pois := distuv.Poisson{Lambda: mu}
	hi := int(mu + 40*math.Sqrt(mu) + 40)
	var out []node
	for y := 0; y <= hi; y++ {
		p := (1 - zero) * pois.Prob(float64(y))
		if y == 0 {
			p += zero
		}
		out = append(out, node{[]float64{float64(y)}, p})
	}
	return out
}

// weibullNodes integrates over log y with gonum's Weibull density; with
// z = (y/λ)^k ~ Exp(1) the range z ∈ [e^{−60}, 80] leaves out mass below
// 1e-26.
func weibullNodes(shape, scale float64) []node {
	lo := math.Log(scale) - 60/shape
	hi := math.Log(scale) + math.Log(80)/shape
	return logTrapezoidNodes(6000, lo, hi, distuv.Weibull{K: shape, Lambda: scale}.Prob)
}

// studentNodes integrates over y = loc + scale·tan t, t ∈ (−π/2, π/2), by
// gonum's Gauss–Legendre rule, weights from gonum's Student t density;
// for df = 5 and 8 the integrands of the moments up to the fourth stay
// bounded and smooth in t at the ends.
func studentNodes(loc, scale, df float64) []node {
	const k = 3000
	x, w := make([]float64, k), make([]float64, k)
	quad.Legendre{}.FixedLocations(x, w, -math.Pi/2, math.Pi/2)
	d := distuv.StudentsT{Mu: loc, Sigma: scale, Nu: df}
	out := make([]node, k)
	for i := range x {
		c := math.Cos(x[i])
		y := loc + scale*math.Tan(x[i])
		out[i] = node{[]float64{y}, w[i] * d.Prob(y) * scale / (c * c)}
	}
	return out
}

// nodeMoments returns the mean and central moments 2–4 over nodes.
func nodeMoments(nodes []node) lawMoments {
	var m, wsum float64
	for _, nd := range nodes {
		m += nd.w * nd.y[0]
		wsum += nd.w
	}
	m /= wsum
	var mo lawMoments
	mo.mean = m
	for _, nd := range nodes {
		e := nd.y[0] - m
		mo.m2 += nd.w * e * e
		mo.m3 += nd.w * e * e * e
		mo.m4 += nd.w * e * e * e * e
	}
	mo.m2 /= wsum
	mo.m3 /= wsum
	mo.m4 /= wsum
	return mo
}

type lawCase struct {
	family string
	values map[string]float64
	nodes  []node
	source string
}

func lawCases() []lawCase {
	return []lawCase{
		{"negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}, nbNodes(4, 0.5), "pmf sum (definition, math.Lgamma)"},
		{"negative_binomial", map[string]float64{"mean": 0.7, "dispersion": 3}, nbNodes(0.7, 3), "pmf sum (definition, math.Lgamma)"},
		{"negative_binomial", map[string]float64{"mean": 60, "dispersion": 0.05}, nbNodes(60, 0.05), "pmf sum (definition, math.Lgamma)"},
		{"zero_inflated_poisson", map[string]float64{"mean": 3, "zero_share": 0.3}, zipNodes(3, 0.3), "pmf sum, gonum distuv.Poisson"},
		{"zero_inflated_poisson", map[string]float64{"mean": 0.4, "zero_share": 0}, zipNodes(0.4, 0), "pmf sum, gonum distuv.Poisson"},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, weibullNodes(1.5, 2), "quadrature of gonum distuv.Weibull"},
		{"weibull", map[string]float64{"shape": 0.7, "scale": 10}, weibullNodes(0.7, 10), "quadrature of gonum distuv.Weibull"},
		{"weibull", map[string]float64{"shape": 6, "scale": 0.3}, weibullNodes(6, 0.3), "quadrature of gonum distuv.Weibull"},
		{"student_t", map[string]float64{"location": 1, "scale": 2, "df": 5}, studentNodes(1, 2, 5), "quadrature of gonum distuv.StudentsT"},
		{"student_t", map[string]float64{"location": -3, "scale": 0.5, "df": 8}, studentNodes(-3, 0.5, 8), "quadrature of gonum distuv.StudentsT"},
		{"poisson", map[string]float64{"mean": 4}, supportNodes(0, 120, distuv.Poisson{Lambda: 4}.Prob), "pmf sum, gonum distuv.Poisson"},
		{"binomial", map[string]float64{"size": 12, "p": 0.3}, supportNodes(0, 12, distuv.Binomial{N: 12, P: 0.3}.Prob), "pmf sum, gonum distuv.Binomial"},
		{"bernoulli", map[string]float64{"p": 0.2}, supportNodes(0, 1, distuv.Bernoulli{P: 0.2}.Prob), "pmf sum, gonum distuv.Bernoulli"},
		{"exponential", map[string]float64{"rate": 0.4}, gammaNodes(1, 0.4, distuv.Exponential{Rate: 0.4}.Prob), "quadrature of gonum distuv.Exponential"},
		{"gamma", map[string]float64{"shape": 2.5, "rate": 3}, gammaNodes(2.5, 3, distuv.Gamma{Alpha: 2.5, Beta: 3}.Prob), "quadrature of gonum distuv.Gamma"},
		{"lognormal", map[string]float64{"meanlog": 0.5, "sdlog": 0.3}, hermiteNodes(80, func(z float64) float64 { return math.Exp(0.5 + 0.3*z) }), "Gauss–Hermite, gonum integrate/quad"},
		{"normal", map[string]float64{"mean": -2, "sd": 3}, hermiteNodes(20, func(z float64) float64 { return -2 + 3*z }), "Gauss–Hermite, gonum integrate/quad"},
	}
}

// TestLawMoments holds every data law's closed-form moments against sums
// over its exact pmf or quadrature of gonum's density, to 1e-9 relative
// (in units of the standard deviation's powers).
func TestLawMoments(t *testing.T) {
	for _, c := range lawCases() {
		f, _ := Lookup(c.family)
		l, err := f.law(c.values)
		if err != nil {
			t.Fatal(err)
		}
		got, want := l.moments(), nodeMoments(c.nodes)
		sd := math.Sqrt(want.m2)
		name := fmt.Sprintf("%s %v", c.family, c.values)
		for _, x := range []struct {
			what      string
			got, want float64
			unit      float64
		}{
			{"mean", got.mean, want.mean, sd},
			{"μ2", got.m2, want.m2, sd * sd},
			{"μ3", got.m3, want.m3, sd * sd * sd},
			{"μ4", got.m4, want.m4, sd * sd * sd * sd},
		} {
			if math.Abs(x.got-x.want) > 1e-9*x.unit {
				t.Errorf("%s: %s = %.14g, %s gives %.14g", name, x.what, x.got, c.source, x.want)
			}
		}
	}
}

// fitDensity is the log-density of a fitted family from gonum.
var fitDensity = map[string]func(theta []float64, y float64) float64{
	"poisson":     func(th []float64, y float64) float64 { return distuv.Poisson{Lambda: th[0]}.LogProb(y) },
	"exponential": func(th []float64, y float64) float64 { return distuv.Exponential{Rate: th[0]}.LogProb(y) },
	"normal":      func(th []float64, y float64) float64 { return distuv.Normal{Mu: th[0], Sigma: th[1]}.LogProb(y) },
	"weibull": func(th []float64, y float64) float64 {
		return distuv.Weibull{K: th[0], Lambda: th[1]}.LogProb(y)
	},
	"negative_binomial": func(th []float64, y float64) float64 { return nbLogPMF(y, th[0], th[1]) },
	"lognormal":         func(th []float64, y float64) float64 { return distuv.LogNormal{Mu: th[0], Sigma: th[1]}.LogProb(y) },
}

// TestLawLogMoments holds the closed-form moments of log y against the
// same sums and quadratures as TestLawMoments, applied to log y.
func TestLawLogMoments(t *testing.T) {
	for _, c := range lawCases() {
		f, _ := Lookup(c.family)
		l, _ := f.law(c.values)
		ll, ok := l.(logLaw)
		if !ok {
			continue
		}
		logNodes := make([]node, len(c.nodes))
		for i, nd := range c.nodes {
			logNodes[i] = node{[]float64{math.Log(nd.y[0])}, nd.w}
		}
		got, want := ll.logMoments(), nodeMoments(logNodes)
		sd := math.Sqrt(want.m2)
		for _, x := range [][3]float64{{got.mean, want.mean, sd}, {got.m2, want.m2, sd * sd}, {got.m3, want.m3, sd * sd * sd}, {got.m4, want.m4, sd * sd * sd * sd}} {
			if math.Abs(x[0]-x[1]) > 1e-9*x[2] {
				t.Errorf("%s %v: log-scale moment %.14g, %s gives %.14g", c.family, c.values, x[0], c.source, x[1])
			}
		}
	}
}

// expectedLogLik is E log f_θ(Y) over nodes.
func expectedLogLik(fit string, nodes []node, theta []float64) float64 {
	var s float64
	for _, nd := range nodes {
		if nd.w == 0 {
			continue
		}
		s += nd.w * fitDensity[fit](theta, nd.y[0])
	}
	return s
}

// maximise finds the maximiser of f from x0 with gonum's Nelder–Mead
// simplex (no derivatives, so nothing of the code under test or of
// diff/fd enters), each parameter on its own scale, restarted from its
// own answer until the function stops improving.
func maximise(t *testing.T, f func([]float64) float64, x0 []float64) []float64 {
	t.Helper()
	x := append([]float64(nil), x0...)
	for range 4 {
		sc := paramScale(x)
		u2x := func(u []float64) []float64 {
			out := make([]float64, len(u))
			for i := range u {
				out[i] = x[i] + sc[i]*u[i]
			}
			return out
		}
		p := optimize.Problem{Func: func(u []float64) float64 { return -f(u2x(u)) }}
		settings := &optimize.Settings{Converger: &optimize.FunctionConverge{Absolute: 1e-15, Relative: 1e-15, Iterations: 50}}
		res, err := optimize.Minimize(p, make([]float64, len(x)), settings, &optimize.NelderMead{SimplexSize: 0.05})
		if err != nil && res == nil {
			t.Fatalf("optimize: %v", err)
		}
		x = u2x(res.X)
	}
	return x
}

// scaledHessGrad returns the Hessian and gradient of f at theta by gonum
// diff/fd central differences in uᵢ = (θᵢ − thetaᵢ)/scᵢ, each parameter
// on its own scale (paramScale), converted back to θ.
func scaledHessGrad(f func([]float64) float64, theta []float64) (*mat.Dense, []float64) {
	p := len(theta)
	sc := paramScale(theta)
	th := make([]float64, p)
	fu := func(u []float64) float64 {
		for i := range th {
			th[i] = theta[i] + sc[i]*u[i]
		}
		return f(th)
	}
	origin := make([]float64, p)
	var h mat.SymDense
	fd.Hessian(&h, fu, origin, &fd.Settings{Formula: fd.Central, Step: 1e-4})
	g := fd.Gradient(nil, fu, origin, &fd.Settings{Formula: fd.Central, Step: 1e-6})
	out := mat.NewDense(p, p, nil)
	for i := range p {
		g[i] /= sc[i]
		for j := range p {
			out.Set(i, j, h.At(i, j)/(sc[i]*sc[j]))
		}
	}
	return out, g
}

// sandwichAt returns A⁻¹BA⁻¹ with A = −E ∂²log f and B = E[∂log f ∂log fᵀ]
// at theta under nodes, both by gonum diff/fd.
func sandwichAt(t *testing.T, fit string, nodes []node, theta []float64) *mat.Dense {
	t.Helper()
	p := len(theta)
	a, b := mat.NewDense(p, p, nil), mat.NewDense(p, p, nil)
	for _, nd := range nodes {
		if nd.w == 0 {
			continue
		}
		h, g := scaledHessGrad(func(th []float64) float64 { return fitDensity[fit](th, nd.y[0]) }, theta)
		for i := range p {
			for j := range p {
				a.Set(i, j, a.At(i, j)-nd.w*h.At(i, j))
				b.Set(i, j, b.At(i, j)+nd.w*g[i]*g[j])
			}
		}
	}
	var ai, tmp, out mat.Dense
	if err := ai.Inverse(a); err != nil {
		t.Fatal(err)
	}
	tmp.Mul(&ai, b)
	out.Mul(&tmp, &ai)
	return &out
}

// TestPseudoTrueAndSandwich finds θ*, the maximiser of E log f_θ(Y) over
// the data law (equivalently the minimiser of the Kullback–Leibler
// divergence, White 1982), with gonum's optimiser on exact sums or
// quadrature, and the sandwich A⁻¹BA⁻¹ there by gonum diff/fd, and
// compares both with the model's Truth and Asymptotics.Cov.
func TestPseudoTrueAndSandwich(t *testing.T) {
	for _, c := range lawCases() {
		data, _ := Lookup(c.family)
		for _, fitName := range []string{"poisson", "exponential", "normal", "lognormal", "weibull"} {
			fit, _ := Lookup(fitName)
			if !fit.accepts(data) {
				continue
			}
			m, err := Build(data, c.values, fit, RobustVariance)
			if err != nil {
				t.Fatal(err)
			}
			name := fmt.Sprintf("%s %v fitted as %s", c.family, c.values, fitName)
			start := make([]float64, len(m.Truth))
			for i, v := range m.Truth {
				start[i] = v * 1.1
			}
			star := maximise(t, func(th []float64) float64 { return expectedLogLik(fitName, c.nodes, th) }, start)
			for i := range star {
				if math.Abs(star[i]-m.Truth[i]) > 1e-5*math.Abs(m.Truth[i]) {
					t.Errorf("%s: θ*[%d] = %.10g, gonum optimize on E log f gives %.10g", name, i, m.Truth[i], star[i])
				}
			}
			p := len(m.Truth)
			cov := make([]float64, p*p)
			m.Asymptotics.Cov(m.Truth, cov)
			ref := sandwichAt(t, fitName, c.nodes, m.Truth)
			for i := range p {
				for j := range p {
					unit := math.Sqrt(ref.At(i, i) * ref.At(j, j))
					if math.Abs(cov[i*p+j]-ref.At(i, j)) > 1e-5*unit {
						t.Errorf("%s: sandwich[%d,%d] = %.10g, gonum diff/fd and quadrature give %.10g", name, i, j, cov[i*p+j], ref.At(i, j))
					}
				}
			}
		}
	}
}

// TestMisfitIssueFormulas: the closed forms stated for the three
// reference misfits (derived in misfit.go's comments and restated here).
func TestMisfitIssueFormulas(t *testing.T) {
	get := func(data string, v map[string]float64, fit string) (Model, []float64) {
		d, _ := Lookup(data)
		f, _ := Lookup(fit)
		m, err := Build(d, v, f, ModelVariance)
		if err != nil {
			t.Fatal(err)
		}
		cov := make([]float64, len(m.Truth)*len(m.Truth))
		m.Asymptotics.Cov(m.Truth, cov)
		return m, cov
	}
	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-13*math.Abs(want) {
			t.Errorf("%s = %.16g, want %.16g", what, got, want)
		}
	}
	// Poisson fit to NB(mean 4, dispersion 0.5): θ* = mean, Σ = mean +
	// dispersion·mean² = 12 (derived: Var ȳ = Var y/n).
	m, cov := get("negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}, "poisson")
	near("poisson fit to NB: μ*", m.Truth[0], 4)
	near("poisson fit to NB: n·delta_var", cov[0], 12)
	// Exponential fit to Weibull(1.5, 2): rate* = 1/(scale·Γ(1+1/shape)),
	// Σ = Var(y)·rate*⁴ with Var y = scale²(Γ(1+2/k) − Γ(1+1/k)²)
	// (derived from the score 1/λ − y).
	m, cov = get("weibull", map[string]float64{"shape": 1.5, "scale": 2}, "exponential")
	g1, g2 := math.Gamma(1+1/1.5), math.Gamma(1+2/1.5)
	rate := 1 / (2 * g1)
	near("exponential fit to Weibull: rate*", m.Truth[0], rate)
	near("exponential fit to Weibull: n·delta_var", cov[0], 4*(g2-g1*g1)*math.Pow(rate, 4))
	// Normal fit to t(df 5, scale 2): sd* = scale·√(df/(df−2)); n·Var σ̂ =
	// (μ4 − σ⁴)/(4σ²), four times the model's σ²/2 at df = 5 (derived:
	// μ4 = 3·scale⁴·df²/((df−2)(df−4)) = 25·scale⁴, σ² = 5·scale²/3).
	m, cov = get("student_t", map[string]float64{"location": 1, "scale": 2, "df": 5}, "normal")
	sd := 2 * math.Sqrt(5.0/3)
	near("normal fit to t: sd*", m.Truth[1], sd)
	near("normal fit to t: n·Var σ̂ / (σ²/2)", cov[3]/(sd*sd/2), 4)
}

// sampleLogLik is the mean log-likelihood of ys under the fit.
func sampleLogLik(fit string, ys []float64, theta []float64) float64 {
	var s float64
	for _, y := range ys {
		s += fitDensity[fit](theta, y)
	}
	return s / float64(len(ys))
}

// drawObservations draws n observations from the law of data at values
// with a fixed seed; drawing through the same law with the same seed
// repeats a sampler's draws, since each draws one observation after the
// other through law.one.
func drawObservations(t *testing.T, data string, values map[string]float64, seed uint64, n int) []float64 {
	f, _ := Lookup(data)
	l, err := f.law(values)
	if err != nil {
		t.Fatal(err)
	}
	rng := testRand(seed)
	ys := make([]float64, n)
	for i := range ys {
		ys[i] = l.one(rng)
	}
	return ys
}

// TestFitAgainstOptimizer fits fixed samples and compares θ̂ with gonum
// optimize's maximiser of the sample log-likelihood, the model-based
// plug-in with the inverse of gonum diff/fd's negative Hessian there
// (observed information), and the robust plug-in with A⁻¹BA⁻¹ from
// diff/fd's per-observation Hessians and gradients.
func TestFitAgainstOptimizer(t *testing.T) {
	cases := []struct {
		data   string
		values map[string]float64
		fit    string
		n      int
	}{
		{"negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}, "negative_binomial", 300},
		{"negative_binomial", map[string]float64{"mean": 0.8, "dispersion": 2}, "negative_binomial", 400},
		{"negative_binomial", map[string]float64{"mean": 90, "dispersion": 0.1}, "negative_binomial", 200},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, "weibull", 200},
		{"weibull", map[string]float64{"shape": 0.6, "scale": 30}, "weibull", 150},
		{"exponential", map[string]float64{"rate": 0.5}, "weibull", 150},
		{"negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}, "poisson", 100},
		{"zero_inflated_poisson", map[string]float64{"mean": 3, "zero_share": 0.25}, "poisson", 100},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, "exponential", 100},
		{"student_t", map[string]float64{"location": 1, "scale": 2, "df": 5}, "normal", 100},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, "lognormal", 100},
		{"gamma", map[string]float64{"shape": 2.5, "rate": 3}, "weibull", 200},
		{"lognormal", map[string]float64{"meanlog": 0.5, "sdlog": 0.3}, "weibull", 200},
	}
	for i, c := range cases {
		data, _ := Lookup(c.data)
		fit, _ := Lookup(c.fit)
		for _, v := range []Variance{ModelVariance, RobustVariance} {
			m, err := Build(data, c.values, fit, v)
			if err != nil {
				t.Fatal(err)
			}
			seed := 900 + uint64(i)
			ys := drawObservations(t, c.data, c.values, seed, c.n)
			tr := newTrial(m, c.n)
			p := len(m.Truth)
			theta := make([]float64, p)
			if !tr.fit(testRand(seed), c.n, theta) {
				t.Fatalf("%s fitted as %s: Fit reported false", c.data, c.fit)
			}
			name := fmt.Sprintf("%s %v fitted as %s, %s variance", c.data, c.values, c.fit, v)
			ref := maximise(t, func(th []float64) float64 { return sampleLogLik(c.fit, ys, th) }, m.Truth)
			for j := range p {
				if math.Abs(theta[j]-ref[j]) > 1e-5*math.Abs(ref[j]) {
					t.Errorf("%s: θ̂[%d] = %.10g, gonum optimize gives %.10g", name, j, theta[j], ref[j])
				}
			}
			nodes := make([]node, len(ys))
			for j, y := range ys {
				nodes[j] = node{[]float64{y}, 1 / float64(len(ys))}
			}
			var want *mat.Dense
			if v == RobustVariance {
				want = sandwichAt(t, c.fit, nodes, theta)
			} else {
				h, _ := scaledHessGrad(func(th []float64) float64 { return -sampleLogLik(c.fit, ys, th) }, theta)
				want = new(mat.Dense)
				if err := want.Inverse(h); err != nil {
					t.Fatal(err)
				}
			}
			for a := range p {
				for b := range p {
					unit := math.Sqrt(math.Abs(want.At(a, a) * want.At(b, b)))
					if math.Abs(tr.cov[a*p+b]-want.At(a, b)) > 1e-4*unit {
						t.Errorf("%s: plug-in cov[%d,%d] = %.10g, gonum diff/fd gives %.10g", name, a, b, tr.cov[a*p+b], want.At(a, b))
					}
				}
			}
		}
	}
}

// TestNewFamiliesFisher compares the negative binomial's and Weibull's
// Cov with the inverse expected information from gonum diff/fd Hessians
// of the log-density (the definition for the negative binomial, gonum's
// for the Weibull) summed over the pmf or integrated by quadrature.
func TestNewFamiliesFisher(t *testing.T) {
	cases := []fisherCase{}
	for _, v := range [][2]float64{{4, 0.5}, {0.7, 3}, {60, 0.05}} {
		m, k := v[0], v[1]
		cases = append(cases, fisherCase{"negative_binomial", map[string]float64{"mean": m, "dispersion": k},
			func(th, y []float64) float64 { return nbLogPMF(y[0], th[0], th[1]) }, nbNodes(m, k)})
	}
	for _, v := range [][2]float64{{1.5, 2}, {0.7, 10}, {6, 0.3}} {
		cases = append(cases, fisherCase{"weibull", map[string]float64{"shape": v[0], "scale": v[1]},
			func(th, y []float64) float64 { return distuv.Weibull{K: th[0], Lambda: th[1]}.LogProb(y[0]) },
			weibullNodes(v[0], v[1])})
	}
	for _, c := range cases {
		m := mustModel(t, c.family, c.values)
		p := len(m.Truth)
		ref := inverseInfo(t, c, expectedDerivs(c, m.Truth).info)
		cov := make([]float64, p*p)
		m.Asymptotics.Cov(m.Truth, cov)
		for i := range p {
			for j := range p {
				scale := math.Sqrt(ref.At(i, i) * ref.At(j, j))
				if d := math.Abs(cov[p*i+j] - ref.At(i, j)); d > 1e-6*scale {
					t.Errorf("%s %v: Cov[%d,%d] = %.10g, inverse Fisher information by diff/fd %.10g", c.family, c.values, i, j, cov[p*i+j], ref.At(i, j))
				}
			}
		}
	}
}

// TestSampleNewFamilies: goodness of fit of the new families' draws,
// against gonum's CDFs (Weibull, Student t) and exact pmfs (negative
// binomial from its definition, zero-inflated Poisson from gonum's
// Poisson), at the 0.1% level.
func TestSampleNewFamilies(t *testing.T) {
	draw := func(data string, v map[string]float64, seed uint64, n int) []float64 {
		return drawObservations(t, data, v, seed, n)
	}
	for i, v := range [][2]float64{{1.5, 2}, {0.3, 1}, {20, 5}} {
		xs := draw("weibull", map[string]float64{"shape": v[0], "scale": v[1]}, 1000+uint64(i), 20000)
		ksCheck(t, fmt.Sprintf("weibull%v", v), xs, distuv.Weibull{K: v[0], Lambda: v[1]}.CDF) // gonum distuv.Weibull CDF
	}
	for i, v := range [][3]float64{{1, 2, 5}, {-3, 0.5, 4.5}, {0, 1, 30}} {
		xs := draw("student_t", map[string]float64{"location": v[0], "scale": v[1], "df": v[2]}, 1100+uint64(i), 20000)
		ksCheck(t, fmt.Sprintf("student_t%v", v), xs, distuv.StudentsT{Mu: v[0], Sigma: v[1], Nu: v[2]}.CDF) // gonum distuv.StudentsT CDF
	}
	toInts := func(xs []float64) []int {
		out := make([]int, len(xs))
		for i, x := range xs {
			out[i] = int(x)
		}
		return out
	}
	for i, v := range [][2]float64{{4, 0.5}, {0.7, 3}, {60, 0.05}, {2, 1}} {
		m, k := v[0], v[1]
		pmf := func(y float64) float64 {
			if y < 0 {
				return 0
			}
			return math.Exp(nbLogPMF(y, m, k))
		}
		cdf := func(y float64) float64 {
			var s float64
			for j := 0.0; j <= y; j++ {
				s += pmf(j)
			}
			return s
		}
		xs := draw("negative_binomial", map[string]float64{"mean": m, "dispersion": k}, 1200+uint64(i), 100000)
		chiSquareCheck(t, fmt.Sprintf("negative_binomial%v", v), toInts(xs), pmf, cdf)
	}
	for i, v := range [][2]float64{{3, 0.3}, {0.5, 0.6}, {200, 0.1}} {
		mu, z := v[0], v[1]
		pois := distuv.Poisson{Lambda: mu}
		pmf := func(y float64) float64 {
			p := (1 - z) * pois.Prob(y)
			if y == 0 {
				p += z
			}
			return p
		}
		cdf := func(y float64) float64 {
			if y < 0 {
				return 0
			}
			return z + (1-z)*pois.CDF(y)
		}
		xs := draw("zero_inflated_poisson", map[string]float64{"mean": mu, "zero_share": z}, 1300+uint64(i), 100000)
		chiSquareCheck(t, fmt.Sprintf("zero_inflated_poisson%v", v), toInts(xs), pmf, cdf)
	}
}

// TestMisfitMonteCarlo runs the checks of TestFamilyCovMonteCarlo and
// TestFamilyBiasMonteCarlo (same tolerances in MCSE, half the replicates)
// on the new families' own
// fits and on fits of other families' data: n·Cov(θ̂) at n = 1000 against
// the sandwich at θ*, and the mean of θ̂ − θ* at n = 100 against b/n
// where b is derived (not NaN).
func TestMisfitMonteCarlo(t *testing.T) {
	cases := []struct {
		data   string
		values map[string]float64
		fit    string
	}{
		{"negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}, "negative_binomial"},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, "weibull"},
		{"exponential", map[string]float64{"rate": 0.5}, "weibull"},
		{"negative_binomial", map[string]float64{"mean": 4, "dispersion": 0.5}, "poisson"},
		{"zero_inflated_poisson", map[string]float64{"mean": 3, "zero_share": 0.25}, "poisson"},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, "exponential"},
		{"lognormal", map[string]float64{"meanlog": 0, "sdlog": 0.5}, "exponential"},
		{"student_t", map[string]float64{"location": 1, "scale": 2, "df": 9}, "normal"},
		{"gamma", map[string]float64{"shape": 2, "rate": 1}, "normal"},
		{"poisson", map[string]float64{"mean": 3}, "normal"},
		{"weibull", map[string]float64{"shape": 1.5, "scale": 2}, "lognormal"},
		{"exponential", map[string]float64{"rate": 2}, "lognormal"},
		{"gamma", map[string]float64{"shape": 2.5, "rate": 3}, "weibull"},
		{"lognormal", map[string]float64{"meanlog": 0.5, "sdlog": 0.3}, "weibull"},
	}
	for ci, c := range cases {
		t.Run(fmt.Sprintf("%s→%s", c.data, c.fit), func(t *testing.T) {
			t.Parallel()
			data, _ := Lookup(c.data)
			fit, _ := Lookup(c.fit)
			m, err := Build(data, c.values, fit, ModelVariance)
			if err != nil {
				t.Fatal(err)
			}
			p := len(m.Truth)
			cov := make([]float64, p*p)
			m.Asymptotics.Cov(m.Truth, cov)
			const n, r = 1000, 2000
			est := replicate(t, m, uint64(4000+ci), n, r)
			mean := make([]float64, p)
			for k := range r {
				for i := range p {
					mean[i] += est[k*p+i] / r
				}
			}
			for i := range p {
				for j := i; j < p; j++ {
					prods := make([]float64, r)
					for k := range r {
						prods[k] = n * (est[k*p+i] - mean[i]) * (est[k*p+j] - mean[j])
					}
					got, se := meanSE(prods)
					scale := math.Sqrt(cov[p*i+i] * cov[p*j+j])
					if tol := 4*se + 10*scale/n; math.Abs(got-cov[p*i+j]) > tol {
						t.Errorf("n·Cov(θ̂)[%d,%d] = %.5g ± %.2g (MCSE), sandwich at θ* = %.5g", i, j, got, se, cov[p*i+j])
					}
				}
			}
			bias := make([]float64, p)
			m.Asymptotics.Bias(m.Truth, bias)
			const nb, rb = 100, 20000
			est = replicate(t, m, uint64(5000+ci), nb, rb)
			d := make([]float64, rb)
			for i := range p {
				if math.IsNaN(bias[i]) {
					continue
				}
				for k := range rb {
					d[k] = est[k*p+i] - m.Truth[i]
				}
				got, se := meanSE(d)
				want := bias[i] / nb
				if tol := 4*se + 10*math.Abs(bias[i])/(nb*nb); math.Abs(got-want) > tol {
					t.Errorf("E θ̂ − θ*[%d] = %.5g ± %.2g (MCSE), b/n = %.5g", i, got, se, want)
				}
			}
		})
	}
}

// TestLawMellin holds the closed-form E[yˢ (log y)ʲ] of the laws a Weibull
// fit reads against the sums and quadratures of lawCases, to 1e-9
// relative (in units of E[yˢ] and its log-scale spread).
func TestLawMellin(t *testing.T) {
	for _, c := range lawCases() {
		f, _ := Lookup(c.family)
		l, _ := f.law(c.values)
		ml, ok := l.(mellinLaw)
		if !ok {
			continue
		}
		for _, s := range []float64{0, 0.7, 2.5, 6} {
			var w0, w1, w2 float64
			for _, nd := range c.nodes {
				y := nd.y[0]
				p := nd.w * math.Pow(y, s)
				w0 += p
				w1 += p * math.Log(y)
				w2 += p * math.Log(y) * math.Log(y)
			}
			g0, g1, g2 := ml.mellin(s)
			unit := w0 * (1 + math.Abs(w1/w0)) * (1 + math.Abs(w1/w0))
			for j, x := range [][2]float64{{g0, w0}, {g1, w1}, {g2, w2}} {
				if math.Abs(x[0]-x[1]) > 1e-9*unit {
					t.Errorf("%s %v: E[y^%g log^%d y] = %.14g, %s gives %.14g", c.family, c.values, s, j, x[0], c.source, x[1])
				}
			}
		}
	}
}
