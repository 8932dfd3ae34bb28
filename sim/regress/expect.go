package regress

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/mat"
)

// The expected information per row, E[z zᵀ w(η)] for each equation, and
// the bias term E[κ'''(η) z (zᵀI⁻¹z)], are expectations over the joint
// law of a row: the covariates, then each outcome that a later equation
// uses, given the columns before it. They are computed as a product rule
// over one dimension per column:
//   - levels: every level, weight 1/k (the balanced design's exact
//     average; at an n that is not a multiple of the combinations the
//     design drawn differs by at most one row per combination);
//   - bernoulli, and a logistic outcome: its two values;
//   - normal, and a linear outcome: N-point Gauss–Hermite;
//   - uniform: N-point Gauss–Legendre;
//   - a Poisson outcome: its counts from mean − 12√mean − 12 to
//     mean + 12√mean + 30 (a tail far below 1e-17);
//   - derived: its value at the point.
// With no normal, uniform or linear dimension the sums are exact. Else N
// starts at 8 and doubles until the rules at N and 2N agree to 1e-11 of
// the information's scale (√(I_aa I_bb) for entry ab) and 1e-10 of the
// bias's, and the 2N rule is kept; a Gaussian rule on these smooth
// integrands converges geometrically, so the kept one is far closer than
// that. More than maxPoints points per rule is refused.

const (
	maxPoints = 1 << 24
	infoTol   = 1e-11
	biasTol   = 1e-10
)

// expectations computes m.cov and m.bias at the truth.
func (m *Model) expectations() error {
	continuous := 0
	for _, c := range m.Design.Covariates {
		if c.Dist == Normal || c.Dist == Uniform {
			continuous++
		}
	}
	used := m.usedOutcomes()
	for e, q := range m.eqs {
		if used[e] && q.kind == Linear {
			continuous++
		}
	}
	// The discrete dimensions' points, to refuse a rule too large before
	// computing it (a Poisson outcome's counts are not known here; the
	// walk itself counts them).
	discrete := 1.0
	for _, c := range m.Design.Covariates {
		switch c.Dist {
		case Levels:
			discrete *= float64(len(c.Values))
		case Bernoulli:
			discrete *= 2
		}
	}
	for e, q := range m.eqs {
		if used[e] && q.kind == Logistic {
			discrete *= 2
		}
	}
	if discrete > maxPoints {
		return fmt.Errorf("the design has %.3g combinations of discrete values (levels, bernoulli covariates, binary outcomes used as covariates); at most %d are accepted for the expected information", discrete, maxPoints)
	}
	if continuous == 0 {
		info, bias, err := m.moments(0, used)
		if err != nil {
			return err
		}
		return m.finish(info, bias)
	}
	prevInfo, prevBias, err := m.moments(8, used)
	if err != nil {
		return err
	}
	for nodes := 16; ; nodes *= 2 {
		if discrete*math.Pow(float64(nodes), float64(continuous)) > maxPoints {
			return fmt.Errorf("the expected information could not be computed to the accuracy deltaprobe needs (about 1e-9 relative) within %d quadrature points: %d continuous dimensions (normal or uniform covariates, linear outcomes used as covariates); use fewer, or levels", maxPoints, continuous)
		}
		info, bias, err := m.moments(nodes, used)
		if err != nil {
			return err
		}
		if m.agree(prevInfo, info, prevBias, bias) {
			m.Nodes = nodes
			return m.finish(info, bias)
		}
		prevInfo, prevBias = info, bias
	}
}

// usedOutcomes says which equations' outcomes a later equation uses.
func (m *Model) usedOutcomes() []bool {
	used := make([]bool, len(m.eqs))
	for _, q := range m.eqs {
		for _, c := range q.cols {
			if c >= m.ncov {
				used[c-m.ncov] = true
			}
		}
	}
	return used
}

// agree compares two rules' results entry by entry.
func (m *Model) agree(i1, i2 [][]float64, b1, b2 [][]float64) bool {
	for e := range i1 {
		p := m.eqs[e].p()
		var bscale float64
		for _, v := range b2[e] {
			bscale = math.Max(bscale, math.Abs(v))
		}
		for a := 0; a < p; a++ {
			for b := 0; b < p; b++ {
				s := math.Sqrt(i2[e][a*p+a] * i2[e][b*p+b])
				if !(math.Abs(i1[e][a*p+b]-i2[e][a*p+b]) <= infoTol*s) {
					return false
				}
			}
			if !(math.Abs(b1[e][a]-b2[e][a]) <= biasTol*bscale) {
				return false
			}
		}
	}
	return true
}

// rule is the nodes and weights of one continuous dimension at N nodes,
// for the standard normal and for the uniform on [0, 1].
type rule struct {
	hx, hw []float64 // standard normal
	lx, lw []float64 // uniform on [0, 1]
}

func newRule(n int) rule {
	r := rule{hx: make([]float64, n), hw: make([]float64, n), lx: make([]float64, n), lw: make([]float64, n)}
	if n == 0 {
		return r
	}
	quad.Hermite{}.FixedLocations(r.hx, r.hw, math.Inf(-1), math.Inf(1))
	for i := range r.hx { // ∫ f(x) e^(−x²) dx → E f(Z) with x = z/√2
		r.hx[i] *= math.Sqrt2
		r.hw[i] /= math.SqrtPi
	}
	quad.Legendre{}.FixedLocations(r.lx, r.lw, 0, 1)
	return r
}

// moments computes each equation's information (p×p, per row, for the
// coefficients) and bias term at N nodes per continuous dimension, by
// two walks over the points: the second needs the first's inverse.
func (m *Model) moments(nodes int, used []bool) (info, bias [][]float64, err error) {
	r := newRule(nodes)
	info = make([][]float64, len(m.eqs))
	third := make([][]float64, len(m.eqs))
	inv := make([][]float64, len(m.eqs))
	for e, q := range m.eqs {
		info[e] = make([]float64, q.p()*q.p())
		third[e] = make([]float64, q.p())
	}
	z := make([]float64, m.cols+1)
	for pass := 0; pass < 2; pass++ {
		row := make([]float64, m.cols)
		points := 0
		m.walk(r, used, make([]float64, m.slots), 0, row, 1, func(row []float64, wt float64) {
			points++
			for e := range m.eqs {
				q := &m.eqs[e]
				p := q.p()
				z[0] = 1
				for j, c := range q.cols {
					z[j+1] = row[c]
				}
				eta := q.eta(row)
				var w, k3 float64
				switch q.kind {
				case Logistic:
					pr := expit(eta)
					w = pr * (1 - pr)
					k3 = w * (1 - 2*pr)
				case Poisson:
					w = math.Exp(eta)
					k3 = w
				case Linear:
					w = 1 / (q.sd * q.sd)
				}
				if pass == 0 {
					for a := 0; a < p; a++ {
						for b := 0; b < p; b++ {
							info[e][a*p+b] += wt * w * z[a] * z[b]
						}
					}
					continue
				}
				if q.kind == Linear {
					continue
				}
				var hq float64 // zᵀ I⁻¹ z
				for a := 0; a < p; a++ {
					for b := 0; b < p; b++ {
						hq += z[a] * inv[e][a*p+b] * z[b]
					}
				}
				for a := 0; a < p; a++ {
					third[e][a] += wt * k3 * z[a] * hq
				}
			}
		})
		if points > maxPoints {
			return nil, nil, fmt.Errorf("the expected information needs %d quadrature points, more than the %d accepted; use fewer continuous covariates or levels", points, maxPoints)
		}
		if pass == 0 {
			for e := range m.eqs {
				if err := m.nonSingular(e, info[e]); err != nil {
					return nil, nil, err
				}
				inv[e] = invert(info[e], m.eqs[e].p())
			}
		}
	}
	bias = make([][]float64, len(m.eqs))
	for e, q := range m.eqs {
		p := q.p()
		bias[e] = make([]float64, p)
		if q.kind == Linear {
			continue
		}
		for a := 0; a < p; a++ {
			for b := 0; b < p; b++ {
				bias[e][a] -= 0.5 * inv[e][a*p+b] * third[e][b]
			}
		}
	}
	return info, bias, nil
}

// walk visits every point of the product rule from column c on, with the
// columns before c set in row and wt their weight.
func (m *Model) walk(r rule, used []bool, scratch []float64, c int, row []float64, wt float64, visit func([]float64, float64)) {
	if c == m.cols {
		visit(row, wt)
		return
	}
	next := func(v, w float64) {
		row[c] = v
		m.walk(r, used, scratch, c+1, row, wt*w, visit)
	}
	if c >= m.ncov {
		e := c - m.ncov
		q := &m.eqs[e]
		if !used[e] {
			next(0, 1)
			return
		}
		eta := q.eta(row)
		switch q.kind {
		case Logistic:
			pr := expit(eta)
			next(0, 1-pr)
			next(1, pr)
		case Poisson:
			mu := math.Exp(eta)
			lo := math.Max(0, math.Floor(mu-12*math.Sqrt(mu)-12))
			hi := math.Ceil(mu + 12*math.Sqrt(mu) + 30)
			for k := lo; k <= hi; k++ {
				lg, _ := math.Lgamma(k + 1)
				next(k, math.Exp(k*math.Log(mu)-mu-lg))
			}
		case Linear:
			for i, x := range r.hx {
				next(eta+q.sd*x, r.hw[i])
			}
		}
		return
	}
	cv := &m.Design.Covariates[c]
	switch cv.Dist {
	case Levels:
		for _, v := range cv.Values {
			next(v, 1/float64(len(cv.Values)))
		}
	case Bernoulli:
		next(0, 1-cv.P)
		next(1, cv.P)
	case Normal:
		for i, x := range r.hx {
			next(cv.Mean+cv.SD*x, r.hw[i])
		}
	case Uniform:
		for i, x := range r.lx {
			next(cv.Min+(cv.Max-cv.Min)*x, r.lw[i])
		}
	case Derived:
		next(cv.Program.ValueWith(row[:c], scratch), 1)
	}
}

// nonSingular refuses an information matrix that is singular or not
// finite, naming the columns of the design that are linearly dependent.
func (m *Model) nonSingular(e int, info []float64) error {
	q := &m.eqs[e]
	p := q.p()
	names := m.columnNames(e)
	for a := 0; a < p; a++ {
		for b := 0; b < p; b++ {
			if v := info[a*p+b]; math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("%sthe expected information is not finite at the truth (an expected count exp(η) overflows); use coefficients that keep η moderate", m.equationLabel(e))
			}
		}
	}
	// Scale to a correlation-like matrix, then look for a null direction.
	scaled := mat.NewSymDense(p, nil)
	for a := 0; a < p; a++ {
		for b := 0; b < p; b++ {
			s := math.Sqrt(info[a*p+a] * info[b*p+b])
			v := 0.0
			if s > 0 {
				v = info[a*p+b] / s
			}
			scaled.SetSym(a, b, v)
		}
	}
	var zeroCols []string
	for a := 0; a < p; a++ {
		if !(info[a*p+a] > 0) {
			zeroCols = append(zeroCols, names[a])
		}
	}
	if len(zeroCols) > 0 {
		return fmt.Errorf("%sthe expected information is singular at the truth: %s %s always 0 under the design; a coefficient for it cannot be estimated", m.equationLabel(e), strings.Join(zeroCols, ", "), isAre(len(zeroCols)))
	}
	var eig mat.EigenSym
	if !eig.Factorize(scaled, true) {
		return errors.New(m.equationLabel(e) + "the expected information could not be checked (its eigendecomposition failed)")
	}
	vals := eig.Values(nil)
	if vals[0] > 1e-10 {
		return nil
	}
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	type part struct {
		name string
		v    float64
	}
	var parts []part
	for a := 0; a < p; a++ {
		if v := vecs.At(a, 0); math.Abs(v) > 1e-4 {
			parts = append(parts, part{names[a], v})
		}
	}
	sort.Slice(parts, func(i, j int) bool { return math.Abs(parts[i].v) > math.Abs(parts[j].v) })
	var dep []string
	for _, pt := range parts {
		dep = append(dep, pt.name)
	}
	return fmt.Errorf("%sthe expected information is singular at the truth: the columns %s are linearly dependent under the design (a covariate that is constant, or a combination of others, such as a derived covariate linear in the ones it uses), so their coefficients cannot be told apart", m.equationLabel(e), strings.Join(dep, ", "))
}

func isAre(n int) string {
	if n == 1 {
		return "is"
	}
	return "are"
}

// columnNames names equation e's design columns: intercept, then terms.
func (m *Model) columnNames(e int) []string {
	names := []string{"intercept"}
	for _, t := range m.Design.Equations[e].Terms {
		names = append(names, t.Name)
	}
	return names
}

func (m *Model) equationLabel(e int) string {
	if !m.Design.Chain {
		return ""
	}
	return "equation " + m.Design.Equations[e].Outcome + ": "
}

// invert inverts a symmetric positive-definite p×p matrix.
func invert(a []float64, p int) []float64 {
	l := append([]float64(nil), a...)
	if !cholesky(l, p) {
		panic("regress: invert of a matrix that nonSingular accepted")
	}
	inv := make([]float64, p*p)
	cholInverse(l, p, inv, make([]float64, p))
	return inv
}

// finish assembles Σ and b over the equations from each equation's
// information and bias term.
func (m *Model) finish(info, bias [][]float64) error {
	d := len(m.truth)
	m.cov = make([]float64, d*d)
	m.bias = make([]float64, d)
	for e, q := range m.eqs {
		p := q.p()
		inv := invert(info[e], p)
		for a := 0; a < p; a++ {
			for b := 0; b < p; b++ {
				m.cov[(q.off+a)*d+q.off+b] = inv[a*p+b]
			}
			m.bias[q.off+a] = bias[e][a]
		}
		if q.kind == Linear {
			// Information 2/σ² for σ, none between σ and β.
			m.cov[(q.off+p)*d+q.off+p] = q.sd * q.sd / 2
			m.bias[q.off+p] = -q.sd * float64(2*p+1) / 4
		}
	}
	return nil
}
