package family

import (
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat/distuv"
)

const (
	eulerGamma = 0.57721566490153286061 // Euler–Mascheroni constant (from memory)
	apery      = 1.20205690315959428540 // ζ(3), Apéry's constant (from memory)

	// digammaErr bounds the error of gonum's mathext.Digamma (see
	// TestGammaLogMinusDigamma).
	digammaErr = 1.2e-10
)

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func TestGammaPolygammaKnownValues(t *testing.T) {
	cases := []struct {
		name      string
		got, want float64
	}{
		{"ψ1(1) = π²/6", trigamma(1), math.Pi * math.Pi / 6},                      // exact, ζ(2)
		{"ψ1(1/2) = π²/2", trigamma(0.5), math.Pi * math.Pi / 2},                  // exact (DLMF 5.15.3, from memory)
		{"ψ1(2) = π²/6 − 1", trigamma(2), math.Pi*math.Pi/6 - 1},                  // exact, recurrence
		{"ψ2(1) = −2ζ(3)", tetragamma(1), -2 * apery},                             // exact
		{"ψ2(1/2) = −14ζ(3)", tetragamma(0.5), -14 * apery},                       // exact (from memory)
		{"log 1 − ψ(1) = γ", logMinusDigamma(1), eulerGamma},                      // exact, ψ(1) = −γ
		{"log ½ − ψ(½) = γ + log 2", logMinusDigamma(0.5), eulerGamma + math.Ln2}, // exact, ψ(½) = −γ − 2 log 2
	}
	for _, c := range cases {
		// 4 ulps: the values are exact, so only rounding separates them.
		if e := relErr(c.got, c.want); e > 1e-15 {
			t.Errorf("%s: got %.17g, want %.17g (rel. error %.2g)", c.name, c.got, c.want, e)
		}
	}
}

// TestGammaPolygammaHurwitz compares with the Hurwitz zeta function,
// ψ1(x) = ζ(2, x) and ψ2(x) = −2ζ(3, x) (DLMF 25.11.12, from memory),
// evaluated by gonum mathext.Zeta, across the recurrence/series switch.
func TestGammaPolygammaHurwitz(t *testing.T) {
	for _, x := range []float64{1e-6, 1e-3, 0.05, 0.5, 1.5, 3.3, 9.99, 10, 10.01, 47, 1e3, 1e6} {
		if e := relErr(trigamma(x), mathext.Zeta(2, x)); e > 1e-13 {
			t.Errorf("trigamma(%g) = %.17g, ζ(2, x) = %.17g (rel. error %.2g)", x, trigamma(x), mathext.Zeta(2, x), e)
		}
		if e := relErr(tetragamma(x), -2*mathext.Zeta(3, x)); e > 1e-13 {
			t.Errorf("tetragamma(%g) = %.17g, −2ζ(3, x) = %.17g (rel. error %.2g)", x, tetragamma(x), -2*mathext.Zeta(3, x), e)
		}
		// x·ζ(2, x) − 1 cancels for large x, losing about log10(2x)
		// digits; compare where that still leaves 1e-10.
		if x < 1e5 {
			if e := relErr(trigammaExcess(x), x*mathext.Zeta(2, x)-1); e > 1e-10 {
				t.Errorf("trigammaExcess(%g) = %.17g, x·ζ(2, x) − 1 = %.17g", x, trigammaExcess(x), x*mathext.Zeta(2, x)-1)
			}
		}
	}
	// For large x the excess must follow its leading terms 1/(2x) + 1/(6x²).
	for _, x := range []float64{1e6, 1e10, 1e100} {
		if e := relErr(trigammaExcess(x), 1/(2*x)+1/(6*x*x)); e > 1e-15 {
			t.Errorf("trigammaExcess(%g) rel. error %.2g against 1/(2x) + 1/(6x²)", x, e)
		}
	}
}

// TestGammaPolygammaFD differentiates gonum's mathext.Digamma numerically:
// ψ1 = ψ′ (central first difference) and ψ2 = ψ″ (central second
// difference), from gonum diff/fd.
func TestGammaPolygammaFD(t *testing.T) {
	for _, x := range []float64{0.3, 1, 2.5, 9.5, 10.5, 40, 300} {
		h := 1e-4 * x
		d1 := fd.Derivative(mathext.Digamma, x, &fd.Settings{Formula: fd.Central, Step: h})
		d2 := fd.Derivative(mathext.Digamma, x, &fd.Settings{Formula: fd.Central2nd, Step: 1e-3 * x})
		// Central differences: truncation ~h²ψ‴/6 and rounding ~ε|ψ|/h,
		// both below 1e-6 relative at these steps.
		if e := relErr(trigamma(x), d1); e > 1e-6 {
			t.Errorf("trigamma(%g) = %.12g, fd ψ′ = %.12g (rel. %.2g)", x, trigamma(x), d1, e)
		}
		if e := relErr(tetragamma(x), d2); e > 1e-4 {
			t.Errorf("tetragamma(%g) = %.12g, fd ψ″ = %.12g (rel. %.2g)", x, tetragamma(x), d2, e)
		}
	}
}

func TestGammaLogMinusDigamma(t *testing.T) {
	for _, x := range []float64{1e-4, 0.01, 0.2, 1, 3.7, 9.99, 10, 25, 100} {
		got := logMinusDigamma(x)
		want := math.Log(x) - mathext.Digamma(x) // gonum mathext.Digamma
		// mathext.Digamma stops its asymptotic series after the (x−½)⁻⁸
		// term at x − ½ ≥ 6.5; the next term, 511/(67584·6.5¹⁰) ≈ 5.6e-11
		// (from memory), bounds its error, so allow twice that plus
		// rounding of the terms.
		if math.Abs(got-want) > digammaErr+1e-15*(1+math.Abs(got)) {
			t.Errorf("logMinusDigamma(%g) = %.17g, log x − Digamma = %.17g", x, got, want)
		}
	}
	// The bounds 1/(2x) < log x − ψ(x) < 1/x (Alzer 1997, from memory),
	// which gammaShapeMLE's bracket uses.
	for _, x := range []float64{1e-8, 0.01, 0.5, 1, 2, 10, 1e3, 1e8} {
		if v := logMinusDigamma(x); !(v > 1/(2*x) && v < 1/x) {
			t.Errorf("logMinusDigamma(%g) = %g outside (1/(2x), 1/x)", x, v)
		}
	}
	// Large x: the series must carry full relative accuracy where the
	// difference log x − ψ(x) is 1e-9 of either term.
	for _, x := range []float64{1e9, 1e15} {
		if e := relErr(logMinusDigamma(x), 1/(2*x)+1/(12*x*x)); e > 1e-15 {
			t.Errorf("logMinusDigamma(%g) rel. error %.2g against 1/(2x) + 1/(12x²)", x, e)
		}
	}
}

// TestGammaShapeMLEExtremes solves the profile equation over s from 10⁻³⁰⁰
// to 10³⁰⁰: every finite s > 0 whose root is a finite float64 must
// converge, and the root must satisfy the equation to rounding.
func TestGammaShapeMLEExtremes(t *testing.T) {
	for e := -300; e <= 300; e += 10 {
		for _, m := range []float64{1, 3.7} {
			s := m * math.Pow(10, float64(e))
			a, ok := gammaShapeMLE(s)
			if !ok {
				t.Errorf("s = %g: no convergence", s)
				continue
			}
			if r := relErr(logMinusDigamma(a), s); r > 1e-13 {
				t.Errorf("s = %g: α̂ = %g leaves relative residual %.2g", s, a, r)
			}
		}
	}
	for _, s := range []float64{0, -1e-12, math.NaN(), math.Inf(1), 1e-320} {
		// 1e-320: the root ≈ 1/(2s) overflows.
		if a, ok := gammaShapeMLE(s); ok {
			t.Errorf("s = %g: reported α̂ = %g, want false", s, a)
		}
	}
}

// gammaShapeBisect solves log α − ψ(α) = s by bisection on log α with gonum
// mathext.Digamma, independently of the code under test.
func gammaShapeBisect(s float64) float64 {
	lo, hi := -50.0, 50.0 // α from 2e-22 to 5e21; 64 halvings reach 1e-17
	for range 64 {
		mid := (lo + hi) / 2
		a := math.Exp(mid)
		if math.Log(a)-mathext.Digamma(a) > s {
			lo = mid
		} else {
			hi = mid
		}
	}
	return math.Exp((lo + hi) / 2)
}

// TestGammaShapeMLERobust fits many small samples over shapes 0.05…1000:
// every sample with s > 0 must converge, and the shape must agree with
// bisection on gonum's digamma.
func TestGammaShapeMLERobust(t *testing.T) {
	for i, shape := range []float64{0.05, 0.2, 1, 5, 50, 1000} {
		for _, n := range []int{2, 3, 5, 20} {
			g := newGammaGen(shape)
			rng := testRand(uint64(1000 + 10*i + n))
			fails := 0
			for range 2000 {
				var sw, slw float64
				for range n {
					w, lw := g.draw(rng)
					sw += w
					slw += lw
				}
				s := math.Log(sw/float64(n)) - slw/float64(n)
				a, ok := gammaShapeMLE(s)
				if !ok {
					if s > 0 {
						fails++
					}
					continue
				}
				// An error δ in log α − ψ(α) moves the root by
				// δ/|d(log α − ψ)/dα| ≤ 2α²δ (the slope is below −1/(2α²)),
				// i.e. 2αδ relative; δ ≤ digammaErr plus the rounding of
				// log α − Digamma(α), ~ε·|log α|, relative to s. Compare
				// where the tolerance is below 1e-5.
				tol := 1e-12 + 2*a*(digammaErr+1e-16*math.Abs(math.Log(a)))
				if tol < 1e-5 {
					if ref := gammaShapeBisect(s); relErr(a, ref) > tol {
						t.Errorf("shape %g, n %d: α̂ = %.12g, bisection %.12g", shape, n, a, ref)
					}
				}
			}
			if fails > 0 {
				t.Errorf("shape %g, n %d: %d of 2000 samples with s > 0 did not converge", shape, n, fails)
			}
		}
	}
}

// TestGammaFitAgainstLikelihood refits a few samples independently of the
// code under test: golden-section search of the profile log-likelihood
// ℓ(α, α/ȳ) (β̂(α) = α/ȳ solves ∂ℓ/∂β = 0 for fixed α) built from gonum
// distuv.Gamma LogProb, and a check that the full score, by gonum diff/fd
// central differences, vanishes at Fit's estimate.
func TestGammaFitAgainstLikelihood(t *testing.T) {
	cases := []struct {
		shape, rate float64
		n           int
	}{{0.3, 1, 5}, {3, 0.5, 20}, {200, 40, 3}, {0.05, 10, 50}, {1000, 1, 2}}
	for i, c := range cases {
		g := newGammaGen(c.shape)
		rng := testRand(uint64(1100 + i))
		ys := make([]float64, c.n)
		var sw, slw, sy float64
		for j := range ys {
			w, lw := g.draw(rng)
			ys[j] = g.d * w / c.rate
			sw += w
			slw += lw
			sy += ys[j]
		}
		ybar := sy / float64(c.n)
		s := math.Log(sw/float64(c.n)) - slw/float64(c.n)
		a, ok := gammaShapeMLE(s)
		if !ok {
			t.Fatalf("case %d: no fit", i)
		}
		b := a * c.rate / (g.d * sw / float64(c.n))
		loglik := func(x []float64) float64 { // x = (log α, log β)
			d := distuv.Gamma{Alpha: math.Exp(x[0]), Beta: math.Exp(x[1])}
			var l float64
			for _, y := range ys {
				l += d.LogProb(y)
			}
			return l
		}
		profile := func(t float64) float64 { return loglik([]float64{t, t - math.Log(ybar)}) }
		// Golden-section search for the maximum over log α in [−30, 30].
		const invPhi = 0.6180339887498949 // (√5 − 1)/2
		lo, hi := -30.0, 30.0
		x1, x2 := hi-invPhi*(hi-lo), lo+invPhi*(hi-lo)
		f1, f2 := profile(x1), profile(x2)
		for hi-lo > 1e-9 {
			if f1 < f2 {
				lo, x1, f1 = x1, x2, f2
				x2 = lo + invPhi*(hi-lo)
				f2 = profile(x2)
			} else {
				hi, x2, f2 = x2, x1, f1
				x1 = hi - invPhi*(hi-lo)
				f1 = profile(x1)
			}
		}
		aRef := math.Exp((lo + hi) / 2)
		name := fmt.Sprintf("gamma(%g, %g) n=%d", c.shape, c.rate, c.n)
		// The profile is flat to second order at its maximum: with
		// curvature C = n·α·(αψ1(α) − 1) in log α (derived from
		// ∂ℓ/∂α = n(log α − ψ(α) − s)) and rounding δℓ in distuv's
		// log-likelihood, the search pins log α only to √(2δℓ/C). δℓ is
		// taken as 8ε times the sum of the magnitudes of LogProb's terms.
		var mag float64
		lg, _ := math.Lgamma(a)
		for _, y := range ys {
			mag += math.Abs(a*math.Log(b)) + math.Abs((a-1)*math.Log(y)) + b*y + math.Abs(lg)
		}
		curv := float64(c.n) * a * trigammaExcess(a)
		tol := 1e-8 + math.Sqrt(2*8*2.2e-16*mag/curv)
		if e := relErr(a, aRef); e > tol {
			t.Errorf("%s: α̂ = %.10g, golden section %.10g (rel. %.2g > %.2g)", name, a, aRef, e, tol)
		}
		if e := relErr(b, aRef/ybar); e > tol {
			t.Errorf("%s: β̂ = %.10g, golden section %.10g", name, b, aRef/ybar)
		}
		// Score in (log α, log β) by central differences; its size is
		// judged against the curvature n·α·(αψ1(α)−1)… — simply against
		// the finite-difference noise, ~ε·|ℓ|/h with h = 1e-4.
		grad := fd.Gradient(nil, loglik, []float64{math.Log(a), math.Log(b)}, &fd.Settings{Formula: fd.Central, Step: 1e-4})
		noise := 1e-16 * (1 + math.Abs(loglik([]float64{math.Log(a), math.Log(b)}))) / 1e-4
		// Central-difference truncation ~h²ℓ‴/6 is of order h²·n·α.
		trunc := 1e-8 * float64(c.n) * (1 + a)
		for k, gk := range grad {
			if math.Abs(gk) > 10*(noise+trunc) {
				t.Errorf("%s: score[%d] = %.3g at Fit's estimate (allowed %.3g)", name, k, gk, 10*(noise+trunc))
			}
		}
	}
}
