package measure

import (
	"math"

	"deltaprobe/sim/study"
)

// This file is the table of measures and criteria: everything that
// summary.csv, plan.csv, verdicts.csv, the page and the figures show is
// declared here, once. Order matters and is kept by the language: Go
// initialises package variables in declaration order, each after the
// variables it depends on (The Go Programming Language Specification,
// "Package initialization"). Every measure depends only on measures above
// it and every criterion only on measures, so the tables list them in the
// order written here; TestTableOrder holds them to the contract.

// The measures. Monte Carlo standard errors follow Morris, White &
// Crowther (2019, Statistics in Medicine 38:2074–2102).
var (
	// n_total is the observations over all arms at base size n, the sum
	// of the arm sizes by the runner's rule; n itself for one sample.
	NTotal = define(Measure{Name: "n_total", Group: Counts, Count: true,
		Value: func(c *Cell, _ *Row) float64 { return float64(c.Study.Total(c.Cell.N)) }})
	Replicates = define(Measure{Name: "replicates", Group: Counts, Count: true,
		Value: func(c *Cell, _ *Row) float64 { return float64(c.Cell.Replicates) }})
	Undefined = define(Measure{Name: "undefined", Group: Counts, Count: true,
		Value: func(c *Cell, _ *Row) float64 { return float64(c.Cell.Undefined) }})
	Truth = define(Measure{Name: "truth", Group: Estimate,
		Value: func(c *Cell, _ *Row) float64 { return c.Pred.Truth }})
	Mean = define(Measure{Name: "mean", Group: Estimate,
		Value: func(c *Cell, _ *Row) float64 { return ifDefined(c, 1, c.Moments.Mean) }})
	Bias = define(Measure{Name: "bias", Group: Estimate,
		Value: func(c *Cell, _ *Row) float64 { return ifDefined(c, 1, c.Moments.Mean-c.Pred.Truth) }})
	// bias_mcse is sqrt(s²/R) (Morris et al. 2019, Table 6).
	BiasMCSE = define(Measure{Name: "bias_mcse", Group: Estimate,
		Value: func(c *Cell, _ *Row) float64 {
			return ifDefined(c, 2, math.Sqrt(c.Moments.Var()/float64(c.Moments.N)))
		}})
	RelBias = define(Measure{Name: "rel_bias", Group: Estimate,
		Value: func(c *Cell, r *Row) float64 {
			if !c.defined(1) || c.Pred.Truth == 0 {
				return nan
			}
			return r.Get(Bias) / c.Pred.Truth
		}})
	StdBias = define(Measure{Name: "std_bias", Group: Estimate,
		Value: func(c *Cell, r *Row) float64 { return ifDefined(c, 1, r.Get(Bias)/c.SDDelta) }})
	StdBiasMCSE = define(Measure{Name: "std_bias_mcse", Group: Internal,
		Value: func(c *Cell, r *Row) float64 { return ifDefined(c, 2, r.Get(BiasMCSE)/c.SDDelta) }})
	Bias2nd = define(Measure{Name: "bias_2nd", Group: Estimate,
		Value: func(c *Cell, _ *Row) float64 { return c.Pred.Bias2nd }})
	EmpVar = define(Measure{Name: "emp_var", Group: Variance,
		Value: func(c *Cell, _ *Row) float64 { return ifDefined(c, 2, c.Moments.Var()) }})
	// emp_var_mcse is the kurtosis-aware √Var(s²), Var(s²) =
	// (μ4 − σ⁴(R−3)/(R−1))/R, which is 2σ⁴/(R−1) for normal data (Morris et
	// al. 2019, Table 6's normal-theory form; general form e.g. Cho et al.
	// 2005, from memory).
	EmpVarMCSE = define(Measure{Name: "emp_var_mcse", Group: Variance,
		Value: func(c *Cell, r *Row) float64 {
			if !c.defined(2) {
				return nan
			}
			rd, s2 := float64(c.Moments.N), r.Get(EmpVar)
			m4 := c.Moments.M4 / rd
			varS2 := (m4 - s2*s2*(rd-3)/(rd-1)) / rd
			return math.Sqrt(math.Max(varS2, 0))
		}})
	DeltaVar = define(Measure{Name: "delta_var", Group: Variance,
		Value: func(c *Cell, _ *Row) float64 { return c.Pred.DeltaVar }})
	VarRatio = define(Measure{Name: "var_ratio", Group: Variance,
		Value: func(c *Cell, r *Row) float64 { return ifDefined(c, 2, c.Pred.DeltaVar/r.Get(EmpVar)) }})
	VarRatioMCSE = define(Measure{Name: "var_ratio_mcse", Group: Variance,
		Value: func(c *Cell, r *Row) float64 {
			return ifDefined(c, 2, r.Get(VarRatio)*r.Get(EmpVarMCSE)/r.Get(EmpVar))
		}})
	PluginVar = define(Measure{Name: "plugin_var", Group: Variance,
		Value: func(c *Cell, _ *Row) float64 { return ifDefined(c, 1, c.PluginVar) }})
	PluginRatio = define(Measure{Name: "plugin_ratio", Group: Variance,
		Value: func(c *Cell, r *Row) float64 { return ifDefined(c, 2, c.PluginVar/r.Get(EmpVar)) }})
	// coverage_mcse is sqrt(p(1 − p)/R) (Morris et al. 2019, Table 6).
	Coverage = define(Measure{Name: "coverage", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 { return share(c, c.Cell.Covered) }})
	CoverageMCSE = define(Measure{Name: "coverage_mcse", Group: Intervals,
		Value: func(c *Cell, r *Row) float64 {
			if c.Cell.Replicates == 0 {
				return nan
			}
			p := r.Get(Coverage)
			return math.Sqrt(p * (1 - p) / float64(c.Cell.Replicates))
		}})
	MissBelow = define(Measure{Name: "miss_below", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 { return share(c, c.Cell.MissBelow) }})
	MissAbove = define(Measure{Name: "miss_above", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 { return share(c, c.Cell.MissAbove) }})
	// iqr_sd is the interquartile range of τ̂ over that of N(0, 1),
	// 2·Φ⁻¹(0.75) (common practice); it exists even when Var τ̂ does not.
	IQRSD = define(Measure{Name: "iqr_sd", Group: Variance,
		Value: func(c *Cell, _ *Row) float64 {
			const iqrNormal = 2 * 0.6744897501960817
			return (c.Cell.Delta.Quantile(0.75) - c.Cell.Delta.Quantile(0.25)) * c.SDDelta / iqrNormal
		}})
	Skewness = define(Measure{Name: "skewness", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 {
			m2, ok := centralM2(c)
			if !ok {
				return nan
			}
			return (c.Moments.M3 / float64(c.Moments.N)) / math.Pow(m2, 1.5)
		}})
	ExKurtosis = define(Measure{Name: "ex_kurtosis", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 {
			m2, ok := centralM2(c)
			if !ok {
				return nan
			}
			return (c.Moments.M4/float64(c.Moments.N))/(m2*m2) - 3
		}})
	// ks_pivot is the Kolmogorov–Smirnov distance of the Wald pivot
	// (τ̂ − τ0)/se from N(0, 1), from its histogram.
	KSPivot = define(Measure{Name: "ks_pivot", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 { return c.Cell.Wald.KSNormal() }})
	// coverage_defined is the coverage among the defined replicates only.
	CoverageDefined = define(Measure{Name: "coverage_defined", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 {
			d := c.Cell.Replicates - c.Cell.Undefined
			if d <= 0 {
				return nan
			}
			return float64(c.Cell.Covered) / float64(d)
		}})
	// width is the mean width 2·q·se of the defined replicates' intervals.
	Width = define(Measure{Name: "width", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 { return ifDefined(c, 1, c.Width) }})
	// width_delta is the width the delta method predicts, 2·q·√delta_var.
	WidthDelta = define(Measure{Name: "width_delta", Group: Intervals,
		Value: func(c *Cell, _ *Row) float64 { return 2 * c.Quantile * c.SDDelta }})
	Null = define(Measure{Name: "null", Group: Tests,
		Value: func(c *Cell, _ *Row) float64 { return c.Null }})
	// reject is the share of replicates whose interval excludes the null;
	// an undefined replicate does not reject. Its MCSE is √(p(1 − p)/R)
	// (Morris et al. 2019, Table 6, as for coverage).
	Reject = define(Measure{Name: "reject", Group: Tests,
		Value: func(c *Cell, _ *Row) float64 {
			if math.IsNaN(c.Null) {
				return nan
			}
			return share(c, c.Cell.Rejected)
		}})
	RejectMCSE = define(Measure{Name: "reject_mcse", Group: Tests,
		Value: func(c *Cell, r *Row) float64 {
			p := r.Get(Reject)
			if math.IsNaN(p) {
				return nan
			}
			return math.Sqrt(p * (1 - p) / float64(c.Cell.Replicates))
		}})
	// reject_delta is the rejection rate the delta method predicts at the
	// truth, τ̂ ~ N(τ0, delta_var): Φ(−q − δ) + 1 − Φ(q − δ) with
	// δ = (τ0 − null)/√delta_var (the Wald test's power, e.g. Casella &
	// Berger 2002, §10.3, from memory).
	RejectDelta = define(Measure{Name: "reject_delta", Group: Tests,
		Value: func(c *Cell, _ *Row) float64 {
			if math.IsNaN(c.Null) {
				return nan
			}
			return RejectRate(c.Quantile, (c.Pred.Truth-c.Null)/c.SDDelta)
		}})
	// events is the mean share of observations that were events (not
	// censored), over the replicates and the lifetime arms the transform
	// reads; empty when it reads none.
	Events = define(Measure{Name: "events", Group: Counts,
		Value: func(c *Cell, _ *Row) float64 {
			if c.Cell.Lifetimes == 0 {
				return nan
			}
			return float64(c.Cell.Events) / float64(c.Cell.Lifetimes)
		}})
	// The plug-in ratio's MCSE takes plugin_var as known: its own Monte
	// Carlo error is smaller than emp_var's by about √n (common practice).
	PluginRatioMCSE = define(Measure{Name: "plugin_ratio_mcse", Group: Internal,
		Value: func(c *Cell, r *Row) float64 {
			return ifDefined(c, 2, r.Get(PluginRatio)*r.Get(EmpVarMCSE)/r.Get(EmpVar))
		}})
	// plugin_other_ratio: the mean of the plug-in variance the intervals
	// do not use (robust beside model-based, or the other way round) over
	// the empirical variance, for the figures; NaN where the run kept none
	// (a fit of the data's own family with the model-based variance, or a
	// transform with the analyst's own se).
	PluginOtherRatio = define(Measure{Name: "plugin_other_ratio", Group: Internal,
		Value: func(c *Cell, r *Row) float64 { return ifDefined(c, 2, c.PluginOther/r.Get(EmpVar)) }})
	FitFailures = define(Measure{Name: "fit_failures", Group: Internal, Count: true,
		Value: func(c *Cell, _ *Row) float64 { return float64(c.Cell.FitFailures) }})
	NoEvents = define(Measure{Name: "no_events", Group: Internal, Count: true,
		Value: func(c *Cell, _ *Row) float64 { return float64(c.Cell.NoEvents) }})
	ZeroSE = define(Measure{Name: "zero_se", Group: Internal, Count: true,
		Value: func(c *Cell, _ *Row) float64 { return float64(c.Cell.ZeroSE) }})
)

// The criteria.
var (
	// CoverageCheck: the Wald interval's coverage, its Monte Carlo
	// interval the Wilson (1927) score interval.
	CoverageCheck = defineCriterion(Criterion{
		Name: "coverage", Key: "coverage", Title: "Coverage", Noun: "coverage",
		Heading: "Coverage of the Wald interval", Axis: "coverage",
		Ideal: func(level float64) float64 { return level }, Nominal: true,
		Measure: Coverage, MCSE: CoverageMCSE,
		Rule: "Coverage: its Wilson {interval} lies inside {band}.",
		Band: func(c study.Criteria) [2]float64 { return c.Coverage },
		Interval: func(c *Cell, _ *Row, z float64) (float64, float64) {
			return wilson(float64(c.Cell.Covered), float64(c.Cell.Replicates), z)
		},
		Below:   "coverage is below its band: {value} ({interval}; {band})",
		Above:   "coverage is above its band, the interval too wide: {value} ({interval}; {band})",
		Unclear: "coverage is not clearly inside its band: {value} ({crosses})",
	})
	// VarianceCheck: delta_var / emp_var. delta_var at the truth is exact,
	// so the interval is emp_var's normal interval, inverted.
	VarianceCheck = defineCriterion(Criterion{
		Name: "variance", Key: "var_ratio", Title: "Variance ratio", Noun: "the variance ratio",
		Heading: "Variance ratio, delta method / simulated", Axis: "variance ratio", Ratio: true,
		Ideal:   func(float64) float64 { return 1 },
		Measure: VarRatio, MCSE: VarRatioMCSE,
		Rule: "Variance: the Monte Carlo {interval} of delta_var / emp_var lies inside {band}.",
		Band: func(c study.Criteria) [2]float64 { return c.VarRatio },
		Interval: func(c *Cell, r *Row, z float64) (float64, float64) {
			ev, mcse := r.Get(EmpVar), r.Get(EmpVarMCSE)
			if math.IsNaN(mcse) {
				return nan, nan
			}
			lo, hi := c.Pred.DeltaVar/(ev+z*mcse), math.Inf(1)
			if d := ev - z*mcse; d > 0 {
				hi = c.Pred.DeltaVar / d
			}
			return lo, hi
		},
		Below:   "the delta-method variance is too small: {value} of the simulated variance ({interval}; {band})",
		Above:   "the delta-method variance is too large: {value} times the simulated variance ({interval}; {band})",
		Unclear: "the variance ratio is not clearly inside its band: {value} ({crosses})",
	})
	// BiasCheck: |bias| / √delta_var, its interval std_bias ± z·MCSE.
	BiasCheck = defineCriterion(Criterion{
		Name: "bias", Key: "std_bias", Title: "Bias", Noun: "the standardised bias",
		Heading: "Bias, in delta-method standard deviations", Axis: "bias / delta sd",
		Ideal:   func(float64) float64 { return 0 },
		Measure: StdBias, MCSE: StdBiasMCSE,
		Rule: "Bias: the Monte Carlo {interval} of bias / delta-method sd lies inside {band}.",
		Band: func(c study.Criteria) [2]float64 { return [2]float64{-c.StdBias, c.StdBias} },
		Interval: func(_ *Cell, r *Row, z float64) (float64, float64) {
			sb, mcse := r.Get(StdBias), r.Get(StdBiasMCSE)
			return sb - z*mcse, sb + z*mcse
		},
		Below:   "the bias is {value} delta-method sd, beyond ±{bound} ({interval})",
		Above:   "the bias is {value} delta-method sd, beyond ±{bound} ({interval})",
		Unclear: "the bias is not clearly within ±{bound} delta-method sd: {value} ({crosses})",
	})
	// PluginCheck: plugin_var / emp_var, the variance the reported
	// interval assumes against the simulated one; like the variance
	// ratio, emp_var's interval inverted (plugin_var taken as known).
	PluginCheck = defineCriterion(Criterion{
		Name: "plugin", Key: "plugin_ratio", Title: "Plug-in ratio", Noun: "the plug-in ratio",
		Heading: "Plug-in variance / simulated variance", Axis: "plug-in ratio", Ratio: true,
		Ideal:   func(float64) float64 { return 1 },
		Measure: PluginRatio, MCSE: PluginRatioMCSE,
		Rule: "Plug-in: the Monte Carlo {interval} of plugin_var / emp_var lies inside {band}.",
		Band: func(c study.Criteria) [2]float64 { return c.PluginBand() },
		Interval: func(c *Cell, r *Row, z float64) (float64, float64) {
			ev, mcse := r.Get(EmpVar), r.Get(EmpVarMCSE)
			if math.IsNaN(mcse) {
				return nan, nan
			}
			lo, hi := c.PluginVar/(ev+z*mcse), math.Inf(1)
			if d := ev - z*mcse; d > 0 {
				hi = c.PluginVar / d
			}
			return lo, hi
		},
		Below:   "the reported standard error is too small: its variance is {value} of the simulated variance ({interval}; {band})",
		Above:   "the reported standard error is too large: its variance is {value} times the simulated variance ({interval}; {band})",
		Unclear: "the plug-in ratio is not clearly inside its band: {value} ({crosses})",
	})
	// PowerCheck: the rejection rate of the test of the null, its Monte
	// Carlo interval Wilson's (1927); it passes at or above the target.
	PowerCheck = defineCriterion(Criterion{
		Name: "power", Key: "power", Title: "Power", Noun: "the power",
		Heading: "Rejection rate of the test of the null", Axis: "rejection rate",
		Ideal:   func(float64) float64 { return 1 },
		Measure: Reject, MCSE: RejectMCSE,
		Rule: "Power: the Wilson {interval} of the rejection rate lies inside {band}.",
		Band: func(c study.Criteria) [2]float64 { return [2]float64{c.PowerTarget(), 1} },
		Interval: func(c *Cell, _ *Row, z float64) (float64, float64) {
			if math.IsNaN(c.Null) {
				return nan, nan
			}
			return wilson(float64(c.Cell.Rejected), float64(c.Cell.Replicates), z)
		},
		Below:   "the test rejects too rarely: {value} ({interval}; {band})",
		Above:   "the test rejects too rarely: {value} ({interval}; {band})",
		Unclear: "the power is not clearly at its target: {value} ({crosses})",
	})
)
