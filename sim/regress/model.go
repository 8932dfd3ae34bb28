package regress

import (
	"fmt"
	"math"
	"slices"

	"deltaprobe/sim/expr"
	"deltaprobe/sim/family"
	"deltaprobe/sim/stream"
)

// Model is a design at its true coefficients: the sampler, the estimator
// and the asymptotics of one arm. It is shared by every worker and never
// changed after New.
type Model struct {
	Design *Design
	eqs    []eqn
	ncov   int // covariate columns; outcomes follow
	cols   int // columns of a row: covariates, then one per equation
	slots  int // scratch a derived covariate's program needs
	stride int // floats per row: cols, and the pattern's number when grouped
	// patterns is the number of covariate patterns when every covariate
	// is discrete (levels, bernoulli, derived from them) and there are at
	// most maxPatterns of them, else 0. A row's pattern is then its
	// combination of levels, then its bernoulli bits: an equation whose
	// terms are all covariates is fitted from the counts and outcome sums
	// per pattern (the same MLE, in far fewer operations).
	patterns int
	patRows  [][]float64 // the covariate values of each pattern
	truth    []float64
	cov      []float64 // Σ(θ0), per observation, row-major
	bias     []float64 // b(θ0), per observation
	// Robust says the plug-in covariance is the sandwich (HC0) of the
	// stacked estimating equations rather than the inverse information.
	Robust bool
	// Nodes is the number of quadrature nodes per continuous dimension
	// the expected information was accepted at (0: no continuous
	// dimension, the averages are exact sums).
	Nodes int
}

// eqn is an equation as the sampler and fitter use it.
type eqn struct {
	kind Kind      // the family the outcome is drawn from
	fit  Kind      // the family fitted to it (kind unless refitted)
	cols []int     // the row's columns its terms multiply, in order
	out  int       // the row's column of its outcome
	beta []float64 // the true intercept, then the terms
	sd   float64   // Linear
	// start is where Newton starts: beta, or for a misfit the
	// pseudo-true coefficients (misfit.go).
	start []float64
	off   int // its first entry in θ
	dim   int // its entries in θ: len(beta), plus sd when fitted Linear
	// grouped: a logistic or Poisson equation on covariates only, in a
	// model with patterns; patMean is then each pattern's true mean of
	// the outcome, patZ its design vector (pattern-major, p each).
	grouped bool
	patMean []float64
	patZ    []float64
}

// p is the number of coefficients, intercept included.
func (e *eqn) p() int { return len(e.beta) }

// New checks a design that names only declared columns (the study file's
// decoder has checked names and values) and computes its expected
// information and bias at the truth. It refuses a design whose expected
// information is singular, naming the columns at fault.
func New(d *Design) (*Model, error) {
	m := &Model{Design: d, ncov: len(d.Covariates)}
	m.cols = m.ncov + len(d.Equations)
	column := map[string]int{}
	var names []string
	for i := range d.Covariates {
		c := &d.Covariates[i]
		if c.Dist == Derived {
			prog, err := expr.Compile(c.Expr, names)
			if err != nil {
				return nil, fmt.Errorf("covariate %s: %w", c.Name, err)
			}
			c.Program = prog
			m.slots = max(m.slots, prog.Slots())
		}
		column[c.Name] = i
		names = append(names, c.Name)
	}
	off := 0
	for ei, e := range d.Equations {
		q := eqn{kind: e.Kind, fit: e.Fitted(), out: m.ncov + ei, sd: e.SD, off: off}
		q.beta = append(q.beta, e.Intercept)
		for _, t := range e.Terms {
			col, ok := column[t.Name]
			if !ok {
				panic("regress: equation " + e.Outcome + " names an undeclared column " + t.Name)
			}
			q.cols = append(q.cols, col)
			q.beta = append(q.beta, t.Value)
		}
		q.start = q.beta
		q.dim = len(q.beta)
		if q.fit == Linear {
			q.dim++
		}
		if !slices.Contains(FitsData(q.fit), q.kind) {
			return nil, fmt.Errorf("equation %s: a %s fit of %s data is not offered", e.Outcome, q.fit, q.kind)
		}
		if q.fit != q.kind && d.Chain {
			return nil, fmt.Errorf("equation %s: a fit other than the data's family is offered for a model of one equation only", e.Outcome)
		}
		off += q.dim
		m.eqs = append(m.eqs, q)
		column[e.Outcome] = m.ncov + ei
	}
	m.truth = d.Truth()
	for _, q := range m.eqs {
		if q.fit != q.kind {
			// Room for the fitted layout; misfit fills it with θ*.
			m.truth = make([]float64, off)
		}
	}
	m.stride = m.cols
	m.setPatterns()
	if err := m.expectations(); err != nil {
		return nil, err
	}
	if err := m.misfits(); err != nil {
		return nil, err
	}
	return m, nil
}

// Model returns the family.Model of this design.
func (m *Model) Model() family.Model {
	return family.Model{Truth: m.truth, Sampler: m, Estimator: m, Asymptotics: m}
}

// Dim is the length of θ.
func (m *Model) Dim() int { return len(m.truth) }

// SampleLen is n rows of Design's columns (covariates in order, then
// each equation's outcome, then, for a design of patterns, the row's
// pattern number), row after row, and the scratch the derived
// covariates' programs need after them.
func (m *Model) SampleLen(n int) int { return n*m.stride + m.slots }

// Draw draws n rows. Levels covariates are assigned in turn, as one
// factorial design: row i takes the first levels covariate's value
// i mod k₁, the second's (i div k₁) mod k₂, and so on, so that each
// combination appears n/(k₁k₂…) times when n is a multiple of that.
func (m *Model) Draw(rng *stream.PCG, n int, s *Sample) {
	s.N = n
	stride := m.stride
	data := s.Data[:n*stride]
	scratch := s.Data[n*stride : n*stride+m.slots]
	cs := m.Design.Covariates
	combos := levelCombinations(cs)
	for i := 0; i < n; i++ {
		row := data[i*stride : (i+1)*stride]
		idx := i
		pattern, bit := i%combos, combos
		for c := range cs {
			cv := &cs[c]
			switch cv.Dist {
			case Levels:
				k := len(cv.Values)
				row[c] = cv.Values[idx%k]
				idx /= k
			case Bernoulli:
				row[c] = 0
				if rng.Float64() < cv.P {
					row[c] = 1
					pattern += bit
				}
				bit *= 2
			case Normal:
				row[c] = cv.Mean + cv.SD*rng.NormFloat64()
			case Uniform:
				row[c] = cv.Min + (cv.Max-cv.Min)*rng.Float64()
			case Derived:
				row[c] = cv.Program.ValueWith(row[:c], scratch)
			}
		}
		if m.patterns > 0 {
			row[m.cols] = float64(pattern)
		}
		for e := range m.eqs {
			q := &m.eqs[e]
			if q.grouped {
				mu := q.patMean[pattern]
				if q.kind == Logistic {
					row[q.out] = 0
					if rng.Float64() < mu {
						row[q.out] = 1
					}
				} else {
					row[q.out] = drawPoisson(rng, mu)
				}
				continue
			}
			eta := q.eta(row)
			switch q.kind {
			case Logistic:
				row[q.out] = 0
				if rng.Float64() < expit(eta) {
					row[q.out] = 1
				}
			case Poisson:
				row[q.out] = drawPoisson(rng, math.Exp(eta))
			case Linear:
				row[q.out] = eta + q.sd*rng.NormFloat64()
			}
		}
	}
}

// Sample is family.Sample, named here for Draw's signature.
type Sample = family.Sample

// eta is the true linear predictor of a row.
func (q *eqn) eta(row []float64) float64 {
	eta := q.beta[0]
	for j, c := range q.cols {
		eta += q.beta[j+1] * row[c]
	}
	return eta
}

// expit is 1/(1 + e^(−x)), computed without overflow.
func expit(x float64) float64 {
	if x >= 0 {
		return 1 / (1 + math.Exp(-x))
	}
	e := math.Exp(x)
	return e / (1 + e)
}

// drawPoisson draws a Poisson count of mean mu: by summing exponential
// waiting times below mean 10, and by Hörmann's (1993) transformed
// rejection (PTRS, Insurance: Mathematics and Economics 12:39–45) above.
func drawPoisson(rng *stream.PCG, mu float64) float64 {
	if mu < 10 {
		k, t := 0.0, rng.ExpFloat64()
		for t < mu {
			k++
			t += rng.ExpFloat64()
		}
		return k
	}
	slam := math.Sqrt(mu)
	loglam := math.Log(mu)
	b := 0.931 + 2.53*slam
	a := -0.059 + 0.02483*b
	invalpha := 1.1239 + 1.1328/(b-3.4)
	vr := 0.9277 - 3.6224/(b-2)
	for {
		u := rng.Float64() - 0.5
		v := rng.Float64()
		us := 0.5 - math.Abs(u)
		k := math.Floor((2*a/us+b)*u + mu + 0.43)
		if us >= 0.07 && v <= vr {
			return k
		}
		if k < 0 || (us < 0.013 && v > us) {
			continue
		}
		lg, _ := math.Lgamma(k + 1)
		if math.Log(v)+math.Log(invalpha)-math.Log(a/(us*us)+b) <= -mu+k*loglam-lg {
			return k
		}
	}
}

// Cov writes Σ(θ0), the inverse expected information of one row,
// block-diagonal over the equations (each is fitted by its own
// likelihood, and the joint likelihood factorises, so the blocks of the
// information between equations are zero). It is computed once, at the
// truth; theta must be the truth. It is also the limit of the robust
// plug-in: the data come from the model fitted, so the sandwich's B (the
// scores' covariance) equals A, the information, equation by equation,
// and between equations E[s_y s_mᵀ] = E[E(s_y | x, m) s_mᵀ] = 0 because a
// later equation's score has mean zero given the earlier outcomes it
// conditions on (derived). An equation fitted by another family than
// its data's (Refit) has instead the sandwich A⁻¹BA⁻¹ at θ* under the
// data law as its block (misfit.go), and theta must then be θ*.
func (m *Model) Cov(theta, cov []float64) {
	m.checkTruth(theta)
	copy(cov, m.cov)
}

// Bias writes b(θ0), the O(1/n) bias per observation: for the logistic
// and Poisson equations (canonical links, so the second derivatives of
// the log-likelihood are not random given the covariates) Cox & Snell's
// (1968) formula reduces to b = −½ I⁻¹ E[κ”'(η) z (zᵀI⁻¹z)], κ the
// cumulant function (κ”' = p(1−p)(1−2p), resp. exp(η)); for a linear
// equation the coefficients are unbiased and sd = sqrt(RSS/n) has bias
// −sd(2p+1)/4, from E sqrt(χ²ₖ) = sqrt(k)(1 − 1/(4k)) + O(k^(−3/2)) with
// k = n − p (derived). A refitted equation's entries are NaN: its
// O(1/n) bias is not derived.
func (m *Model) Bias(theta, bias []float64) {
	m.checkTruth(theta)
	copy(bias, m.bias)
}

func (m *Model) checkTruth(theta []float64) {
	for i, v := range theta {
		if v != m.truth[i] {
			panic("regress: Cov and Bias are computed at the truth only")
		}
	}
}

// Describe is the design in words, with the accuracy of its expected
// information.
func (m *Model) Describe() string {
	s := m.Design.Describe()
	if m.Nodes > 0 {
		s += fmt.Sprintf("; expected information by Gauss–Hermite/Legendre product rules with %d nodes per continuous dimension (agreeing with half as many to 1e-11)", m.Nodes)
	} else {
		s += "; expected information exact (averages over the levels and binary values)"
	}
	if m.Design.Misfit() {
		s += "; the pseudo-true θ* of the fit and the sandwich at θ* under the data law by the same averages (y's moments given the covariates exactly)"
	}
	return s
}

// maxPatterns bounds the covariate patterns a grouped fit keeps.
const maxPatterns = 4096

// setPatterns enumerates the covariate patterns of a discrete design and
// marks the equations fitted from them.
func (m *Model) setPatterns() {
	cs := m.Design.Covariates
	count := levelCombinations(cs)
	for _, c := range cs {
		switch c.Dist {
		case Bernoulli:
			count *= 2
		case Normal, Uniform:
			return
		}
		if count > maxPatterns {
			return
		}
	}
	m.patterns = count
	m.stride = m.cols + 1
	combos := levelCombinations(cs)
	scratch := make([]float64, m.slots)
	for pattern := 0; pattern < count; pattern++ {
		row := make([]float64, m.cols)
		idx, bits := pattern%combos, pattern/combos
		for c := range cs {
			cv := &cs[c]
			switch cv.Dist {
			case Levels:
				k := len(cv.Values)
				row[c] = cv.Values[idx%k]
				idx /= k
			case Bernoulli:
				row[c] = float64(bits % 2)
				bits /= 2
			case Derived:
				row[c] = cv.Program.ValueWith(row[:c], scratch)
			}
		}
		m.patRows = append(m.patRows, row[:m.ncov])
	}
	for e := range m.eqs {
		q := &m.eqs[e]
		if q.kind == Linear {
			continue
		}
		q.grouped = true
		for _, c := range q.cols {
			q.grouped = q.grouped && c < m.ncov
		}
		if !q.grouped {
			continue
		}
		row := make([]float64, m.cols)
		for _, pr := range m.patRows {
			copy(row, pr)
			eta := q.eta(row)
			mu := math.Exp(eta)
			if q.kind == Logistic {
				mu = expit(eta)
			}
			q.patMean = append(q.patMean, mu)
			q.patZ = append(q.patZ, 1)
			for _, c := range q.cols {
				q.patZ = append(q.patZ, row[c])
			}
		}
	}
}
