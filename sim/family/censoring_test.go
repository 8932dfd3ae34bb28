package family

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
)

// censoringLaws are the censoring laws the tests try: end of study only,
// staggered entry, dropout only, and all three, light to heavy.
var censoringLaws = []Censoring{
	{End: 2},
	{End: 0.3},
	{Entry: 2, End: 5},
	{Entry: 4.5, End: 5},
	{DropoutRate: 0.05},
	{DropoutRate: 3},
	{Entry: 2, End: 5, DropoutRate: 0.05},
	{Entry: 1e-6, End: 5, DropoutRate: 0.2}, // entry → 0: the expm1 forms
	{Entry: 0.5, End: 40, DropoutRate: 0.01},
}

// legendre integrates f over [a, b] with gonum's fixed Gauss–Legendre
// rule, the interval cut into pieces so each holds a smooth stretch.
func legendre(f func(float64) float64, a, b float64, pieces int) float64 {
	var sum float64
	h := (b - a) / float64(pieces)
	for i := range pieces {
		sum += quad.Fixed(f, a+float64(i)*h, a+float64(i+1)*h, 64, quad.Legendre{}, 0)
	}
	return sum
}

// unitMoments is what one unit contributes under censoring law c, by
// quadrature from the definition of the observation, with no closed form
// of the integrals: the unit's administrative censoring time is
// a = End − entry, entry uniform on [0, Entry]; lifetime T ~ Exp(λ) and
// dropout ~ Exp(δ) compete, so Y = min(T, dropout) has density μe^(−μy)
// (μ = λ + δ) and ends in an event with probability λ/μ (derived:
// independent exponentials). The observation is X = min(Y, a) and
// d = 1(Y ≤ a, the lifetime ended first). Returned: E d, E X, E X², E dX.
func unitMoments(lambda float64, c Censoring) (ed, ex, ex2, edx float64) {
	mu := lambda + c.DropoutRate
	given := func(a float64) (d, x, x2, dx float64) {
		upper := math.Min(a, 80/mu) // beyond 80/μ the density is below e^(−80)
		m := func(j int) float64 {
			return legendre(func(t float64) float64 { return math.Pow(t, float64(j)) * mu * math.Exp(-mu*t) }, 0, upper, 6)
		}
		m0, m1, m2 := m(0), m(1), m(2)
		x, x2 = m1, m2
		if !math.IsInf(a, 1) {
			tail := math.Exp(-mu * a) // P(Y > a): censored at a
			x, x2 = x+a*tail, x2+a*a*tail
		}
		share := lambda / mu
		return share * m0, x, x2, share * m1
	}
	switch {
	case c.End == 0:
		return given(math.Inf(1))
	case c.Entry == 0:
		return given(c.End)
	}
	// Over entry: Gauss–Legendre nodes on [0, Entry], all four at once.
	const nodes = 48
	xs, ws := make([]float64, nodes), make([]float64, nodes)
	quad.Legendre{}.FixedLocations(xs, ws, 0, c.Entry)
	for i, e := range xs {
		d, x, x2, dx := given(c.End - e)
		w := ws[i] / c.Entry
		ed, ex, ex2, edx = ed+w*d, ex+w*x, ex2+w*x2, edx+w*dx
	}
	return ed, ex, ex2, edx
}

// P(event) and E[T; event] in closed form (Censoring.exponentialEvents,
// derived in its comment) against quadrature of their definitions.
func TestCensoredExponentialEventsQuadrature(t *testing.T) {
	for _, lambda := range []float64{0.07, 0.5, 2} {
		for _, c := range censoringLaws {
			p, dt := c.exponentialEvents(lambda)
			qp, _, _, qdt := unitMoments(lambda, c)
			// reference: Gauss–Legendre quadrature (gonum integrate/quad) of
			// the definitions, nested over entry and lifetime.
			for _, k := range []struct {
				name      string
				got, want float64
			}{{"P(event)", p, qp}, {"E[T; event]", dt, qdt}} {
				if rel := math.Abs(k.got-k.want) / k.want; !(rel <= 1e-10) {
					t.Errorf("rate %v, %+v: %s = %.15g, quadrature %.15g (relative error %.2g)", lambda, c, k.name, k.got, k.want, rel)
				}
			}
		}
	}
}

// The O(1/n) bias of λ̂ = D/T, checked against the ratio-estimator
// expansion E[d̄/x̄] = μd/μx + (μd·σx²/μx³ − σdx/μx²)/n + O(n⁻²) (derived:
// second-order Taylor expansion of a ratio of means), its moments by
// quadrature (unitMoments) — a route that shares nothing with the
// Cox–Snell form the model uses.
func TestCensoredExponentialBiasRatioExpansion(t *testing.T) {
	for _, lambda := range []float64{0.5, 2} {
		for _, c := range censoringLaws {
			m, err := newCensoredExponential(map[string]float64{"rate": lambda}, c, ModelVariance)
			if err != nil {
				t.Fatal(err)
			}
			b := []float64{0}
			m.Asymptotics.Bias([]float64{lambda}, b)
			ed, ex, ex2, edx := unitMoments(lambda, c)
			if rel := math.Abs(ed/ex-lambda) / lambda; rel > 1e-10 {
				t.Errorf("%+v: E d / E X = %v, want the rate %v (the score has mean 0)", c, ed/ex, lambda)
			}
			varX, covDX := ex2-ex*ex, edx-ed*ex
			want := ed*varX/(ex*ex*ex) - covDX/(ex*ex)
			if rel := math.Abs(b[0]-want) / want; !(rel <= 1e-8) {
				t.Errorf("rate %v, %+v: bias coefficient %.12g, ratio expansion by quadrature %.12g (relative error %.2g)", lambda, c, b[0], want, rel)
			}
			cov := []float64{0}
			m.Asymptotics.Cov([]float64{lambda}, cov)
			if want := lambda * lambda / ed; math.Abs(cov[0]-want) > 1e-10*want {
				t.Errorf("rate %v, %+v: Cov %.12g, λ²/P(event) by quadrature %.12g", lambda, c, cov[0], want)
			}
		}
	}
}

// The plug-in covariance is the inverse observed information: per
// observation n/(−ℓ”(λ̂)), ℓ(λ) = D log λ − λT the censored
// log-likelihood, its second derivative from gonum's diff/fd; and λ̂ is
// where ℓ' vanishes (fd.Derivative).
func TestCensoredExponentialObservedInformation(t *testing.T) {
	rng := testRand(1515)
	for _, c := range censoringLaws {
		m, err := newCensoredExponential(map[string]float64{"rate": 0.7}, c, ModelVariance)
		if err != nil {
			t.Fatal(err)
		}
		tr := newTrial(m, 200)
		for _, n := range []int{5, 30, 200} {
			theta := []float64{0}
			if !tr.fit(rng, n, theta) {
				continue // no event: checked elsewhere
			}
			d, time := tr.sample.Data[0], tr.sample.Data[1]
			loglik := func(x []float64) float64 { return d*math.Log(x[0]) - x[0]*time }
			score := fd.Derivative(func(x float64) float64 { return loglik([]float64{x}) }, theta[0], &fd.Settings{Formula: fd.Central, Step: 1e-6 * theta[0]})
			if math.Abs(score)*theta[0] > 1e-5*d {
				t.Errorf("%+v n=%d: score at λ̂ = %v is %v (fd), not 0", c, n, theta[0], score)
			}
			h := mat.NewSymDense(1, nil)
			fd.Hessian(h, loglik, theta, &fd.Settings{Formula: fd.Central, Step: 1e-4 * theta[0]})
			want := float64(n) / -h.At(0, 0)
			if rel := math.Abs(tr.cov[0]-want) / want; rel > 1e-6 {
				t.Errorf("%+v n=%d: plug-in covariance %.10g, n/(−ℓ'') from fd.Hessian %.10g (relative %.2g)", c, n, tr.cov[0], want, rel)
			}
		}
	}
}

// A sample with no events has no estimate; its events are reported.
func TestCensoredExponentialNoEvents(t *testing.T) {
	m, err := newCensoredExponential(map[string]float64{"rate": 0.01}, Censoring{End: 1}, ModelVariance)
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrial(m, 3)
	rng := testRand(7)
	seen := false
	for range 1000 {
		ok := tr.fit(rng, 3, []float64{0})
		ev := m.Sampler.(EventCounter).Events(&tr.sample)
		if ok == (ev == 0) {
			t.Fatalf("Fit = %v with %d events", ok, ev)
		}
		seen = seen || ev == 0
	}
	if !seen {
		t.Fatal("P(no event) ≈ 0.97 per sample of 3, yet every sample had one")
	}
}

// The sampler's share of events and mean time at risk against the
// quadrature values, within 4 MCSE (common practice), the MCSE from the
// quadrature moments; n·R units in all.
func TestCensoredExponentialDraw(t *testing.T) {
	const lambda, n, reps = 0.4, 50, 4000
	for i, c := range censoringLaws {
		m, err := newCensoredExponential(map[string]float64{"rate": lambda}, c, ModelVariance)
		if err != nil {
			t.Fatal(err)
		}
		rng := testRand(uint64(100 + i))
		s := Sample{Data: make([]float64, 2)}
		var d, x float64
		for range reps {
			m.Sampler.Draw(rng, n, &s)
			d += s.Data[0]
			x += s.Data[1]
		}
		units := float64(n * reps)
		ed, ex, ex2, _ := unitMoments(lambda, c)
		// reference: quadrature of the observation's definition (unitMoments)
		if z := (d/units - ed) / math.Sqrt(ed*(1-ed)/units); math.Abs(z) > 4 {
			t.Errorf("%+v: share of events %.5f, P(event) %.5f: %+.1f MCSE", c, d/units, ed, z)
		}
		if z := (x/units - ex) / math.Sqrt((ex2-ex*ex)/units); math.Abs(z) > 4 {
			t.Errorf("%+v: mean time at risk %.5f, expected %.5f: %+.1f MCSE", c, x/units, ex, z)
		}
	}
}

func TestCensoredExponentialAllocatesNothing(t *testing.T) {
	for _, c := range censoringLaws[:4] {
		m, _ := newCensoredExponential(map[string]float64{"rate": 1}, c, ModelVariance)
		tr := newTrial(m, 100)
		rng := testRand(3)
		theta := []float64{0}
		if a := testing.AllocsPerRun(100, func() { tr.fit(rng, 100, theta) }); a != 0 {
			t.Errorf("%+v: %v allocations per draw and fit", c, a)
		}
	}
}

func TestCensoringWords(t *testing.T) {
	for _, k := range []struct {
		c    Censoring
		want string
	}{
		{Censoring{End: 5}, "all enter at 0, study ends at 5"},
		{Censoring{Entry: 2, End: 5, DropoutRate: 0.05}, "entry uniform over [0, 2], study ends at 5 (follow-up 3 to 5); loss to follow-up at rate 0.05"},
		{Censoring{DropoutRate: 0.1}, "loss to follow-up at rate 0.1"},
	} {
		if got := k.c.Words(); got != k.want {
			t.Errorf("%+v: %q, want %q", k.c, got, k.want)
		}
	}
}

// BenchmarkCensoredExponential: one draw and fit at n = 100, beside the
// uncensored exponential at the same n.
func BenchmarkCensoredExponential(b *testing.B) {
	laws := map[string]*Censoring{
		"uncensored":    nil,
		"end":           {End: 2},
		"entry+dropout": {Entry: 2, End: 5, DropoutRate: 0.05},
	}
	for _, name := range []string{"uncensored", "end", "entry+dropout"} {
		b.Run(name, func(b *testing.B) {
			var m Model
			if c := laws[name]; c == nil {
				m = mustModel(b, "exponential", map[string]float64{"rate": 0.5})
			} else {
				m, _ = newCensoredExponential(map[string]float64{"rate": 0.5}, *c, ModelVariance)
			}
			tr := newTrial(m, 100)
			rng := testRand(1)
			theta := []float64{0}
			b.ReportAllocs()
			for b.Loop() {
				tr.fit(rng, 100, theta)
			}
		})
	}
}

// The sandwich's sampler keeps Σdᵢxᵢ and Σxᵢ², whose means match the
// quadrature of the observation's definition (unitMoments) within 4 MCSE
// (common practice), and its draws are those of the model sampler (D and
// T the same law: compared in mean).
func TestCensoredExponentialSandwichSums(t *testing.T) {
	const lambda, n, reps = 0.4, 50, 4000
	for i, c := range censoringLaws {
		m, err := newCensoredExponential(map[string]float64{"rate": lambda}, c, RobustVariance)
		if err != nil {
			t.Fatal(err)
		}
		rng := testRand(uint64(500 + i))
		s := Sample{Data: make([]float64, 4)}
		var sums, sq [4]float64
		for range reps {
			m.Sampler.Draw(rng, n, &s)
			for j := range 4 {
				sums[j] += s.Data[j] / n
				sq[j] += (s.Data[j] / n) * (s.Data[j] / n)
			}
		}
		ed, ex, ex2, edx := unitMoments(lambda, c)
		for j, want := range []float64{ed, ex, edx, ex2} {
			mean := sums[j] / reps
			sd := math.Sqrt(sq[j]/reps - mean*mean)
			if z := (mean - want) / (sd / math.Sqrt(reps)); math.Abs(z) > 4 {
				t.Errorf("%+v: sum %d per unit %.6g, quadrature %.6g: %+.1f MCSE", c, j, mean, want, z)
			}
		}
	}
}

// The sandwich from the sums against the per-unit scores written out:
// units x = (1, 2, 3) with d = (1, 0, 1) give λ̂ = 2/6, scores
// dᵢ/λ̂ − xᵢ = (2, −2, 0), B' = 8, A' = D/λ̂² = 18, and n·B'/A'² = 24/324
// (derived by hand).
func TestCensoredExponentialSandwichByHand(t *testing.T) {
	m, err := newCensoredExponential(map[string]float64{"rate": 1}, Censoring{End: 3}, RobustVariance)
	if err != nil {
		t.Fatal(err)
	}
	s := Sample{N: 3, Data: []float64{2, 6, 1 + 3, 1 + 4 + 9}}
	theta, cov := []float64{0}, []float64{0}
	if !m.Estimator.NewFitter(3).Fit(&s, theta, cov) {
		t.Fatal("no fit")
	}
	if math.Abs(theta[0]-1.0/3) > 1e-15 || math.Abs(cov[0]-24.0/324) > 1e-15 {
		t.Errorf("λ̂ = %v, sandwich %v; want 1/3 and 24/324 = %v", theta[0], cov[0], 24.0/324)
	}
}
