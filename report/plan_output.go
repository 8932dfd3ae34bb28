package report

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/study"
)

// PlanColumns is the header of plan.csv for a study with criteria c:
// each deciding criterion's measure and its Monte Carlo standard error,
// in the order of measure.Criteria, between the evaluation and its
// verdict (contract: names and order, for the default criteria).
func PlanColumns(c study.Criteria) []string {
	cols := []string{"transform", "step", "n", "replicates"}
	for _, c := range measure.Deciding(c) {
		cols = append(cols, c.Measure.Name, c.MCSE.Name)
	}
	return append(cols, "verdict")
}

// PlanCSV renders plan.csv: every evaluation, per transform, in
// evaluation order.
func PlanCSV(p *plan.Result) []byte {
	records := make([][]string, len(p.Steps))
	for i, st := range p.Steps {
		rec := []string{st.Transform, strconv.Itoa(st.Step), strconv.Itoa(st.N), strconv.FormatInt(st.Replicates, 10)}
		for _, c := range measure.Deciding(p.Study.Criteria) {
			rec = append(rec, formatMeasure(c.Measure, st.Row), formatMeasure(c.MCSE, st.Row))
		}
		records[i] = append(rec, string(st.Row.Verdict))
	}
	return csvOf(PlanColumns(p.Study.Criteria), records)
}

// PlanTable prints, per transform, the answer, what limits it, the
// replicates its decisions used and any oscillation found.
func PlanTable(w io.Writer, p *plan.Result) {
	used := map[string]int64{}
	evals := map[string]int{}
	for _, st := range p.Steps {
		used[st.Transform] += st.Replicates
		evals[st.Transform]++
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "transform\tsmallest_n\tstatus\tlimiting\tn checked\treplicates\twindow")
	for i, v := range p.Verdicts {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%d\t%d\t+%d\n", clip(v.Transform, 24), boundsText(v), v.Status, dash(v.Limiting),
			evals[v.Transform], used[v.Transform], p.Window[i])
	}
	tw.Flush()
	fmt.Fprintf(w, "searched n in [%d, %d], at most %d replicates per n in batches of %d\n",
		p.Spec.NMin, p.Spec.NMax, p.Spec.MaxReplicates, p.Spec.Batch)
	wrap(w, "", "smallest_n: where the smallest adequate n lies, one n where the evaluations decided it, a range where an n below the search's answer stayed undecided. Guarantee: "+p.Method+". A study checks the approximation only under the model it states.")
	fmt.Fprintf(w, "replicates simulated in all: %d (window: integers above the answer that were also checked)\n", p.Total)
	for i, v := range p.Verdicts {
		if len(p.Oscillations[i]) > 0 {
			var ns []string
			for _, n := range p.Oscillations[i] {
				ns = append(ns, strconv.Itoa(n))
			}
			fmt.Fprintf(w, "  %s: not monotone in n — n = %s failed above an earlier passing n; largest such n: %d\n",
				v.Transform, strings.Join(ns, ", "), p.LargestFail[i])
		}
		if len(v.Undecided) > 0 {
			wrap(w, "  ", v.Transform+": "+undecidedText(v.Undecided, p.Spec.MaxReplicates))
		}
		if len(p.Undecided[i]) > 0 {
			fmt.Fprintf(w, "  %s: %d n above the answer stayed undecided within the budget (they neither passed nor failed)\n",
				v.Transform, len(p.Undecided[i]))
		}
		if n, ok := p.DeltaPowerN[v.Transform]; ok {
			fmt.Fprintf(w, "  %s: %s\n", v.Transform, deltaPowerWords(p, n))
		}
	}
	if p.Exhausted {
		fmt.Fprintln(w, "  the -budget cap was reached: decisions marked unclear could not be made within it")
	}
}
