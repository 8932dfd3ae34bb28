package measure

import (
	"math"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// Row is one transform at one sample size: every measure, every check and
// the verdict; one line of summary.csv.
type Row struct {
	Transform string
	N         int
	Values    []float64 // by measure, in table order (see Measures)
	Checks    []Check   // by criterion, in table order (see Criteria)
	Verdict   Verdict   // pass when every check passes, fail when any fails
}

// NewRow returns a row of transform at n with every measure missing (NaN)
// and every check unclear, to be filled by Set; for tests and for callers
// that build rows by hand.
func NewRow(transform string, n int) Row {
	r := Row{Transform: transform, N: n, Values: make([]float64, len(table)), Checks: make([]Check, len(criteria)), Verdict: Unclear}
	for i := range r.Values {
		r.Values[i] = nan
	}
	for i, c := range criteria {
		r.Checks[i] = Check{Low: nan, High: nan, Verdict: Unclear, Advisory: !study.DefaultCriteria(0.95).Decides(c.Key)}
	}
	return r
}

// Set sets the row's value of measure m.
func (r *Row) Set(m *Measure, v float64) { r.Values[m.index] = v }

// Get returns the row's value of measure m.
func (r Row) Get(m *Measure) float64 { return r.Values[m.index] }

// Count returns the row's value of a whole-number measure.
func (r Row) Count(m *Measure) int64 { return int64(r.Values[m.index]) }

// Check returns the row's check of criterion c.
func (r Row) Check(c *Criterion) Check { return r.Checks[c.index] }

// Summarize computes every row, transform by transform and n by n,
// deciding each criterion from its Monte Carlo interval at the quantile
// of GridDecisions, which makes each transform's answer hold with the
// study's family-wise confidence.
func Summarize(r *runner.Result) []Row {
	z := GridDecisions(r.Study).Z
	var rows []Row
	for t := range r.Study.Transforms {
		for ni := range r.Study.SampleSizes {
			rows = append(rows, SummarizeCell(r, t, ni, z))
		}
	}
	return rows
}

// SummarizeCell computes the row of transform t at sample size index ni,
// deciding each criterion from a Monte Carlo interval with normal
// quantile z (the planner widens it to spend its error over looks).
func SummarizeCell(r *runner.Result, t, ni int, z float64) Row {
	rc := r.Cells[t][ni]
	merged := rc.Merged()
	c := &Cell{
		Study: &r.Study, Cell: rc, Pred: r.Predictions[t][ni],
		Moments: merged.Moments, PluginVar: merged.PluginVar, Width: merged.Width, PluginOther: merged.PluginOther,
		Quantile: r.Study.Quantile(rc.N), Null: nan,
	}
	if null := r.Study.Transforms[t].Null; null != nil {
		c.Null = *null
	}
	c.SDDelta = math.Sqrt(c.Pred.DeltaVar)
	row := Row{
		Transform: r.Study.Transforms[t].Name, N: rc.N,
		Values: make([]float64, len(table)),
		Checks: make([]Check, len(criteria)),
	}
	for i, m := range table {
		row.Values[i] = m.Value(c, &row)
	}
	for i, cr := range criteria {
		lo, hi := cr.Interval(c, &row, z)
		row.Checks[i] = judge(lo, hi, cr.Band(r.Study.Criteria))
		row.Checks[i].Advisory = !r.Study.Criteria.Decides(cr.Key)
	}
	row.Verdict = combine(row.Checks)
	return row
}

// combine passes when every deciding check passes and fails when any
// fails; advisory checks decide nothing.
func combine(checks []Check) Verdict {
	v := Pass
	for _, c := range checks {
		if c.Advisory {
			continue
		}
		switch c.Verdict {
		case Fail:
			return Fail
		case Unclear:
			v = Unclear
		}
	}
	return v
}
