package runner

// Moments holds a count, mean and central sums M2, M3, M4 of a set of
// values: computed for one block by momentsOf and merged pairwise with the
// formulas of Pébay (2008, Sandia report SAND2008-6212, eqs. 2.1–2.4, from
// memory), which generalise Chan, Golub & LeVeque (1979). Merging in a
// fixed order gives the same bits whatever the number of workers.
type Moments struct {
	N    int64   `json:"n"`
	Mean float64 `json:"mean"`
	M2   float64 `json:"m2"`
	M3   float64 `json:"m3"`
	M4   float64 `json:"m4"`
}

// Merge folds another set of moments in, as if its values had been added
// after this one's.
func (m *Moments) Merge(o Moments) {
	if o.N == 0 {
		return
	}
	if m.N == 0 {
		*m = o
		return
	}
	na, nb := float64(m.N), float64(o.N)
	n := na + nb
	delta := o.Mean - m.Mean
	d2 := delta * delta
	mean := m.Mean + delta*nb/n
	m2 := m.M2 + o.M2 + d2*na*nb/n
	m3 := m.M3 + o.M3 + d2*delta*na*nb*(na-nb)/(n*n) + 3*delta*(na*o.M2-nb*m.M2)/n
	m4 := m.M4 + o.M4 + d2*d2*na*nb*(na*na-na*nb+nb*nb)/(n*n*n) +
		6*d2*(na*na*o.M2+nb*nb*m.M2)/(n*n) + 4*delta*(na*o.M3-nb*m.M3)/n
	m.N += o.N
	m.Mean, m.M2, m.M3, m.M4 = mean, m2, m3, m4
}

// Var is the sample variance with divisor N − 1.
func (m *Moments) Var() float64 { return m.M2 / float64(m.N-1) }

// momentsOf returns the moments of xs in one call, by the corrected
// two-pass algorithm (Chan, Golub & LeVeque 1983, The American
// Statistician 37:242–247, from memory): the mean first, then the central
// power sums about it, then an exact shift to the mean corrected for the
// rounding left in it (e = Σd/n, Σ(d−e)^k expanded). It replaces
// Welford's per-value update, which the runner once used: per value a
// handful of independent multiply-adds instead of a dependent chain
// through a division, and at least as accurate.
func momentsOf(xs []float64) Moments {
	if len(xs) == 0 {
		return Moments{}
	}
	n := float64(len(xs))
	var sum float64
	for _, x := range xs {
		sum += x
	}
	mean := sum / n
	var s1, s2, s3, s4 float64
	for _, x := range xs {
		d := x - mean
		d2 := d * d
		s1 += d
		s2 += d2
		s3 += d2 * d
		s4 += d2 * d2
	}
	e := s1 / n
	return Moments{
		N:    int64(len(xs)),
		Mean: mean + e,
		M2:   s2 - s1*e,
		M3:   s3 - 3*e*s2 + 2*n*e*e*e,
		M4:   s4 - 4*e*s3 + 6*e*e*s2 - 3*n*e*e*e*e,
	}
}
