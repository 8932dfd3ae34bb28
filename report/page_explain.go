package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/study"
)

// explain answers, for one transform, "from what n is the delta method
// adequate here, and why not before?" in a sentence or two built from the
// rows: the n the verdict names, and what each criterion that held it
// back showed at the n just below, with its Monte Carlo interval and band.
func explain(rows []measure.Row, v measure.TransformVerdict, crit study.Criteria) string {
	if len(rows) == 0 {
		return ""
	}
	first, last := rows[0], rows[len(rows)-1]
	switch v.Status {
	case measure.Adequate:
		idx := -1
		for i, r := range rows {
			if r.N == v.SmallestN {
				idx = i
				break
			}
		}
		if idx <= 0 {
			return fmt.Sprintf("Adequate from n = %d, the smallest n studied: coverage, variance and bias pass at every n of the grid. Smaller samples were not checked.", first.N)
		}
		prev := rows[idx-1]
		s := fmt.Sprintf("Adequate from n = %d. Not before, because at n = %d %s.", v.SmallestN, prev.N, strings.Join(problems(prev, crit), "; and "))
		var passedEarlier []string
		for _, r := range rows[:idx-1] {
			if r.Verdict == measure.Pass {
				passedEarlier = append(passedEarlier, strconv.Itoa(r.N))
			}
		}
		if len(passedEarlier) > 0 {
			s += fmt.Sprintf(" (n = %s passes too, but adequacy needs every larger n of the grid to pass as well.)", strings.Join(passedEarlier, ", "))
		}
		return s
	case measure.NotReached:
		return fmt.Sprintf("Not adequate at any n of the grid. At the largest, n = %d, %s.", last.N, strings.Join(problems(last, crit), "; and "))
	case measure.StatusUnclear:
		return fmt.Sprintf("Undecided. At the largest n, %d, no criterion fails, but %s. More replicates would narrow the Monte Carlo intervals and settle it.", last.N, strings.Join(problems(last, crit), "; and "))
	}
	return ""
}

// problems describes every criterion that does not pass at row r.
func problems(r measure.Row, crit study.Criteria) []string {
	var out []string
	for _, cr := range measure.Criteria() {
		if ch := r.Check(cr); ch.Verdict != measure.Pass {
			out = append(out, describeCheck(cr, r, ch))
		}
	}
	if len(out) == 0 {
		// Cannot happen for a row whose verdict is not pass; say so
		// rather than print an empty clause.
		out = append(out, "every criterion passes")
	}
	return out
}

// describeCheck says what criterion cr showed at row r: its value, where
// its Monte Carlo interval lies against the band, and what that means, in
// the criterion's own words.
func describeCheck(cr *measure.Criterion, r measure.Row, ch measure.Check) string {
	iv := fmt.Sprintf("Monte Carlo 95%% interval %s to %s", fmt3(ch.Low), fmt3(ch.High))
	band := fmt.Sprintf("band %s to %s", fmt3(ch.Band[0]), fmt3(ch.Band[1]))
	// An unclear check's interval crosses one edge of the band, or both.
	var edges []string
	for _, e := range ch.Band {
		if ch.Low < e && e < ch.High {
			edges = append(edges, fmt3(e))
		}
	}
	crosses := iv + " crosses the band's edge at " + strings.Join(edges, " and ")
	if len(edges) == 0 {
		crosses = iv + ", " + band // a NaN interval: say what is known
	}
	words := cr.Unclear
	switch {
	case ch.Verdict == measure.Fail && ch.High < ch.Band[0]:
		words = cr.Below
	case ch.Verdict == measure.Fail && ch.Low > ch.Band[1]:
		words = cr.Above
	}
	return strings.NewReplacer(
		"{value}", fmt3(r.Get(cr.Measure)), "{interval}", iv, "{band}", band,
		"{bound}", fmt3(ch.Band[1]), "{crosses}", crosses,
	).Replace(words)
}

// fmt3 writes x to three decimals, as the page's sentences quote values.
func fmt3(x float64) string {
	switch {
	case math.IsNaN(x):
		return "not available"
	case math.IsInf(x, 1):
		return "∞"
	case math.IsInf(x, -1):
		return "−∞"
	}
	s := strconv.FormatFloat(x, 'f', 3, 64)
	if s == "-0.000" {
		s = "0.000"
	}
	return strings.Replace(s, "-", "−", 1)
}
