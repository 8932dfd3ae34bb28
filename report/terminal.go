package report

import (
	"fmt"
	"io"
	"math"
	"text/tabwriter"

	"deltaprobe/sim"
)

// VerdictTable prints, per transform, the answer and why, in under 80
// columns, followed by the warnings.
func VerdictTable(w io.Writer, r *sim.Result) {
	rows := r.Summarize()
	vs := sim.Verdicts(rows)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "transform\tsmallest n\tstatus\tlimiting\tcoverage\tvariance\tbias")
	for _, v := range vs {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\n", clip(v.Transform, 24), dash(formatN(v.SmallestN)), v.Status, v.Limiting,
			dash(formatN(v.PerCriterion[0])), dash(formatN(v.PerCriterion[1])), dash(formatN(v.PerCriterion[2])))
	}
	tw.Flush()
	fmt.Fprintf(w, "(columns coverage/variance/bias: smallest n from which that criterion alone passes; level %v, %d replicates per n)\n",
		r.Study.Level, r.Study.Replicates)
	if ws := r.Warnings(rows); len(ws) > 0 {
		fmt.Fprintf(w, "\nwarnings (%d):\n", len(ws))
		for _, m := range ws {
			fmt.Fprintf(w, "  - %s\n", m)
		}
	}
}

func dash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

func clip(s string, n int) string {
	if len([]rune(s)) <= n {
		return s
	}
	return string([]rune(s)[:n-1]) + "…"
}

// PredictTable prints the delta-method predictions per transform and n.
func PredictTable(w io.Writer, r *sim.Result) {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "transform\tn\ttruth\tdelta_var\tdelta_sd\tbias_2nd")
	for t, info := range r.Study.Transforms {
		for ni, n := range r.Study.SampleSizes {
			p := r.Predictions[t][ni]
			fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%s\t%s\n", clip(info.Name, 24), n, formatFloat(p.Truth), formatFloat(p.DeltaVar),
				formatFloat(math.Sqrt(p.DeltaVar)), formatFloat(p.Bias2nd))
		}
	}
	tw.Flush()
}
