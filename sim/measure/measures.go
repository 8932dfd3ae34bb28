package measure

import (
	"math"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// A Measure is one number computed for each transform at each n. The
// measures form one table, in the order of their declarations in
// table.go; summary.csv writes those with a Group, in that order, between
// the transform and n in front and the verdict at the end, and the page
// and figures find them by group. Adding a measure is one declaration
// there (and a test); nothing else lists the columns.
type Measure struct {
	Name  string // column name in summary.csv (contract for the listed ones)
	Group Group  // the page table that shows it; Internal: not a column
	Count bool   // a whole number, written without a decimal point
	// Value computes the measure of one cell. It may read the measures
	// declared before it from row, but no later ones.
	Value func(c *Cell, row *Row) float64
	index int
}

// Group is the page table a measure appears in.
type Group int

// The groups, in the order of the page's tables.
const (
	Internal  Group = iota // computed and kept, but no column of summary.csv
	Counts                 // sizes and replicates
	Estimate               // estimate and bias
	Variance               // variance and its ratios
	Intervals              // interval coverage and the shape of τ̂
	Tests                  // the test of a transform's null
)

// Cell is what one transform's measures at one n are computed from: the
// saved tallies, the moments folded over blocks, the prediction, and the
// study, whose arms give the sizes behind n.
type Cell struct {
	Study     *study.Info
	Cell      *runner.Cell
	Pred      study.Prediction
	Moments   runner.Moments // of the defined estimates
	PluginVar float64        // mean plug-in variance over the defined replicates
	Width     float64        // mean interval width over the defined replicates
	// PluginOther is the mean of the other plug-in variance (the sandwich
	// where the intervals use the model-based one, and the other way
	// round) over the defined replicates; NaN where the run kept none.
	PluginOther float64
	SDDelta     float64 // √delta_var
	Quantile    float64 // the interval's quantile q at n
	Null        float64 // the transform's null; NaN when it has none
}

// RejectRate is the probability that |Z + δ| > q for Z ~ N(0, 1):
// Φ(−q − δ) + 1 − Φ(q − δ), the rejection rate of a two-sided Wald test
// whose estimate lies δ standard deviations from the null.
func RejectRate(q, delta float64) float64 {
	phi := func(x float64) float64 { return 0.5 * math.Erfc(-x/math.Sqrt2) }
	return phi(-q-delta) + phi(-q+delta)
}

// defined says the cell has at least k defined estimates.
func (c *Cell) defined(k int64) bool { return c.Moments.N >= k }

// table holds every measure in declaration order.
var table []*Measure

// define adds a measure to the table.
func define(m Measure) *Measure {
	return appendEntry(&table, m, func(m *Measure, i int) { m.index = i })
}

// appendEntry adds e to a table, telling it its place first, and returns
// the entry that the table holds.
func appendEntry[T any](table *[]*T, e T, place func(*T, int)) *T {
	place(&e, len(*table))
	*table = append(*table, &e)
	return &e
}

// Measures returns every measure, in table order.
func Measures() []*Measure { return table }

var nan = math.NaN()

// ifDefined returns x when the cell has at least k defined estimates, and
// NaN (no value) otherwise.
func ifDefined(c *Cell, k int64, x float64) float64 {
	if !c.defined(k) {
		return nan
	}
	return x
}

// share is k over all replicates, undefined ones included.
func share(c *Cell, k int64) float64 {
	if c.Cell.Replicates == 0 {
		return nan
	}
	return float64(k) / float64(c.Cell.Replicates)
}

// centralM2 is the second central moment with divisor R, when the shape
// measures exist (two defined estimates and some spread).
func centralM2(c *Cell) (float64, bool) {
	if !c.defined(2) {
		return 0, false
	}
	m2 := c.Moments.M2 / float64(c.Moments.N)
	return m2, m2 > 0
}
