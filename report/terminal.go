package report

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
)

// VerdictTable prints, per transform, the answer and why, in under 80
// columns, followed by the warnings.
func VerdictTable(w io.Writer, r *runner.Result) {
	rows := measure.Summarize(r)
	vs := measure.Verdicts(rows)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	var shorts []string
	for _, c := range measure.Criteria() {
		shorts = append(shorts, c.Short)
	}
	fmt.Fprintln(tw, "transform\tsmallest n\tstatus\tlimited by\t"+strings.Join(shorts, "\t"))
	for _, v := range vs {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s", clip(v.Transform, 22), dash(formatN(v.SmallestN)), v.Status, v.Limiting)
		for _, n := range v.PerCriterion {
			fmt.Fprintf(tw, "\t%s", dash(formatN(n)))
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
	wrap(w, "", fmt.Sprintf("%s: the smallest n from which that criterion alone passes. Level %v, %d replicates per n; a study checks the approximation only under the model it states.",
		strings.Join(shorts, ", "), r.Study.Level, r.Study.Replicates))
	if ws := measure.Warnings(r, rows); len(ws) > 0 {
		fmt.Fprintf(w, "\nwarnings (%d):\n", len(ws))
		for _, m := range ws {
			wrap(w, "  - ", m)
		}
	}
}

// wrap prints text in lines of at most 79 columns, the first starting
// with lead and the rest indented to match.
func wrap(w io.Writer, lead, text string) {
	const width = 79
	indent := strings.Repeat(" ", len([]rune(lead)))
	line := lead
	fresh := true
	for _, word := range strings.Fields(text) {
		if !fresh && len([]rune(line))+1+len([]rune(word)) > width {
			fmt.Fprintln(w, line)
			line, fresh = indent, true
		}
		if fresh {
			line += word
			fresh = false
		} else {
			line += " " + word
		}
	}
	fmt.Fprintln(w, line)
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
func PredictTable(w io.Writer, r *runner.Result) {
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
