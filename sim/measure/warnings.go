package measure

import (
	"fmt"
	"strings"

	"deltaprobe/sim/family"
	"deltaprobe/sim/runner"
)

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
			{what: "fits with no estimate: no finite MLE for the sample, or the search did not converge (counted as undefined)"},
			{what: "plug-in standard error of 0 (a degenerate interval)"},
			{what: "replicates in which an arm's censored lifetimes had too few events for an estimate (none; for the Weibull, under two) (counted as undefined)"},
			{what: "heavy tails, excess kurtosis above 20 (the variance may not exist; its MCSE is then unreliable)"},
		}
		// The causes a fitter named, each with its share of the replicates.
		var causes []*kind
		for f := family.NotConverged + 1; f < family.Failures; f++ {
			causes = append(causes, &kind{what: "undefined by " + f.Describe() + ", share of replicates"})
		}
		for _, row := range rows[start:end] {
			if row.Count(Undefined) > 0 {
				kinds[0].parts = append(kinds[0].parts, fmt.Sprintf("n=%d: %d of %d", row.N, row.Count(Undefined), row.Count(Replicates)))
			}
			cell := cellOf(r, row)
			if cell != nil {
				for i, k := range causes {
					if c := cell.Failed(family.NotConverged + 1 + family.Failure(i)); c > 0 {
						k.parts = append(k.parts, fmt.Sprintf("n=%d: %.3g%% (%d of %d)", row.N, 100*float64(c)/float64(cell.Replicates), c, cell.Replicates))
					}
				}
			}
			if c := notConverged(cell, row); c > 0 {
				kinds[1].parts = append(kinds[1].parts, fmt.Sprintf("n=%d: %d", row.N, c))
			}
			if row.Count(ZeroSE) > 0 {
				kinds[2].parts = append(kinds[2].parts, fmt.Sprintf("n=%d: %d", row.N, row.Count(ZeroSE)))
			}
			if row.Count(NoEvents) > 0 {
				kinds[3].parts = append(kinds[3].parts, fmt.Sprintf("n=%d: %d", row.N, row.Count(NoEvents)))
			}
			if row.Get(ExKurtosis) > 20 {
				kinds[4].parts = append(kinds[4].parts, fmt.Sprintf("n=%d: %.3g", row.N, row.Get(ExKurtosis)))
			}
		}
		kinds = append(kinds[:2], append(causes, kinds[2:]...)...)
		for _, k := range kinds {
			if len(k.parts) > 0 {
				w = append(w, fmt.Sprintf("%s: %s at %s", rows[start].Transform, k.what, strings.Join(k.parts, ", ")))
			}
		}
		start = end
	}
	return w
}

// cellOf is the saved cell behind a row, nil if the result has none.
func cellOf(r *runner.Result, row Row) *runner.Cell {
	for t, tr := range r.Study.Transforms {
		if tr.Name != row.Transform || t >= len(r.Cells) {
			continue
		}
		for _, c := range r.Cells[t] {
			if c != nil && c.N == row.N {
				return c
			}
		}
	}
	return nil
}

// notConverged is the fit failures at a row whose cause no fitter named.
func notConverged(c *runner.Cell, row Row) int64 {
	if c == nil {
		return row.Count(FitFailures)
	}
	return c.Failed(family.NotConverged)
}
