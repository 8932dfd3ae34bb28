package report

import (
	"bytes"
	"encoding/csv"
	"math"
	"strconv"

	"deltaprobe/sim"
)

// SummaryColumns is the header of summary.csv (contract: names and order).
var SummaryColumns = []string{
	"transform", "n", "replicates", "undefined", "truth", "mean", "bias", "bias_mcse",
	"rel_bias", "std_bias", "bias_2nd", "emp_var", "emp_var_mcse", "delta_var",
	"var_ratio", "var_ratio_mcse", "plugin_var", "plugin_ratio", "coverage",
	"coverage_mcse", "miss_below", "miss_above", "robust_se", "skewness",
	"ex_kurtosis", "ks_pivot", "verdict",
}

// VerdictColumns is the header of verdicts.csv (contract: names and order).
var VerdictColumns = []string{"transform", "smallest_n", "status", "limiting", "n_coverage", "n_variance", "n_bias"}

// formatFloat writes 8 significant digits: far more than any Monte Carlo
// estimate here can claim, and stable to the byte. A value that does not
// exist (NaN) is an empty field.
func formatFloat(x float64) string {
	switch {
	case math.IsNaN(x):
		return ""
	case math.IsInf(x, 1):
		return "Inf"
	case math.IsInf(x, -1):
		return "-Inf"
	}
	return strconv.FormatFloat(x, 'g', 8, 64)
}

func formatN(n int) string {
	if n == 0 {
		return ""
	}
	return strconv.Itoa(n)
}

// csvOf renders a CSV file: the header, then the records.
func csvOf(header []string, records [][]string) []byte {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(header)
	w.WriteAll(records) // flushes; a bytes.Buffer does not fail
	return buf.Bytes()
}

// SummaryCSV renders summary.csv.
func SummaryCSV(rows []sim.Row) []byte {
	records := make([][]string, len(rows))
	for i, r := range rows {
		records[i] = []string{
			r.Transform, strconv.Itoa(r.N), strconv.FormatInt(r.Replicates, 10), strconv.FormatInt(r.Undefined, 10),
			formatFloat(r.Truth), formatFloat(r.Mean), formatFloat(r.Bias), formatFloat(r.BiasMCSE),
			formatFloat(r.RelBias), formatFloat(r.StdBias), formatFloat(r.Bias2nd), formatFloat(r.EmpVar),
			formatFloat(r.EmpVarMCSE), formatFloat(r.DeltaVar), formatFloat(r.VarRatio), formatFloat(r.VarRatioMCSE),
			formatFloat(r.PluginVar), formatFloat(r.PluginRatio), formatFloat(r.Coverage), formatFloat(r.CoverageMCSE),
			formatFloat(r.MissBelow), formatFloat(r.MissAbove), formatFloat(r.RobustSE), formatFloat(r.Skewness),
			formatFloat(r.ExKurtosis), formatFloat(r.KSPivot), string(r.Verdict),
		}
	}
	return csvOf(SummaryColumns, records)
}

// VerdictsCSV renders verdicts.csv.
func VerdictsCSV(vs []sim.TransformVerdict) []byte {
	records := make([][]string, len(vs))
	for i, v := range vs {
		records[i] = []string{
			v.Transform, formatN(v.SmallestN), string(v.Status), v.Limiting,
			formatN(v.PerCriterion[0]), formatN(v.PerCriterion[1]), formatN(v.PerCriterion[2]),
		}
	}
	return csvOf(VerdictColumns, records)
}
