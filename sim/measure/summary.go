package measure

import (
	"fmt"
	"math"
	"strings"

	"deltaprobe/sim/runner"
)

// mcZ is the normal quantile of the two-sided 95% Monte Carlo intervals
// that decide each criterion.
const mcZ = 1.959963984540054

// Row is one line of summary.csv: one transform at one sample size.
type Row struct {
	Transform     string
	N             int
	Replicates    int64
	Undefined     int64
	Truth         float64
	Mean          float64
	Bias          float64
	BiasMCSE      float64
	RelBias       float64
	StdBias       float64
	Bias2nd       float64
	EmpVar        float64
	EmpVarMCSE    float64
	DeltaVar      float64
	VarRatio      float64
	VarRatioMCSE  float64
	PluginVar     float64
	PluginRatio   float64
	Coverage      float64
	CoverageMCSE  float64
	MissBelow     float64
	MissAbove     float64
	RobustSE      float64
	Skewness      float64
	ExKurtosis    float64
	KSPivot       float64
	Verdict       Verdict
	Checks        [3]Check // coverage, variance, bias
	FitFailures   int64
	ZeroSE        int64
	StdBiasMCSE   float64
	CoverageRange [2]float64 // Wilson 95% interval of the coverage
}

// Verdict is the outcome of a criterion or of all of them.
type Verdict string

// The three outcomes of a check against its band.
const (
	Pass    Verdict = "pass"
	Fail    Verdict = "fail"
	Unclear Verdict = "unclear"
)

// Criterion names, as verdicts.csv's limiting column uses them.
var CriterionNames = [3]string{"coverage", "variance", "bias"}

// Check is one criterion at one n: its Monte Carlo 95% interval and the
// band it is held against.
type Check struct {
	Low, High float64 // Monte Carlo interval
	Band      [2]float64
	Verdict   Verdict
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

// Summarize computes every summary row, transform by transform and n by
// n, deciding each criterion from its Monte Carlo 95% interval.
func Summarize(r *runner.Result) []Row {
	var rows []Row
	for t, info := range r.Study.Transforms {
		for ni := range r.Study.SampleSizes {
			rows = append(rows, row(r, t, ni, info.Name, mcZ))
		}
	}
	return rows
}

// SummarizeCell computes the row of transform t at sample size index ni,
// deciding each criterion from a Monte Carlo interval with normal
// quantile z (the planner widens it to spend its error over looks).
func SummarizeCell(r *runner.Result, t, ni int, z float64) Row {
	return row(r, t, ni, r.Study.Transforms[t].Name, z)
}

func row(r *runner.Result, t, ni int, name string, z float64) Row {
	c := r.Cells[t][ni]
	p := r.Predictions[t][ni]
	cm := c.Merged()
	m := cm.Moments
	row := Row{
		Transform: name, N: c.N, Replicates: c.Replicates, Undefined: c.Undefined,
		Truth: p.Truth, DeltaVar: p.DeltaVar, Bias2nd: p.Bias2nd,
		FitFailures: c.FitFailures, ZeroSE: c.ZeroSE,
	}
	nan := math.NaN()
	rd := float64(m.N)
	row.Mean, row.Bias, row.BiasMCSE, row.RelBias, row.StdBias, row.StdBiasMCSE = nan, nan, nan, nan, nan, nan
	row.EmpVar, row.EmpVarMCSE, row.VarRatio, row.VarRatioMCSE = nan, nan, nan, nan
	row.PluginVar, row.PluginRatio, row.Skewness, row.ExKurtosis = nan, nan, nan, nan
	sdDelta := math.Sqrt(p.DeltaVar)
	if m.N >= 1 {
		row.Mean = m.Mean
		row.Bias = m.Mean - p.Truth
		row.StdBias = row.Bias / sdDelta
		if p.Truth != 0 {
			row.RelBias = row.Bias / p.Truth
		}
		row.PluginVar = cm.PluginVar
	}
	if m.N >= 2 {
		s2 := m.Var()
		row.EmpVar = s2
		// Morris, White & Crowther (2019): MCSE of the bias is sqrt(s²/R).
		row.BiasMCSE = math.Sqrt(s2 / rd)
		row.StdBiasMCSE = row.BiasMCSE / sdDelta
		// Kurtosis-aware Var(s²) = (μ4 − σ⁴(R−3)/(R−1))/R, which is
		// 2σ⁴/(R−1) for normal data (Morris et al. 2019, Table 6's
		// normal-theory form; general form e.g. Cho et al. 2005, from memory).
		m4 := m.M4 / rd
		varS2 := (m4 - s2*s2*(rd-3)/(rd-1)) / rd
		row.EmpVarMCSE = math.Sqrt(math.Max(varS2, 0))
		row.VarRatio = p.DeltaVar / s2
		row.VarRatioMCSE = row.VarRatio * row.EmpVarMCSE / s2
		row.PluginRatio = cm.PluginVar / s2
		m2 := m.M2 / rd
		if m2 > 0 {
			row.Skewness = (m.M3 / rd) / math.Pow(m2, 1.5)
			row.ExKurtosis = m4/(m2*m2) - 3
		}
	}
	R := float64(c.Replicates)
	row.Coverage, row.CoverageMCSE, row.MissBelow, row.MissAbove = nan, nan, nan, nan
	if c.Replicates > 0 {
		row.Coverage = float64(c.Covered) / R
		row.CoverageMCSE = math.Sqrt(row.Coverage * (1 - row.Coverage) / R)
		row.MissBelow = float64(c.MissBelow) / R
		row.MissAbove = float64(c.MissAbove) / R
	}
	// robust_se: the interquartile range of τ̂ over that of N(0, 1),
	// 2·Φ⁻¹(0.75) (common practice); it exists even when Var τ̂ does not.
	const iqrNormal = 2 * 0.6744897501960817
	row.RobustSE = (c.Delta.Quantile(0.75) - c.Delta.Quantile(0.25)) * sdDelta / iqrNormal
	row.KSPivot = c.Wald.KSNormal()

	crit := r.Study.Criteria
	lo, hi := wilson(float64(c.Covered), R, z)
	row.CoverageRange = [2]float64{lo, hi}
	row.Checks[0] = judge(lo, hi, crit.Coverage)
	vlo, vhi := nan, nan
	if !math.IsNaN(row.EmpVarMCSE) {
		// The interval for emp_var, inverted: delta_var is exact.
		vlo = p.DeltaVar / (row.EmpVar + z*row.EmpVarMCSE)
		if d := row.EmpVar - z*row.EmpVarMCSE; d > 0 {
			vhi = p.DeltaVar / d
		} else {
			vhi = math.Inf(1)
		}
	}
	row.Checks[1] = judge(vlo, vhi, crit.VarRatio)
	row.Checks[2] = judge(row.StdBias-z*row.StdBiasMCSE, row.StdBias+z*row.StdBiasMCSE, [2]float64{-crit.StdBias, crit.StdBias})
	row.Verdict = combine(row.Checks[:])
	return row
}

// combine passes when every check passes and fails when any fails.
func combine(checks []Check) Verdict {
	v := Pass
	for _, c := range checks {
		switch c.Verdict {
		case Fail:
			return Fail
		case Unclear:
			v = Unclear
		}
	}
	return v
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

// Status of a transform over the whole grid.
type Status string

// The three statuses of verdicts.csv.
const (
	Adequate      Status = "adequate"
	NotReached    Status = "not_reached"
	StatusUnclear Status = "unclear"
)

// TransformVerdict is one line of verdicts.csv.
type TransformVerdict struct {
	Transform string
	SmallestN int // 0 unless adequate
	Status    Status
	Limiting  string // the criterion that sets SmallestN, or fails at the largest n
	// PerCriterion holds the smallest adequate n of each criterion alone,
	// 0 where that criterion is not adequate over the grid's top.
	PerCriterion [3]int
}

// Verdicts decides, for every transform, the smallest n of the grid from
// which this n and every larger one pass.
func Verdicts(rows []Row) []TransformVerdict {
	var out []TransformVerdict
	for start := 0; start < len(rows); {
		end := start
		for end < len(rows) && rows[end].Transform == rows[start].Transform {
			end++
		}
		out = append(out, verdictFor(rows[start:end]))
		start = end
	}
	return out
}

func verdictFor(rows []Row) TransformVerdict {
	tv := TransformVerdict{Transform: rows[0].Transform}
	overall := make([]Verdict, len(rows))
	for i, r := range rows {
		overall[i] = r.Verdict
	}
	idx, top := smallestPassing(overall)
	for c := range CriterionNames {
		vs := make([]Verdict, len(rows))
		for i, r := range rows {
			vs[i] = r.Checks[c].Verdict
		}
		if ci, _ := smallestPassing(vs); ci >= 0 {
			tv.PerCriterion[c] = rows[ci].N
		}
	}
	if idx >= 0 {
		tv.Status = Adequate
		tv.SmallestN = rows[idx].N
		tv.Limiting = "none"
		if idx > 0 {
			// The criterion that needs the largest n sets the answer.
			best := 0
			for c := range CriterionNames {
				if tv.PerCriterion[c] > best {
					best = tv.PerCriterion[c]
					tv.Limiting = CriterionNames[c]
				}
			}
		}
		return tv
	}
	if top == Fail {
		tv.Status = NotReached
	} else {
		tv.Status = StatusUnclear
	}
	last := rows[len(rows)-1]
	for c := range CriterionNames {
		if last.Checks[c].Verdict == top {
			tv.Limiting = CriterionNames[c]
			break
		}
	}
	return tv
}

// smallestPassing returns the index where the final run of passes
// starts (−1 if the largest n does not pass) and the verdict at the largest n.
func smallestPassing(vs []Verdict) (int, Verdict) {
	top := vs[len(vs)-1]
	if top != Pass {
		return -1, top
	}
	i := len(vs) - 1
	for i > 0 && vs[i-1] == Pass {
		i--
	}
	return i, top
}

// Warnings lists what a reader must see beside the numbers.
func Warnings(r *runner.Result, rows []Row) []string {
	var w []string
	if !r.Complete {
		msg := "the run is incomplete: these numbers use only the blocks that finished"
		if r.MissingNote != "" {
			msg = "partial merge: these numbers use only the blocks present; " + r.MissingNote
		}
		w = append(w, msg)
	}
	// One line per transform and kind, listing the sample sizes.
	type kind struct {
		what  string
		parts []string
	}
	for start := 0; start < len(rows); {
		end := start
		for end < len(rows) && rows[end].Transform == rows[start].Transform {
			end++
		}
		kinds := []*kind{
			{what: "undefined replicates (estimate or standard error not finite; counted as not covering, left out of the moments)"},
			{what: "fits that did not converge (counted as undefined)"},
			{what: "plug-in standard error of 0 (a degenerate interval)"},
			{what: "heavy tails, excess kurtosis above 20 (the variance may not exist; its MCSE is then unreliable)"},
		}
		for _, row := range rows[start:end] {
			if row.Undefined > 0 {
				kinds[0].parts = append(kinds[0].parts, fmt.Sprintf("n=%d: %d of %d", row.N, row.Undefined, row.Replicates))
			}
			if row.FitFailures > 0 {
				kinds[1].parts = append(kinds[1].parts, fmt.Sprintf("n=%d: %d", row.N, row.FitFailures))
			}
			if row.ZeroSE > 0 {
				kinds[2].parts = append(kinds[2].parts, fmt.Sprintf("n=%d: %d", row.N, row.ZeroSE))
			}
			if row.ExKurtosis > 20 {
				kinds[3].parts = append(kinds[3].parts, fmt.Sprintf("n=%d: %.3g", row.N, row.ExKurtosis))
			}
		}
		for _, k := range kinds {
			if len(k.parts) > 0 {
				w = append(w, fmt.Sprintf("%s: %s at %s", rows[start].Transform, k.what, strings.Join(k.parts, ", ")))
			}
		}
		start = end
	}
	return w
}
