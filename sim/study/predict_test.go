package study_test

// Delta-method predictions against closed forms derived by hand.
//
// Study.Predict gives, at the true θ0 and sample size n,
//
//	delta_var = gᵀ Σ g / n,   bias_2nd = (½ tr(H Σ) + gᵀ b) / n,
//
// per arm, with g and H the gradient and Hessian of the transform, Σ the
// per-observation inverse Fisher information and b the estimator's O(1/n)
// bias (first order: Casella & Berger 2002, Statistical Inference, 2nd ed.,
// §5.5.4, from memory; second order: Oehlert 1992, The American
// Statistician 46:27–29). Each case below states the closed form, derived
// by hand from the family's distribution (not from its code), and where
// possible a second route to the same number (an exact finite-sample
// expansion, or a published result).
//
// Tolerance: 1e-12 relative. The closed forms and the program's forward-mode
// derivatives each take a few dozen floating-point operations, so they agree
// to some tens of ulps (≈1e-14) when both are right, while any wrong term
// is an O(1) relative error. Where the exact value is 0 because terms
// cancel (bias_2nd of log(2)/rate and of the gamma mean), the tolerance is
// 1e-12 times the size of the cancelling terms, named in the case.

import (
	"fmt"
	"math"
	"testing"

	"deltaprobe/sim/study"
)

// predictTol is the relative tolerance of the deterministic comparisons.
const predictTol = 1e-12

// predictClose reports whether got equals want to predictTol relative to
// scale (scale = |want| unless want is 0 by cancellation).
func predictClose(got, want, scale float64) bool {
	return math.Abs(got-want) <= predictTol*scale
}

func predictParse(t *testing.T, src string) *study.Study {
	t.Helper()
	s, err := study.Parse(t.Name()+".toml", []byte(src))
	if err != nil {
		t.Fatalf("parsing the study: %v\n%s", err, src)
	}
	return s
}

// predictWant is a derived closed form at sample size n (n_arm for
// multi-arm cases is computed inside).
type predictWant struct {
	truth, deltaVar, bias2nd float64
	// biasScale, when positive, is the size of the terms whose exact
	// cancellation makes bias2nd zero.
	biasScale float64
}

type predictCase struct {
	name  string // test name
	model string // the [model] table or [[arm]] tables
	expr  string
	want  func(n float64) predictWant
}

func TestPredictClosedForms(t *testing.T) {
	const (
		mu, sd    = 12.5, 3.0 // normal
		rate, tt  = 2.0, 1.5  // exponential, and the time of exp(-rate*t)
		pb        = 0.3       // bernoulli
		size, pbn = 7.0, 0.2  // binomial
		mp        = 4.0       // poisson
		ga, gb    = 2.5, 1.5  // gamma shape, rate
		ml, sl    = 0.3, 0.8  // lognormal
		sx, sy    = 2.0, 0.5  // bivariate normal sds
		rho       = 0.6       // bivariate normal correlation
		ln2       = math.Ln2  // log(2)
		s2        = sd * sd   // normal variance
		pq        = pb * (1 - pb)
		pqn       = pbn * (1 - pbn)
	)
	normal := fmt.Sprintf("[model]\nfamily = \"normal\"\nmean = %v\nsd = %v\n", mu, sd)
	expo := fmt.Sprintf("[model]\nfamily = \"exponential\"\nrate = %v\n", rate)
	bern := fmt.Sprintf("[model]\nfamily = \"bernoulli\"\np = %v\n", pb)
	binom := fmt.Sprintf("[model]\nfamily = \"binomial\"\nsize = %v\np = %v\n", size, pbn)
	pois := fmt.Sprintf("[model]\nfamily = \"poisson\"\nmean = %v\n", mp)
	gam := fmt.Sprintf("[model]\nfamily = \"gamma\"\nshape = %v\nrate = %v\n", ga, gb)
	lnorm := fmt.Sprintf("[model]\nfamily = \"lognormal\"\nmeanlog = %v\nsdlog = %v\n", ml, sl)
	bvn := fmt.Sprintf("[model]\nfamily = \"bivariate_normal\"\nmean_x = 1\nmean_y = -1\nsd_x = %v\nsd_y = %v\nrho = %v\n", sx, sy, rho)
	q := (1 - rho) * (1 + rho)
	m := math.Exp(ml + sl*sl/2)

	cases := []predictCase{
		// Normal, Σ = diag(σ², σ²/2), b = (0, −3σ/4) (E σ̂ = σ(1 − 3/(4n)) + O(n⁻²),
		// derived from E σ̂ = σ·sqrt(2/n)·Γ(n/2)/Γ((n−1)/2)).
		{"normal 100/mean", normal, "100 / mean", func(n float64) predictWant {
			// g = −100/μ², H = 200/μ³.
			return predictWant{truth: 100 / mu, deltaVar: 1e4 * s2 / (mu * mu * mu * mu * n), bias2nd: 100 * s2 / (mu * mu * mu * n)}
		}},
		{"normal mean", normal, "mean", func(n float64) predictWant {
			// g = 1, H = 0, b = 0: E x̄ = μ exactly.
			return predictWant{truth: mu, deltaVar: s2 / n, bias2nd: 0, biasScale: s2 / n}
		}},
		{"normal log(sd)", normal, "log(sd)", func(n float64) predictWant {
			// g = 1/σ, H = −1/σ²: ½(−1/σ²)(σ²/2) + (1/σ)(−3σ/4) = −1/4 − 3/4 = −1.
			// Second route (derived): E log σ̂ = log σ + ½[ψ((n−1)/2) + log(2/n)]
			// = log σ − 1/n + O(n⁻²).
			return predictWant{truth: math.Log(sd), deltaVar: 1 / (2 * n), bias2nd: -1 / n}
		}},
		{"normal sd^2", normal, "sd^2", func(n float64) predictWant {
			// g = 2σ, H = 2: ½·2·σ²/2 + 2σ(−3σ/4) = −σ², the exact bias of
			// σ̂² = SS/n (derived: E SS = (n − 1)σ²).
			return predictWant{truth: s2, deltaVar: 2 * s2 * s2 / n, bias2nd: -s2 / n}
		}},

		// Exponential, Σ = λ², b = λ (derived: E λ̂ = nλ/(n − 1) = λ + λ/n + O(n⁻²)).
		{"exponential rate", expo, "rate", func(n float64) predictWant {
			return predictWant{truth: rate, deltaVar: rate * rate / n, bias2nd: rate / n}
		}},
		{"exponential log(rate)", expo, "log(rate)", func(n float64) predictWant {
			// g = 1/λ, H = −1/λ²: −½ + 1 = ½. Second route (derived):
			// E log λ̂ = log λ + log n − ψ(n) = log λ + 1/(2n) + O(n⁻²).
			return predictWant{truth: math.Log(rate), deltaVar: 1 / n, bias2nd: 1 / (2 * n)}
		}},
		{"exponential exp(-rate*t)", expo, fmt.Sprintf("exp(-rate * %v)", tt), func(n float64) predictWant {
			// S(t) = e^{−λt}: g = −t·S, H = t²·S;
			// bias = ½t²Sλ² − tSλ = S·λt(λt/2 − 1).
			s := math.Exp(-rate * tt)
			return predictWant{truth: s, deltaVar: tt * tt * s * s * rate * rate / n, bias2nd: s * rate * tt * (rate*tt/2 - 1) / n}
		}},
		{"exponential log(2)/rate", expo, "log(2) / rate", func(n float64) predictWant {
			// Median: g = −log2/λ², H = 2log2/λ³: ½·2log2/λ³·λ² − log2/λ²·λ = 0,
			// as it must: log(2)/λ̂ = log(2)·ȳ is unbiased (derived).
			// Cancelling terms: log2/(λn).
			return predictWant{truth: ln2 / rate, deltaVar: ln2 * ln2 / (rate * rate * n), bias2nd: 0, biasScale: ln2 / (rate * n)}
		}},

		// Bernoulli, Σ = p(1 − p), b = 0.
		{"bernoulli p", bern, "p", func(n float64) predictWant {
			return predictWant{truth: pb, deltaVar: pq / n, bias2nd: 0, biasScale: pq / n}
		}},
		{"bernoulli log(p)", bern, "log(p)", func(n float64) predictWant {
			// g = 1/p, H = −1/p²: ½(−1/p²)p(1 − p) = −(1 − p)/(2p).
			return predictWant{truth: math.Log(pb), deltaVar: (1 - pb) / (pb * n), bias2nd: -(1 - pb) / (2 * pb * n)}
		}},
		{"bernoulli logit(p)", bern, "logit(p)", func(n float64) predictWant {
			// g = 1/(pq), H = (2p − 1)/(pq)²: ½H·pq = (2p − 1)/(2pq).
			return predictWant{truth: math.Log(pb / (1 - pb)), deltaVar: 1 / (pq * n), bias2nd: (2*pb - 1) / (2 * pq * n)}
		}},

		// Binomial(size m, p), Σ = p(1 − p)/m (score y/p − (m − y)/(1 − p) has
		// variance m/(p(1 − p))), b = 0.
		{"binomial p", binom, "p", func(n float64) predictWant {
			return predictWant{truth: pbn, deltaVar: pqn / (size * n), bias2nd: 0, biasScale: pqn / (size * n)}
		}},
		{"binomial logit(p)", binom, "logit(p)", func(n float64) predictWant {
			return predictWant{truth: math.Log(pbn / (1 - pbn)), deltaVar: 1 / (size * pqn * n), bias2nd: (2*pbn - 1) / (2 * size * pqn * n)}
		}},

		// Poisson, Σ = μ, b = 0.
		{"poisson log(mean)", pois, "log(mean)", func(n float64) predictWant {
			// g = 1/μ, H = −1/μ²: ½(−1/μ²)μ = −1/(2μ).
			return predictWant{truth: math.Log(mp), deltaVar: 1 / (mp * n), bias2nd: -1 / (2 * mp * n)}
		}},
		{"poisson sqrt(mean)", pois, "sqrt(mean)", func(n float64) predictWant {
			// g = 1/(2√μ), H = −1/(4μ^{3/2}): variance 1/(4n) whatever μ (the
			// square root stabilises the Poisson variance; Bartlett 1936,
			// JRSS Suppl. 3:68–78, from memory); bias −1/(8√μ).
			return predictWant{truth: math.Sqrt(mp), deltaVar: 1 / (4 * n), bias2nd: -1 / (8 * math.Sqrt(mp) * n)}
		}},

		// Gamma(α, β): the MLE has α̂/β̂ = ȳ exactly (the rate's score
		// nα/β − Σy = 0), so the mean's delta variance is Var y/n = α/(β²n) and
		// its second-order bias is exactly 0 (derived). With Σ = I⁻¹,
		// I = [[ψ1(α), −1/β], [−1/β, α/β²]], the Hessian term alone is
		// ½ tr(HΣ) = 1/β, so this checks that the family's bias b carries
		// gᵀb = −1/β. Cancelling terms: 1/(βn).
		{"gamma shape/rate", gam, "shape / rate", func(n float64) predictWant {
			return predictWant{truth: ga / gb, deltaVar: ga / (gb * gb * n), bias2nd: 0, biasScale: 1 / (gb * n)}
		}},

		// Lognormal(μ, σ): θ = (meanlog, sdlog) with the normal family's Σ and b.
		{"lognormal mean", lnorm, "exp(meanlog + sdlog^2/2)", func(n float64) predictWant {
			// M = e^{μ + σ²/2}: g = M(1, σ), H = M[[1, σ], [σ, 1 + σ²]].
			// Var = M²(σ² + σ²·σ²/2)/n. Bias: ½M(σ² + (1 + σ²)σ²/2) − Mσ·3σ/4
			// = Mσ⁴/4. Second route (derived from the normal and χ² MGFs):
			// E M̂ = e^{μ + σ²/(2n)}(1 − σ²/n)^{−(n−1)/2} = M(1 + σ⁴/(4n) + O(n⁻²)).
			return predictWant{truth: m, deltaVar: m * m * sl * sl * (1 + sl*sl/2) / n, bias2nd: m * sl * sl * sl * sl / (4 * n)}
		}},

		// Bivariate normal, θ = (μx, μy, σx, σy, ρ). The means' block of Σ is
		// the covariance matrix; Var r = (1 − ρ²)², Cov(σ̂x, σ̂y) = ρ²σxσy/2
		// (derived from n·Cov(S_xx, S_yy) → 2ρ²σx²σy², Isserlis' theorem);
		// b_ρ = −ρ(1 − ρ²)/2 (Olkin & Pratt 1958, Ann. Math. Statist.
		// 29:201–211, from memory), b_σ = −3σ/4.
		{"bivariate_normal atanh(rho)", bvn, "atanh(rho)", func(n float64) predictWant {
			// g = 1/(1 − ρ²), H = 2ρ/(1 − ρ²)²: ½H(1 − ρ²)² = ρ, gᵀb = −ρ/2,
			// total ρ/(2n): the first-order bias of Fisher's z, ρ/(2(n − 1))
			// (Fisher 1921, Metron 1:3–32, from memory); variance 1/n.
			return predictWant{truth: math.Atanh(rho), deltaVar: 1 / n, bias2nd: rho / (2 * n)}
		}},
		{"bivariate_normal rho", bvn, "rho", func(n float64) predictWant {
			return predictWant{truth: rho, deltaVar: q * q / n, bias2nd: -rho * q / (2 * n)}
		}},
		{"bivariate_normal mean_x - mean_y", bvn, "mean_x - mean_y", func(n float64) predictWant {
			// Var(x − y) = σx² + σy² − 2ρσxσy; linear and unbiased.
			v := sx*sx + sy*sy - 2*rho*sx*sy
			return predictWant{truth: 2, deltaVar: v / n, bias2nd: 0, biasScale: v / n}
		}},
		{"bivariate_normal sd_x/sd_y", bvn, "sd_x / sd_y", func(n float64) predictWant {
			// g = (1/σy, −σx/σy²); gᵀΣg = (σx²/σy²)(½ + ½ − ρ²).
			// H_xy = −1/σy², H_yy = 2σx/σy³: ½tr(HΣ) = (σx/σy)(1 − ρ²)/2;
			// gᵀb = −3σx/(4σy) + 3σx/(4σy) = 0.
			r := sx / sy
			return predictWant{truth: r, deltaVar: r * r * q / n, bias2nd: r * q / (2 * n)}
		}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sizes := []int{2, 7, 40, 1000}
			src := fmt.Sprintf("seed = 1\nsample_sizes = [2, 7, 40, 1000]\n%s\n[[transform]]\nname = \"tau\"\nexpr = %q\n", c.model, c.expr)
			s := predictParse(t, src)
			for _, n := range sizes {
				got := s.Predict(0, n)
				w := c.want(float64(n))
				bscale := math.Abs(w.bias2nd)
				if w.biasScale > 0 {
					bscale = w.biasScale
				}
				if !predictClose(got.Truth, w.truth, math.Abs(w.truth)) {
					t.Errorf("n=%d truth = %.17g, derived %.17g", n, got.Truth, w.truth)
				}
				if !predictClose(got.DeltaVar, w.deltaVar, w.deltaVar) {
					t.Errorf("n=%d delta_var = %.17g, derived %.17g (rel. error %.2g)", n, got.DeltaVar, w.deltaVar, got.DeltaVar/w.deltaVar-1)
				}
				if !predictClose(got.Bias2nd, w.bias2nd, bscale) {
					t.Errorf("n=%d bias_2nd = %.17g, derived %.17g (error %.2g, scale %.3g)", n, got.Bias2nd, w.bias2nd, got.Bias2nd-w.bias2nd, bscale)
				}
				// An exact zero by cancellation is written as 0, not as
				// the rounding left over from the cancelling terms.
				if w.bias2nd == 0 && got.Bias2nd != 0 {
					t.Errorf("n=%d bias_2nd = %.17g, want exactly 0 (the terms cancel)", n, got.Bias2nd)
				}
			}
		})
	}
}

// Several arms: [[arm]] tables with name, family and allocation; the
// transforms name parameters arm.param. Arm sizes are ceil(n × allocation)
// (design), arms are independent, so Σ is block diagonal with blocks
// Σ_arm/n_arm (derived: independent samples).
func TestPredictMultiArm(t *testing.T) {
	const pa, pb = 0.2, 0.35
	const mc, sc = 1.5, 2.0
	src := fmt.Sprintf(`seed = 1
sample_sizes = [3, 15, 101]

[[arm]]
name = "a"
family = "bernoulli"
p = %v

[[arm]]
name = "b"
family = "bernoulli"
p = %v
allocation = 2

[[arm]]
name = "c"
family = "normal"
mean = %v
sd = %v
allocation = 0.5

[[transform]]
name = "log_or"
expr = "log(a.p/(1-a.p)) - log(b.p/(1-b.p))"

[[transform]]
name = "product"
expr = "c.mean * a.p"
`, pa, pb, mc, sc)
	s := predictParse(t, src)
	wantNames := []string{"a.p", "b.p", "c.mean", "c.sd"}
	if got := s.ParamNames(); fmt.Sprint(got) != fmt.Sprint(wantNames) {
		t.Fatalf("ParamNames = %v, want %v", got, wantNames)
	}
	if len(s.Arms) != 3 || s.Arms[0].Name != "a" || s.Arms[1].Allocation != 2 || s.Arms[2].Family != "normal" || s.Arms[2].Allocation != 0.5 {
		t.Fatalf("arms parsed as %+v", s.Arms)
	}
	qa, qb := pa*(1-pa), pb*(1-pb)
	for _, n := range s.SampleSizes {
		// ceil(n·1), ceil(n·2), ceil(n·0.5), all exact in binary.
		na, nb, nc := float64(n), float64(2*n), math.Ceil(float64(n)/2)
		for ai, want := range []float64{na, nb, nc} {
			if got := s.ArmSize(ai, n); float64(got) != want {
				t.Errorf("n=%d ArmSize(%s) = %d, want ceil(n × allocation) = %v", n, s.Arms[ai].Name, got, want)
			}
		}

		// Log odds ratio: g = (1/(pa qa), −1/(pb qb)) and H = diag((2p − 1)/(pq)²)
		// with opposite signs; the normal arm c does not enter.
		got := s.Predict(0, n)
		wantVar := 1/(na*qa) + 1/(nb*qb)
		wantBias := (2*pa-1)/(2*qa*na) - (2*pb-1)/(2*qb*nb)
		wantTruth := math.Log(pa/(1-pa)) - math.Log(pb/(1-pb))
		if !predictClose(got.Truth, wantTruth, math.Abs(wantTruth)) || !predictClose(got.DeltaVar, wantVar, wantVar) ||
			!predictClose(got.Bias2nd, wantBias, math.Abs(wantBias)) {
			t.Errorf("log odds ratio at n=%d: got truth %.17g, delta_var %.17g, bias_2nd %.17g; derived %.17g, %.17g, %.17g",
				n, got.Truth, got.DeltaVar, got.Bias2nd, wantTruth, wantVar, wantBias)
		}

		// Product across arms c.mean·a.p: g = (μc, pa) on (a.p, c.mean);
		// Var = μc²·pa qa/n_a + pa²·σc²/n_c. The only Hessian entry is the
		// cross-arm one, which meets a zero block of Σ, and both estimators
		// are unbiased, so bias_2nd = 0 (derived: E[p̂ x̄] = pa μc exactly by
		// independence). Scale of the cancelling terms: 0, so the bound is
		// the variance scale times predictTol.
		got = s.Predict(1, n)
		wantVar = mc*mc*qa/na + pa*pa*sc*sc/nc
		if !predictClose(got.Truth, mc*pa, mc*pa) || !predictClose(got.DeltaVar, wantVar, wantVar) ||
			!predictClose(got.Bias2nd, 0, wantVar) {
			t.Errorf("product at n=%d: got truth %.17g, delta_var %.17g, bias_2nd %.17g; derived %.17g, %.17g, 0",
				n, got.Truth, got.DeltaVar, got.Bias2nd, mc*pa, wantVar)
		}
	}
}

// The design defines an arm's size as ceil(n × allocation) — of the
// numbers as written, in exact arithmetic. A decimal allocation is not
// exact in binary, and the float product can land one ulp above an
// integer: 100 × 1.1 is 110.00000000000001 in float64, whose ceiling is
// 111. A user who writes allocation = 1.1 and n = 100 means 110.
func TestPredictArmSizeDecimalAllocation(t *testing.T) {
	cases := []struct {
		alloc string
		n     int
		want  int // ceil(n × allocation) in exact decimal arithmetic
	}{
		{"1.1", 10, 11},
		{"1.1", 50, 55},
		{"1.1", 100, 110},
		{"0.07", 100, 7},
		{"0.1", 7, 1},    // 0.7 → 1: a true fraction still rounds up
		{"0.3", 10, 3},   //
		{"2.5", 3, 8},    // 7.5 → 8
		{"0.35", 20, 7},  //
		{"1.15", 20, 23}, //
	}
	for _, c := range cases {
		src := fmt.Sprintf(`seed = 1
sample_sizes = [%d]
[[arm]]
name = "a"
family = "bernoulli"
p = 0.5
allocation = %s
[[transform]]
name = "p"
expr = "a.p"
`, c.n, c.alloc)
		s := predictParse(t, src)
		if got := s.ArmSize(0, c.n); got != c.want {
			t.Errorf("allocation %s at n=%d: ArmSize = %d, want ceil(%d × %s) = %d", c.alloc, c.n, got, c.n, c.alloc, c.want)
		}
		// The report counts by the same rule from the saved study.
		if got := s.Info().ArmSizes(c.n); len(got) != 1 || got[0] != c.want {
			t.Errorf("allocation %s at n=%d: Info.ArmSizes = %v, want [%d]", c.alloc, c.n, got, c.want)
		}
		// The prediction must use the same size: p(1 − p)/n_arm.
		if got, want := s.Predict(0, c.n).DeltaVar, 0.25/float64(c.want); !predictClose(got, want, want) {
			t.Errorf("allocation %s at n=%d: delta_var = %.17g, want 0.25/%d = %.17g", c.alloc, c.n, got, c.want, want)
		}
	}
}
