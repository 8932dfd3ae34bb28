package regress

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
)

// The expected information and bias of designs with normal covariates,
// against closed forms and an independent one-dimensional quadrature, to
// the 1e-9 relative accuracy deltaprobe states.

const quadTol = 1e-9

// gaussMoments gives, for a design vector z = (1, x) with x Gaussian of
// mean mu and covariance s (diagonal entries sd²; zero elsewhere unless
// given), E[z zᵀ] and the vector E[z (zᵀAz)] from Isserlis' theorem for
// the third moments of a Gaussian (derived: E[w_a w_b w_c] = m_a m_b m_c
// + m_a S_bc + m_b S_ac + m_c S_ab for w ~ N(m, S)).
func gaussMoments(m []float64, s [][]float64, a []float64) (second []float64, third []float64) {
	p := len(m)
	second = make([]float64, p*p)
	third = make([]float64, p)
	for i := 0; i < p; i++ {
		for j := 0; j < p; j++ {
			second[i*p+j] = m[i]*m[j] + s[i][j]
		}
	}
	if a == nil {
		return second, third
	}
	for i := 0; i < p; i++ {
		for b := 0; b < p; b++ {
			for c := 0; c < p; c++ {
				e3 := m[i]*m[b]*m[c] + m[i]*s[b][c] + m[b]*s[i][c] + m[c]*s[i][b]
				third[i] += a[b*p+c] * e3
			}
		}
	}
	return second, third
}

func invertDense(a []float64, p int) []float64 {
	var inv mat.Dense
	if err := inv.Inverse(mat.NewDense(p, p, append([]float64(nil), a...))); err != nil {
		panic(err)
	}
	return inv.RawMatrix().Data
}

func relClose(t *testing.T, what string, got, want []float64, scale []float64, source string) {
	t.Helper()
	for i := range want {
		s := math.Abs(want[i])
		if scale != nil {
			s = scale[i]
		}
		if !(math.Abs(got[i]-want[i]) <= quadTol*s) {
			t.Errorf("%s[%d] = %.15g, want %.15g (%s): relative error %.2g", what, i, got[i], want[i], source, math.Abs(got[i]-want[i])/s)
		}
	}
}

// vecScale is the largest magnitude of v for each entry: the bias's
// entries are checked relative to the largest (some are exactly 0).
func vecScale(v []float64) []float64 {
	var m float64
	for _, x := range v {
		m = math.Max(m, math.Abs(x))
	}
	s := make([]float64, len(v))
	for i := range s {
		s[i] = m
	}
	return s
}

// covScale is √(Σ_aa Σ_bb) for each entry, the scale of a relative check
// of a covariance whose off-diagonal entries may be near 0.
func covScale(c []float64, p int) []float64 {
	s := make([]float64, p*p)
	for a := 0; a < p; a++ {
		for b := 0; b < p; b++ {
			s[a*p+b] = math.Sqrt(math.Abs(c[a*p+a] * c[b*p+b]))
		}
	}
	return s
}

func normalDesign(kind Kind, b0 float64, b, mu, sd []float64) *Design {
	d := &Design{Equations: []Equation{{Outcome: "y", Kind: kind, Intercept: b0, SD: 1}}}
	names := []string{"x1", "x2", "x3"}
	for j := range b {
		d.Covariates = append(d.Covariates, Covariate{Name: names[j], Dist: Normal, Mean: mu[j], SD: sd[j]})
		d.Equations[0].Terms = append(d.Equations[0].Terms, Term{Name: names[j], Value: b[j]})
	}
	return d
}

// Poisson with independent normal covariates: under the tilted law
// x ∝ e^η φ(x) the covariates stay independent normals with means
// μ_j + b_j s_j² (derived: completing the square), and E e^η =
// exp(b0 + Σ b_j μ_j + Σ b_j² s_j²/2). So I = E[e^η z zᵀ] and the bias
// term E[e^η z (zᵀI⁻¹z)] are Gaussian moments times that constant.
func TestExpectationsPoissonNormalClosedForm(t *testing.T) {
	for _, c := range []struct {
		b0        float64
		b, mu, sd []float64
	}{
		{0.2, []float64{0.5}, []float64{1}, []float64{0.8}},
		{-0.3, []float64{0.4, -0.6, 0.3}, []float64{0.5, 0, -1}, []float64{1, 0.7, 1.2}},
	} {
		m, err := New(normalDesign(Poisson, c.b0, c.b, c.mu, c.sd))
		if err != nil {
			t.Fatal(err)
		}
		p := len(c.b) + 1
		scale := c.b0
		mean := []float64{1}
		s := make([][]float64, p)
		for i := range s {
			s[i] = make([]float64, p)
		}
		for j := range c.b {
			scale += c.b[j]*c.mu[j] + c.b[j]*c.b[j]*c.sd[j]*c.sd[j]/2
			mean = append(mean, c.mu[j]+c.b[j]*c.sd[j]*c.sd[j])
			s[j+1][j+1] = c.sd[j] * c.sd[j]
		}
		k := math.Exp(scale)
		second, _ := gaussMoments(mean, s, nil)
		info := make([]float64, p*p)
		for i := range info {
			info[i] = k * second[i]
		}
		cov := invertDense(info, p)
		_, third := gaussMoments(mean, s, cov)
		bias := make([]float64, p)
		for a := 0; a < p; a++ {
			for b := 0; b < p; b++ {
				bias[a] -= 0.5 * cov[a*p+b] * k * third[b]
			}
		}
		got := make([]float64, p*p)
		m.Cov(m.truth, got)
		src := "derived: exponential tilting of independent normals"
		relClose(t, "poisson Σ", got, cov, covScale(cov, p), src)
		gotB := make([]float64, p)
		m.Bias(m.truth, gotB)
		relClose(t, "poisson bias", gotB, bias, vecScale(bias), src+"; Cox & Snell (1968) with Isserlis' third moments")
		t.Logf("p=%d: %d nodes per dimension", p, m.Nodes)
	}
}

// Logistic with three independent normal covariates: η is normal, and
// given η the covariates are normal with mean μ + c(η − m_η)/v_η and
// covariance diag(s²) − ccᵀ/v_η, c_j = b_j s_j² (derived: Gaussian
// conditioning). So every expectation is a one-dimensional integral over
// η, done here with gonum's 4000-point Gauss–Legendre rule on m_η ± 40
// sd_η: a different rule in a different dimension from the fitter's
// product rule.
func TestExpectationsLogisticNormalByConditioning(t *testing.T) {
	b0 := -0.4
	b := []float64{0.9, -0.7, 1.3}
	mu := []float64{0.3, -0.5, 1}
	sd := []float64{1, 1.4, 0.6}
	m, err := New(normalDesign(Logistic, b0, b, mu, sd))
	if err != nil {
		t.Fatal(err)
	}
	p := len(b) + 1
	meta, veta := b0, 0.0
	cvec := make([]float64, p)
	for j := range b {
		meta += b[j] * mu[j]
		veta += b[j] * b[j] * sd[j] * sd[j]
		cvec[j+1] = b[j] * sd[j] * sd[j]
	}
	sdeta := math.Sqrt(veta)
	cond := func(eta float64) ([]float64, [][]float64) {
		mean := []float64{1}
		for j := range b {
			mean = append(mean, mu[j]+cvec[j+1]*(eta-meta)/veta)
		}
		s := make([][]float64, p)
		for i := range s {
			s[i] = make([]float64, p)
			for k := 1; k < p; k++ {
				if i > 0 {
					s[i][k] = -cvec[i] * cvec[k] / veta
					if i == k {
						s[i][k] += sd[i-1] * sd[i-1]
					}
				}
			}
		}
		return mean, s
	}
	integrate := func(f func(eta float64) float64) float64 {
		return quad.Fixed(func(eta float64) float64 {
			z := (eta - meta) / sdeta
			return f(eta) * math.Exp(-z*z/2) / (sdeta * math.Sqrt(2*math.Pi))
		}, meta-40*sdeta, meta+40*sdeta, 4000, quad.Legendre{}, 0)
	}
	info := make([]float64, p*p)
	for i := 0; i < p*p; i++ {
		info[i] = integrate(func(eta float64) float64 {
			pr := 1 / (1 + math.Exp(-eta))
			mean, s := cond(eta)
			second, _ := gaussMoments(mean, s, nil)
			return pr * (1 - pr) * second[i]
		})
	}
	cov := invertDense(info, p)
	bias := make([]float64, p)
	third := make([]float64, p)
	for a := 0; a < p; a++ {
		third[a] = integrate(func(eta float64) float64 {
			pr := 1 / (1 + math.Exp(-eta))
			mean, s := cond(eta)
			_, th := gaussMoments(mean, s, cov)
			return pr * (1 - pr) * (1 - 2*pr) * th[a]
		})
	}
	for a := 0; a < p; a++ {
		for c := 0; c < p; c++ {
			bias[a] -= 0.5 * cov[a*p+c] * third[c]
		}
	}
	got := make([]float64, p*p)
	m.Cov(m.truth, got)
	src := "derived: Gaussian conditioning on η, gonum quad.Legendre"
	relClose(t, "logistic Σ", got, cov, covScale(cov, p), src)
	gotB := make([]float64, p)
	m.Bias(m.truth, gotB)
	relClose(t, "logistic bias", gotB, bias, vecScale(bias), src+"; Cox & Snell (1968)")
	t.Logf("%d nodes per dimension", m.Nodes)
}

// A levels design's expectations are exact sums: a logistic fit on k
// levels with n/k rows each has information Σ_j p_j(1−p_j) z_j z_jᵀ / k
// (derived), whatever the quadrature.
func TestExpectationsLevelsExact(t *testing.T) {
	d := &Design{
		Covariates: []Covariate{{Name: "dose", Dist: Levels, Values: []float64{0, 1, 2, 4}}},
		Equations:  []Equation{{Outcome: "y", Kind: Logistic, Intercept: -2, Terms: []Term{{"dose", 0.9}}}},
	}
	m, err := New(d)
	if err != nil {
		t.Fatal(err)
	}
	info := make([]float64, 4)
	for _, x := range []float64{0, 1, 2, 4} {
		pr := 1 / (1 + math.Exp(2-0.9*x))
		w := pr * (1 - pr) / 4
		info[0] += w
		info[1] += w * x
		info[2] += w * x
		info[3] += w * x * x
	}
	want := invertDense(info, 2)
	got := make([]float64, 4)
	m.Cov(m.truth, got)
	relClose(t, "levels Σ", got, want, covScale(want, 2), "derived: the balanced design's average")
	if m.Nodes != 0 {
		t.Errorf("a levels design used %d quadrature nodes; its sums are exact", m.Nodes)
	}
}

// Mediation: x ~ N(μx, sx²), m = a0 + a·x + e_m (sd σm), y = b0 + c·x +
// b·m + e_y (sd σy). The per-observation variances are σ_a² = σm²/sx² and
// σ_b² = σy²/Var(m | x) = σy²/σm² (derived: the inverse of E[zzᵀ]/σ² for
// each equation), and the fits are asymptotically independent, so the
// delta variance of a·b is (b²σ_a² + a²σ_b²)/n (Sobel 1982, Sociological
// Methodology 13:290–312).
func TestMediationSobel(t *testing.T) {
	const mux, sx, a0, a, sm, b0, c, b, sy = 1.5, 2.0, 0.3, 0.6, 1.2, -0.2, 0.25, 0.8, 0.9
	d := &Design{
		Chain:      true,
		Covariates: []Covariate{{Name: "x", Dist: Normal, Mean: mux, SD: sx}},
		Equations: []Equation{
			{Outcome: "m", Kind: Linear, Intercept: a0, Terms: []Term{{"x", a}}, SD: sm},
			{Outcome: "y", Kind: Linear, Intercept: b0, Terms: []Term{{"x", c}, {"m", b}}, SD: sy},
		},
	}
	m, err := New(d)
	if err != nil {
		t.Fatal(err)
	}
	names := d.ParamNames()
	want := []string{"m.intercept", "m.x", "m.sd", "y.intercept", "y.x", "y.m", "y.sd"}
	for i := range want {
		if names[i] != want[i] {
			t.Fatalf("parameter names %v, want %v", names, want)
		}
	}
	dim := len(names)
	cov := make([]float64, dim*dim)
	m.Cov(m.truth, cov)
	// g = ∂(a·b) = b at m.x (index 1), a at y.m (index 5).
	got := b*b*cov[1*dim+1] + 2*a*b*cov[1*dim+5] + a*a*cov[5*dim+5]
	sobel := b*b*sm*sm/(sx*sx) + a*a*sy*sy/(sm*sm)
	if math.Abs(got-sobel) > quadTol*sobel {
		t.Errorf("per-observation delta variance of m.x·y.m = %.15g, Sobel (1982) %.15g", got, sobel)
	}
}
