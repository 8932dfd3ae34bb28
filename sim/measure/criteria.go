package measure

import (
	"math"

	"deltaprobe/sim/study"
)

// A Criterion is one test of adequacy: a measure held against a band. At
// each n it is decided from a Monte Carlo interval for the measure: pass
// when the interval lies inside the band, fail when it lies wholly
// outside, unclear otherwise. The criteria form one table, in the order
// of their declarations in table.go; verdicts.csv's per-criterion columns
// (n_NAME), the page and the figures follow it. Adding a criterion is
// one declaration there (and a test).
type Criterion struct {
	Name    string // as verdicts.csv names it: limiting and n_NAME
	Key     string // as the study file names it: in [criteria] decide
	Title   string // a short panel title for figures
	Heading string // a longer title that says what is plotted
	Axis    string // the axis label of the measure
	Noun    string // the measure in a sentence: "the variance ratio"
	// Rule says when the criterion passes, for the pages: {interval}
	// stands for the kind of interval, {band} for the band.
	Rule  string
	Ratio bool // a ratio: figures may show it on a log axis
	// Ideal is the value the measure has when the approximation is exact,
	// given the study's nominal level; Nominal says it is that level.
	Ideal   func(level float64) float64
	Nominal bool
	Measure *Measure // the measure judged
	MCSE    *Measure // its Monte Carlo standard error
	// Band is the study's band for the measure.
	Band func(c study.Criteria) [2]float64
	// Interval is the measure's Monte Carlo interval with normal quantile z.
	Interval func(c *Cell, row *Row, z float64) (lo, hi float64)
	// Words describe a check that does not pass, for the run's page:
	// Below and Above when it fails on that side, Unclear otherwise.
	// Placeholders: {value} the measure, {interval} its Monte Carlo
	// interval, {band} the band, {bound} the band's upper edge, {crosses}
	// the interval and where it lies across the band.
	Below, Above, Unclear string
	index                 int
}

var criteria []*Criterion

// defineCriterion adds a criterion to the table.
func defineCriterion(c Criterion) *Criterion {
	return appendEntry(&criteria, c, func(c *Criterion, i int) { c.index = i })
}

// Criteria returns every criterion, in table order.
func Criteria() []*Criterion { return criteria }

// Column is the name of the criterion's own smallest adequate n, the
// same in verdicts.csv, the terminal and the pages: n_NAME.
func (c *Criterion) Column() string { return "n_" + c.Name }

// Index is the criterion's place in the table, and in Row.Checks.
func (c *Criterion) Index() int { return c.index }

// Check is one criterion at one n: its Monte Carlo interval and the band
// it is held against.
type Check struct {
	Low, High float64 // Monte Carlo interval
	Band      [2]float64
	Verdict   Verdict
	// Advisory: the criterion is not in the study's decide list, so it
	// is reported and decides nothing.
	Advisory bool
}

func judge(lo, hi float64, band [2]float64) Check {
	c := Check{Low: lo, High: hi, Band: band}
	switch {
	case math.IsNaN(lo) || math.IsNaN(hi):
		c.Verdict = Unclear
	case lo >= band[0] && hi <= band[1]:
		c.Verdict = Pass
	case hi < band[0] || lo > band[1]:
		c.Verdict = Fail
	default:
		c.Verdict = Unclear
	}
	return c
}

// wilson is the Wilson (1927) score interval for k successes in n trials,
// z the normal quantile of its level.
func wilson(k, n, z float64) (float64, float64) {
	if n == 0 {
		return math.NaN(), math.NaN()
	}
	p := k / n
	z2 := z * z
	centre := p + z2/(2*n)
	half := z * math.Sqrt(p*(1-p)/n+z2/(4*n*n))
	den := 1 + z2/n
	lo, hi := (centre-half)/den, (centre+half)/den
	// At k = 0 or k = n the bound is 0 or 1 exactly; rounding misses it.
	if k == 0 {
		lo = 0
	}
	if k == n {
		hi = 1
	}
	return lo, hi
}
