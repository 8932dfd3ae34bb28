package report

import (
	"bytes"
	"encoding/csv"
	"strconv"

	"deltaprobe/sim/measure"
)

// SummaryColumns is the header of summary.csv: the transform and n, every
// measure of measure.Measures that has a group, in table order, and the
// verdict last (contract: names and order).
var SummaryColumns = summaryColumns()

func summaryColumns() []string {
	cols := []string{"transform", "n"}
	for _, m := range summaryMeasures() {
		cols = append(cols, m.Name)
	}
	return append(cols, "verdict")
}

// summaryMeasures are the measures summary.csv writes, in table order.
func summaryMeasures() []*measure.Measure {
	var out []*measure.Measure
	for _, m := range measure.Measures() {
		if m.Group != measure.Internal {
			out = append(out, m)
		}
	}
	return out
}

// VerdictColumns is the header of verdicts.csv: n_NAME for each criterion
// of measure.Criteria (contract: names and order).
var VerdictColumns = verdictColumns()

func verdictColumns() []string {
	cols := []string{"transform", "smallest_n", "n_low", "n_high", "status", "limiting"}
	for _, c := range measure.Criteria() {
		cols = append(cols, c.Column())
	}
	return cols
}

// csvFloat writes the shortest decimal that parses back to the same
// float64, so a CSV file holds exactly the numbers the measures hold and
// is stable to the byte. A value that does not exist (NaN) is an empty
// field; infinities are Inf and -Inf.
func csvFloat(x float64) string { return plainFloat(x, -1) }

// formatMeasure writes one measure's value for a CSV file.
func formatMeasure(m *measure.Measure, r measure.Row) string {
	if m.Count {
		return strconv.FormatInt(r.Count(m), 10)
	}
	return csvFloat(r.Get(m))
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
func SummaryCSV(rows []measure.Row) []byte {
	ms := summaryMeasures()
	records := make([][]string, len(rows))
	for i, r := range rows {
		rec := []string{r.Transform, strconv.Itoa(r.N)}
		for _, m := range ms {
			rec = append(rec, formatMeasure(m, r))
		}
		records[i] = append(rec, string(r.Verdict))
	}
	return csvOf(SummaryColumns, records)
}

// VerdictsCSV renders verdicts.csv.
func VerdictsCSV(vs []measure.TransformVerdict) []byte {
	records := make([][]string, len(vs))
	for i, v := range vs {
		rec := []string{v.Transform, formatN(v.SmallestN), formatN(v.Low), formatN(v.High), string(v.Status), v.Limiting}
		for _, n := range v.PerCriterion {
			rec = append(rec, formatN(n))
		}
		records[i] = rec
	}
	return csvOf(VerdictColumns, records)
}
