package regress

import (
	"math"

	"deltaprobe/sim/family"
)

// Newton's method settings. The fit stops after a step that moves no
// coefficient by more than stepTol·max(1, |β|): Newton converges
// quadratically to an MLE that exists, so the error left after such a
// step is of order stepTol² (about 1e-14), and its steps shrink to nothing,
// while under separation they stay of order one for ever (the
// log-likelihood creeps to its supremum along a direction). That is a
// symptom only; the proof either way is the linear program (separation.go),
// run when the steps have not settled after lpAfter iterations or the
// information cannot be factorised.
const (
	stepTol  = 1e-7
	maxIter  = 60
	lpAfter  = 6
	pivotTol = 1e-13 // a Cholesky pivot below this share of its diagonal entry counts as 0
)

// pad keeps a fitter's buffers, written per replicate, off other
// workers' cache lines (as expr.Evaluator pads its own).
const pad = 128

// fitter is one worker's workspace for fitting every equation of a
// model: all of it allocated once, in NewFitter.
type fitter struct {
	_     [pad]byte
	m     *Model
	z     []float64 // one row's design vector
	h     []float64 // information (p×p), then its Cholesky factor
	h2    []float64 // the unweighted XᵀX, for the rank check
	inv   []float64 // the inverse of h
	g     []float64 // score
	beta  []float64
	step  []float64
	trial []float64
	lp    simplex
	sb    []float64 // the robust plug-in's B (dim×dim)
	stmp  []float64 // and a product (dim×dim)
	sc    []float64 // and the model-based covariance (dim×dim)
	score []float64 // one row's stacked scores (dim)
	// other: the runner asked for the other variance too (EnableOther);
	// otherCov holds it after a successful Fit.
	other    bool
	otherCov []float64
	cnt      []float64 // rows per pattern, for a grouped equation
	ysum     []float64 // their outcomes' sum
	last     family.Failure
	_        [pad]byte
}

// NewFitter allocates a worker's buffers for samples of up to maxN rows.
func (m *Model) NewFitter(maxN int) family.Fitter {
	pmax := 0
	lpCols := 0
	for _, q := range m.eqs {
		pmax = max(pmax, q.p())
		switch q.fit {
		case Logistic:
			lpCols = max(lpCols, maxN)
		case Poisson:
			lpCols = max(lpCols, 2*maxN)
		}
	}
	d := 0
	if m.Robust {
		d = m.Dim()
	}
	buf := make([]float64, 4*pmax*pmax+5*pmax+2*m.patterns+3*d*d+d)
	take := func(k int) []float64 {
		s := buf[:k:k]
		buf = buf[k:]
		return s
	}
	f := &fitter{m: m}
	f.z, f.g, f.beta, f.step, f.trial = take(pmax), take(pmax), take(pmax), take(pmax), take(pmax)
	f.h, f.h2, f.inv = take(pmax*pmax), take(pmax*pmax), take(pmax*pmax)
	f.cnt, f.ysum = take(m.patterns), take(m.patterns)
	f.sb, f.stmp, f.sc, f.score = take(d*d), take(d*d), take(d*d), take(d)
	if lpCols > 0 {
		f.lp = newSimplex(pmax, lpCols)
	}
	return f
}

// LastFailure is the cause of the last failed Fit.
func (f *fitter) LastFailure() family.Failure { return f.last }

// Fit fits every equation by its own MLE and writes θ̂ and the plug-in
// per-observation covariance: n·I(θ̂)⁻¹, I the sample's information (the
// observed information, which for these canonical links is the expected
// information given the covariates), block-diagonal over the equations;
// or, for Model.Robust, the sandwich (robust.go).
// It reports false, with the cause in LastFailure, when an equation's
// MLE does not exist or its fit did not converge.
func (f *fitter) Fit(s *family.Sample, theta, cov []float64) bool {
	for i := range cov {
		cov[i] = 0
	}
	d := len(theta)
	for e := range f.m.eqs {
		q := &f.m.eqs[e]
		var ok bool
		if q.fit == Linear {
			ok = f.fitLinear(q, s)
		} else {
			ok = f.fitGLM(q, s)
		}
		if !ok {
			return false
		}
		p := q.p()
		copy(theta[q.off:], f.beta[:p])
		for a := 0; a < p; a++ {
			for b := 0; b < p; b++ {
				cov[(q.off+a)*d+q.off+b] = f.inv[a*p+b]
			}
		}
		if q.fit == Linear {
			theta[q.off+p] = f.step[0] // fitLinear leaves σ̂ there
			cov[(q.off+p)*d+q.off+p] = f.step[0] * f.step[0] / 2
		}
	}
	switch {
	case f.m.Robust && f.other:
		copy(f.otherCov, cov)
		f.sandwich(s, theta, cov)
	case f.m.Robust:
		f.sandwich(s, theta, cov)
	case f.other:
		copy(f.otherCov, cov)
		f.sandwich(s, theta, f.otherCov)
	}
	return true
}

// EnableOther makes Fit compute the other plug-in covariance too: the
// sandwich beside the model-based one, or the reverse.
func (f *fitter) EnableOther() {
	d := f.m.Dim()
	f.other = true
	f.otherCov = make([]float64, d*d)
	if len(f.score) < d {
		buf := make([]float64, 3*d*d+d)
		f.sb, f.stmp, f.sc, f.score = buf[:d*d], buf[d*d:2*d*d], buf[2*d*d:3*d*d], buf[3*d*d:]
	}
}

// OtherCov writes the other plug-in covariance of the last Fit; it
// reports false unless EnableOther was called.
func (f *fitter) OtherCov(cov []float64) bool {
	if !f.other {
		return false
	}
	copy(cov, f.otherCov)
	return true
}

// design fills f.z with row i's design vector for q: 1, then the terms.
func (f *fitter) design(q *eqn, row []float64) {
	z := f.z
	z[0] = 1
	for j, c := range q.cols {
		z[j+1] = row[c]
	}
}

// fitLinear is least squares by the Cholesky factor of XᵀX; σ̂ is
// sqrt(RSS/n) with the residuals summed in a second pass. It leaves β̂
// in f.beta, n·σ̂²(XᵀX)⁻¹ in f.inv and σ̂ in f.step[0].
func (f *fitter) fitLinear(q *eqn, s *family.Sample) bool {
	p, n, cols := q.p(), s.N, f.m.stride
	if n <= p {
		f.last = family.Singular
		return false
	}
	h, g := f.h[:p*p], f.g[:p]
	clear(h)
	clear(g)
	for i := 0; i < n; i++ {
		row := s.Data[i*cols : (i+1)*cols]
		f.design(q, row)
		y := row[q.out]
		accumulate(h, g, f.z[:p], 1, y)
	}
	mirror(h, p)
	if !cholesky(h, p) {
		f.last = family.Singular
		return false
	}
	beta := f.beta[:p]
	copy(beta, g)
	cholSolve(h, p, beta)
	var rss float64
	for i := 0; i < n; i++ {
		row := s.Data[i*cols : (i+1)*cols]
		f.design(q, row)
		r := row[q.out]
		for j := 0; j < p; j++ {
			r -= beta[j] * f.z[j]
		}
		rss += r * r
	}
	sigma2 := rss / float64(n)
	cholInverse(h, p, f.inv[:p*p], f.step[:p])
	scale := sigma2 * float64(n)
	for i := range f.inv[:p*p] {
		f.inv[i] *= scale
	}
	f.step[0] = math.Sqrt(sigma2)
	if !(sigma2 > 0) {
		f.last = family.Singular // an exact fit: no residual variation
		return false
	}
	return true
}

// accumulate adds w·zzᵀ to the lower triangle of h and r·z to g.
func accumulate(h, g, z []float64, w, r float64) {
	p := len(z)
	for a := 0; a < p; a++ {
		wa := w * z[a]
		g[a] += r * z[a]
		row := h[a*p : a*p+a+1]
		for b := range row {
			row[b] += wa * z[b]
		}
	}
}

// mirror copies the lower triangle of h to the upper.
func mirror(h []float64, p int) {
	for a := 0; a < p; a++ {
		for b := 0; b < a; b++ {
			h[b*p+a] = h[a*p+b]
		}
	}
}

// evaluate computes, at beta, the score into f.g and the information
// into f.h.
func (f *fitter) evaluate(q *eqn, s *family.Sample, beta []float64) {
	if q.grouped {
		f.evaluateGrouped(q, beta)
		return
	}
	p, n, cols := q.p(), s.N, f.m.stride
	h, g := f.h[:p*p], f.g[:p]
	clear(h)
	clear(g)
	for i := 0; i < n; i++ {
		row := s.Data[i*cols : (i+1)*cols]
		f.design(q, row)
		z := f.z[:p]
		eta := 0.0
		for j := range z {
			eta += beta[j] * z[j]
		}
		var mu, w float64
		if q.fit == Logistic {
			mu = expit(eta)
			w = mu * (1 - mu)
		} else {
			mu = math.Exp(eta)
			w = mu
		}
		accumulate(h, g, z, w, row[q.out]-mu)
	}
	mirror(h, p)
}

// logLik is the log-likelihood at beta, up to terms free of β.
func (f *fitter) logLik(q *eqn, s *family.Sample, beta []float64) float64 {
	p := q.p()
	var ll float64
	term := func(z []float64, y, count float64) {
		eta := 0.0
		for j := range z {
			eta += beta[j] * z[j]
		}
		if q.fit == Logistic {
			// log(1 + e^η) = max(η, 0) + log1p(e^(−|η|)).
			ll += y*eta - count*(math.Max(eta, 0)+math.Log1p(math.Exp(-math.Abs(eta))))
		} else {
			ll += y*eta - count*math.Exp(eta)
		}
	}
	if q.grouped {
		for k, c := range f.cnt {
			if c > 0 {
				term(q.patZ[k*p:(k+1)*p], f.ysum[k], c)
			}
		}
		return ll
	}
	stride := f.m.stride
	for i := 0; i < s.N; i++ {
		row := s.Data[i*stride : (i+1)*stride]
		f.design(q, row)
		term(f.z[:p], row[q.out], 1)
	}
	return ll
}

// evaluateGrouped is evaluate from the counts and outcome sums per
// pattern (group): the same sums, each pattern's rows added at once.
func (f *fitter) evaluateGrouped(q *eqn, beta []float64) {
	p := q.p()
	h, g := f.h[:p*p], f.g[:p]
	clear(h)
	clear(g)
	for k, c := range f.cnt {
		if c == 0 {
			continue
		}
		z := q.patZ[k*p : (k+1)*p]
		eta := 0.0
		for j := range z {
			eta += beta[j] * z[j]
		}
		var mu, w float64
		if q.fit == Logistic {
			mu = expit(eta)
			w = mu * (1 - mu)
		} else {
			mu = math.Exp(eta)
			w = mu
		}
		accumulate(h, g, z, c*w, f.ysum[k]-c*mu)
	}
	mirror(h, p)
}

// group sums a grouped equation's rows by pattern.
func (f *fitter) group(q *eqn, s *family.Sample) {
	clear(f.cnt)
	clear(f.ysum)
	stride, pcol := f.m.stride, f.m.cols
	for i := 0; i < s.N; i++ {
		row := s.Data[i*stride : (i+1)*stride]
		k := int(row[pcol])
		f.cnt[k]++
		f.ysum[k] += row[q.out]
	}
}

// fitGLM maximises a logistic or Poisson log-likelihood by Newton's
// method with step halving, leaving β̂ in f.beta and n·I(β̂)⁻¹ in f.inv.
func (f *fitter) fitGLM(q *eqn, s *family.Sample) bool {
	p, n, cols := q.p(), s.N, f.m.stride
	if n < p {
		f.last = family.Singular
		return false
	}
	var ybar float64
	if q.grouped {
		f.group(q, s)
		for _, y := range f.ysum {
			ybar += y
		}
	} else {
		for i := 0; i < n; i++ {
			ybar += s.Data[i*cols+q.out]
		}
	}
	ybar /= float64(n)
	beta := f.beta[:p]
	clear(beta)
	switch {
	case q.fit == Poisson && ybar == 0:
		f.last = family.ZeroCounts
		return false
	case q.fit == Logistic && (ybar == 0 || ybar == 1):
		f.last = family.Separation // every outcome alike: the intercept runs off
		return false
	}
	// Start at the true coefficients (θ* for a misfit): the
	// log-likelihood is concave, so the MLE, where it exists, is the same
	// from any start, and from the truth, O(1/√n) away, Newton needs the
	// fewest steps.
	copy(beta, q.start)
	f.evaluate(q, s, beta)
	checked := false // the linear program has shown that the MLE exists
	step, trial := f.step[:p], f.trial[:p]
	for it := 0; it < maxIter; it++ {
		h := f.h[:p*p]
		if !cholesky(h, p) {
			return f.classify(q, s, known(checked))
		}
		copy(step, f.g[:p])
		cholSolve(h, p, step)
		converged := true
		for j := range step {
			if math.Abs(step[j]) > stepTol*math.Max(1, math.Abs(beta[j])) {
				converged = false
			}
		}
		if converged {
			for j := range beta {
				beta[j] += step[j]
			}
			cholInverse(h, p, f.inv[:p*p], trial)
			for i := range f.inv[:p*p] {
				f.inv[i] *= float64(n)
			}
			return true
		}
		if it >= lpAfter && !checked {
			if !f.exists(q, s) {
				return f.classify(q, s, mleMissing)
			}
			checked = true
		}
		// Halve the step until the log-likelihood does not fall far. It
		// is concave, so along the step φ(t) = ℓ(β + t·δ) lies below its
		// tangent at t = 1: φ(1) ≥ φ(0) + φ'(1), φ'(1) = g(β + δ)ᵀδ. When
		// φ'(1) ≥ −½·φ'(0) (φ'(0) = gᵀδ, the Newton decrement) the step
		// is taken without computing ℓ (a logarithm a row): ℓ fell by at
		// most half the decrement, and for φ quadratic, the model Newton
		// steps by, it rose by at least a quarter of it. A step that
		// overshoots far makes φ'(1) large and negative; only then are
		// the two log-likelihoods compared and the step halved.
		accepted := false
		llOld := math.NaN()
		var rise float64 // φ'(0) = g(β)ᵀδ, the Newton decrement, > 0
		for j := range step {
			rise += f.g[j] * step[j]
		}
		for half := 0; half < 40; half++ {
			for j := range trial {
				trial[j] = beta[j] + step[j]
			}
			f.evaluate(q, s, trial)
			var slope float64
			for j := range step {
				slope += f.g[j] * step[j]
			}
			if slope >= -0.5*rise {
				accepted = true
				break
			}
			if math.IsNaN(llOld) {
				llOld = f.logLik(q, s, beta)
			}
			if llNew := f.logLik(q, s, trial); llNew >= llOld-1e-12*math.Abs(llOld) {
				accepted = true
				break
			}
			for j := range step {
				step[j] /= 2
			}
			rise /= 2
		}
		if !accepted {
			break
		}
		copy(beta, trial)
	}
	return f.classify(q, s, known(checked))
}

// existence is what the linear program has said of the MLE so far.
type existence uint8

const (
	mleUnknown existence = iota
	mleExists
	mleMissing
)

func known(checked bool) existence {
	if checked {
		return mleExists
	}
	return mleUnknown
}

// classify names why a GLM fit failed: a design without full column
// rank, an MLE that does not exist (shown by the linear program, run
// here unless it has run already), or, the MLE existing, no convergence.
func (f *fitter) classify(q *eqn, s *family.Sample, mle existence) bool {
	p, n, cols := q.p(), s.N, f.m.stride
	h2, g := f.h2[:p*p], f.g[:p]
	clear(h2)
	if q.grouped {
		for k, c := range f.cnt {
			accumulate(h2, g, q.patZ[k*p:(k+1)*p], c, 0)
		}
	} else {
		for i := 0; i < n; i++ {
			f.design(q, s.Data[i*cols:(i+1)*cols])
			accumulate(h2, g, f.z[:p], 1, 0)
		}
	}
	mirror(h2, p)
	switch {
	case !cholesky(h2, p):
		f.last = family.Singular
	case mle == mleMissing || (mle == mleUnknown && !f.exists(q, s)):
		if q.fit == Logistic {
			f.last = family.Separation
		} else {
			f.last = family.ZeroCounts
		}
	default:
		f.last = family.NotConverged
	}
	return false
}

// cholesky factors the symmetric p×p matrix h in place into L (lower
// triangle, row-major) with h = LLᵀ. It reports false when a pivot is
// not positive or below pivotTol of its diagonal entry: the matrix is
// singular to working precision.
func cholesky(h []float64, p int) bool {
	for j := 0; j < p; j++ {
		d := h[j*p+j]
		orig := d
		for k := 0; k < j; k++ {
			d -= h[j*p+k] * h[j*p+k]
		}
		if !(d > 0) || d <= pivotTol*orig {
			return false
		}
		d = math.Sqrt(d)
		h[j*p+j] = d
		for i := j + 1; i < p; i++ {
			v := h[i*p+j]
			for k := 0; k < j; k++ {
				v -= h[i*p+k] * h[j*p+k]
			}
			h[i*p+j] = v / d
		}
	}
	return true
}

// cholSolve solves LLᵀx = b in place (b becomes x).
func cholSolve(l []float64, p int, b []float64) {
	for i := 0; i < p; i++ {
		v := b[i]
		for k := 0; k < i; k++ {
			v -= l[i*p+k] * b[k]
		}
		b[i] = v / l[i*p+i]
	}
	for i := p - 1; i >= 0; i-- {
		v := b[i]
		for k := i + 1; k < p; k++ {
			v -= l[k*p+i] * b[k]
		}
		b[i] = v / l[i*p+i]
	}
}

// cholInverse writes (LLᵀ)⁻¹ into inv, column by column, using col (p
// long) as scratch.
func cholInverse(l []float64, p int, inv, col []float64) {
	for c := 0; c < p; c++ {
		clear(col[:p])
		col[c] = 1
		cholSolve(l, p, col[:p])
		for r := 0; r < p; r++ {
			inv[r*p+c] = col[r]
		}
	}
}
