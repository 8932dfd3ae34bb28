package report

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// VerdictTable prints, per transform, the answer and why, under the
// names verdicts.csv gives them, followed by the warnings.
func VerdictTable(w io.Writer, r *runner.Result) {
	rows := measure.Summarize(r)
	vs := measure.Verdicts(rows)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	// The columns are the deciding criteria; verdicts.csv has every one.
	deciding := measure.Deciding(r.Study.Criteria)
	var columns []string
	for _, c := range deciding {
		columns = append(columns, c.Column())
	}
	fmt.Fprintln(tw, "transform\tsmallest_n\tstatus\tlimiting\t"+strings.Join(columns, "\t"))
	for _, v := range vs {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s", clip(v.Transform, 16), boundsText(v), v.Status, v.Limiting)
		for _, c := range deciding {
			fmt.Fprintf(tw, "\t%s", dash(formatN(v.PerCriterion[c.Index()])))
		}
		fmt.Fprintln(tw)
	}
	tw.Flush()
	if note := armSizesNote(r.Study, exampleN(r.Study, firstSmallest(vs))); note != "" {
		wrap(w, "", note)
	}
	if note := fitNote(r.Study); note != "" {
		wrap(w, "", note)
	}
	wrap(w, "", fmt.Sprintf("smallest_n: where the smallest adequate n of the grid lies, one n where the replicates decided it, a range where they did not. %s: the same for that criterion alone. Level %v, %d replicates per n; %s. A study checks the approximation only under the model it states.",
		strings.Join(columns, ", "), r.Study.Level, r.Study.Replicates, measure.GridDecisions(r.Study).Method()))
	if customRecipe(r.Study) {
		for t, tr := range r.Study.Transforms {
			wrap(w, "  ", tr.Name+": "+recipeWords(r.Study, t)+".")
		}
	}
	for _, v := range vs {
		if len(v.Undecided) > 0 {
			wrap(w, "  ", v.Transform+": "+undecidedText(v.Undecided, r.Study.Replicates))
		}
	}
	if ws := measure.Warnings(r, rows); len(ws) > 0 {
		fmt.Fprintf(w, "\nwarnings (%d):\n", len(ws))
		for _, m := range ws {
			wrap(w, "  - ", m)
		}
	}
}

// firstSmallest is the first transform's smallest adequate n that there
// is, 0 if none.
func firstSmallest(vs []measure.TransformVerdict) int {
	for _, v := range vs {
		if v.SmallestN > 0 {
			return v.SmallestN
		}
	}
	return 0
}

// boundsText writes a transform's bounds on its smallest adequate n:
// "40" when they meet, "20–80" when they do not, "20–" when no n passes
// for sure up to the largest, a dash when the largest n fails.
func boundsText(v measure.TransformVerdict) string {
	switch {
	case v.Low == 0:
		return dash("")
	case v.Low == v.High:
		return formatN(v.Low)
	case v.High == 0:
		return formatN(v.Low) + "–"
	}
	return formatN(v.Low) + "–" + formatN(v.High)
}

// undecidedText names the undecided n and roughly the replicates that
// would decide each.
func undecidedText(us []measure.UndecidedN, have int) string {
	var parts []string
	for _, u := range us {
		switch {
		case u.Need == 0:
			parts = append(parts, fmt.Sprintf("n=%d (too uncertain to say how many)", u.N))
		case u.Need <= int64(have):
			parts = append(parts, fmt.Sprintf("n=%d (about as many replicates again)", u.N))
		default:
			parts = append(parts, fmt.Sprintf("n=%d (about %d replicates)", u.N, roundNeed(u.Need)))
		}
	}
	return "undecided at " + strings.Join(parts, ", ")
}

// roundNeed rounds a rough replicate count up to two significant digits.
func roundNeed(n int64) int64 {
	unit := int64(1)
	for n/unit >= 100 {
		unit *= 10
	}
	return (n + unit - 1) / unit * unit
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

// PredictTable prints the delta-method predictions per transform and n;
// with several arms or an allocation, also the total N at each n and,
// under the table, what n stands for.
func PredictTable(w io.Writer, r *runner.Result) {
	st := r.Study
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	total := func(int) string { return "" }
	if st.PerArm() {
		total = func(n int) string { return "\t" + strconv.Itoa(st.Total(n)) }
	}
	head := "transform\tn"
	if st.PerArm() {
		head += "\tN"
	}
	tested := false // a transform has a null: the table predicts its test
	for _, info := range st.Transforms {
		tested = tested || info.Null != nil
	}
	head += "\ttruth\tdelta_var\tdelta_sd\tbias_2nd\twidth_delta"
	if tested {
		head += "\tnull\treject_delta"
	}
	fmt.Fprintln(tw, head)
	for t, info := range st.Transforms {
		for ni, n := range st.SampleSizes {
			p := r.Predictions[t][ni]
			q, sd := st.Quantile(n), math.Sqrt(p.DeltaVar)
			fmt.Fprintf(tw, "%s\t%d%s\t%s\t%s\t%s\t%s\t%s", clip(info.Name, 24), n, total(n), formatFloat(p.Truth), formatFloat(p.DeltaVar),
				formatFloat(sd), formatFloat(p.Bias2nd), formatFloat(2*q*sd))
			switch {
			case info.Null != nil:
				fmt.Fprintf(tw, "\t%s\t%s", formatFloat(*info.Null), formatFloat(measure.RejectRate(q, (p.Truth-*info.Null)/sd)))
			case tested:
				fmt.Fprint(tw, "\t–\t–")
			}
			fmt.Fprintln(tw)
		}
	}
	tw.Flush()
	if note := armSizesNote(st, exampleN(st, 0)); note != "" {
		wrap(w, "", note+" N: the total at each n.")
	}
	for _, a := range st.Arms {
		if a.Design != "" {
			wrap(w, "", regressionText(a)+".")
		}
	}
	wrap(w, "", "width_delta: the width 2·q·delta_sd the delta method predicts for the interval, q "+quantileWords(st)+"."+
		map[bool]string{true: " reject_delta: the rate at which that interval excludes the null when the transform is at its truth, Φ(−q − δ) + 1 − Φ(q − δ) with δ = (truth − null)/delta_sd.", false: ""}[tested])
	if note := fitNote(st); note != "" {
		wrap(w, "", note)
	}
	if biasNotAvailable(r) {
		wrap(w, "", "bias_2nd empty: not available, the O(1/n) bias of an estimate the transform reads is not derived for this fit.")
	}
	if note := censoringNote(st); note != "" {
		wrap(w, "", note+" delta_var uses "+censoredPredictionWords(st)+".")
	}
}

// quantileWords names the interval's quantile: "the normal quantile
// 1.96", or Student's t with its df expression.
func quantileWords(st study.Info) string {
	if st.Interval != nil && st.Interval.Quantile == study.QuantileT {
		return fmt.Sprintf("the %v quantile of Student's t with %s degrees of freedom", 1-(1-st.Level)/2, st.Interval.DF)
	}
	return fmt.Sprintf("the normal quantile %s", formatFloat(st.Quantile(0)))
}

// biasNotAvailable reports whether any prediction's second-order bias is
// not available (NaN).
func biasNotAvailable(r *runner.Result) bool {
	for _, ps := range r.Predictions {
		for _, p := range ps {
			if math.IsNaN(p.Bias2nd) {
				return true
			}
		}
	}
	return false
}
