package regress

import (
	"math"

	"deltaprobe/sim/family"
)

// Whether a logistic or Poisson MLE exists is decided exactly, by linear
// programming, rather than guessed from a fit that will not settle.
//
// Along a direction d the log-likelihood never falls, and no finite MLE
// exists, exactly when Ad ≥ 0 and Ad ≠ 0 for the matrix A whose rows are
//   - logistic: s_i·z_i, s_i = +1 for y_i = 1 and −1 for y_i = 0
//     (complete or quasi-complete separation; Albert & Anderson 1984,
//     Biometrika 71:1–10);
//   - Poisson: z_i and −z_i for y_i > 0, and −z_i for y_i = 0 (the
//     zero counts can be pushed to mean 0 without changing the others).
// With the design of full column rank, Ad = 0 only for d = 0, and by
// Stiemke's theorem of the alternative (from memory; e.g. Mangasarian
// 1969, Nonlinear Programming, ch. 2) such a d exists if and only if no
// strictly positive u solves Aᵀu = 0. Scaling u, that is: no u ≥ 1 with
// Aᵀu = 0, i.e. no v ≥ 0 with Aᵀv = −Aᵀ1: a phase-one simplex problem
// in p equations, solved below with Bland's rule (no cycling).

// exists reports whether the MLE of equation q exists for sample s (the
// design having full column rank).
func (f *fitter) exists(q *eqn, s *family.Sample) bool {
	p, n, cols := q.p(), s.N, f.m.stride
	lp := &f.lp
	lp.reset(p)
	if q.grouped {
		// Identical rows are one column: a positive weight on the column
		// spreads over its rows.
		for k, c := range f.cnt {
			if c == 0 {
				continue
			}
			z, y := q.patZ[k*p:(k+1)*p], f.ysum[k]
			switch {
			case q.fit == Logistic:
				if y > 0 {
					lp.add(z, 1)
				}
				if y < c {
					lp.add(z, -1)
				}
			case y > 0:
				lp.add(z, 1)
				lp.add(z, -1)
			default:
				lp.add(z, -1)
			}
		}
		return lp.feasible()
	}
	for i := 0; i < n; i++ {
		row := s.Data[i*cols : (i+1)*cols]
		f.design(q, row)
		z := f.z[:p]
		y := row[q.out]
		switch {
		case q.fit == Logistic && y == 1:
			lp.add(z, 1)
		case q.fit == Logistic:
			lp.add(z, -1)
		case y > 0:
			lp.add(z, 1)
			lp.add(z, -1)
		default:
			lp.add(z, -1)
		}
	}
	return lp.feasible()
}

// simplex is the tableau of the phase-one problem: find v ≥ 0 with
// Mv = b, M's columns the rows of A, b = −Σ of them. Rows 0..p−1 hold
// the constraints, row p the reduced costs; the columns are the m
// variables, then p artificial ones, then the right-hand side.
type simplex struct {
	t     []float64
	basis []int
	p, m  int // constraints, variables
	w     int // row width of the tableau as allocated
	scale float64
}

func newSimplex(pmax, maxCols int) simplex {
	w := maxCols + pmax + 1
	return simplex{t: make([]float64, (pmax+1)*w), basis: make([]int, pmax), w: w}
}

func (lp *simplex) reset(p int) {
	lp.p, lp.m, lp.scale = p, 0, 0
}

// add appends sign·z as a column of M.
func (lp *simplex) add(z []float64, sign float64) {
	j := lp.m
	for r, v := range z {
		lp.t[r*lp.w+j] = sign * v
		lp.scale = math.Max(lp.scale, math.Abs(v))
	}
	lp.m++
}

// feasible runs phase one and reports whether its optimum is 0.
func (lp *simplex) feasible() bool {
	p, m, w := lp.p, lp.m, lp.w
	rhs := m + p
	t := lp.t
	if lp.scale == 0 {
		return false
	}
	// b = −Σ columns; rows flipped so that b ≥ 0; artificials start basic.
	var bsum float64
	for r := 0; r < p; r++ {
		row := t[r*w : r*w+rhs+1]
		var b float64
		for j := 0; j < m; j++ {
			b -= row[j]
		}
		sign := 1.0
		if b < 0 {
			sign = -1
		}
		for j := 0; j < m; j++ {
			row[j] *= sign
		}
		for j := m; j < rhs; j++ {
			row[j] = 0
		}
		row[m+r] = 1
		row[rhs] = sign * b
		bsum += sign * b
		lp.basis[r] = m + r
	}
	cost := t[p*w : p*w+rhs+1]
	for j := 0; j <= rhs; j++ {
		var c float64
		if j < m || j == rhs {
			for r := 0; r < p; r++ {
				c -= t[r*w+j]
			}
		}
		cost[j] = c
	}
	eps := 1e-11 * lp.scale
	for iter := 0; iter < 50*(m+p); iter++ {
		enter := -1
		for j := 0; j < m; j++ { // Bland: the first improving column
			if cost[j] < -eps {
				enter = j
				break
			}
		}
		if enter < 0 {
			break
		}
		leave := -1
		var best float64
		for r := 0; r < p; r++ {
			a := t[r*w+enter]
			if a <= eps {
				continue
			}
			ratio := t[r*w+rhs] / a
			if leave < 0 || ratio < best || (ratio == best && lp.basis[r] < lp.basis[leave]) {
				leave, best = r, ratio
			}
		}
		if leave < 0 {
			break // unbounded cannot happen in phase one; stop safely
		}
		lp.pivot(leave, enter, rhs)
	}
	return -cost[rhs] <= 1e-9*(1+bsum)
}

// pivot makes column enter basic in row leave.
func (lp *simplex) pivot(leave, enter, rhs int) {
	w, t := lp.w, lp.t
	prow := t[leave*w : leave*w+rhs+1]
	inv := 1 / prow[enter]
	for j := range prow {
		prow[j] *= inv
	}
	prow[enter] = 1
	for r := 0; r <= lp.p; r++ {
		if r == leave {
			continue
		}
		row := t[r*w : r*w+rhs+1]
		a := row[enter]
		if a == 0 {
			continue
		}
		for j := range row {
			row[j] -= a * prow[j]
		}
		row[enter] = 0
	}
	lp.basis[leave] = enter
}
