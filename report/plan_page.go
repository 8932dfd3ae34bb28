package report

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/study"
)

// The plan's index.html answers "from what n on is the approximation
// adequate?" first, per transform, and then shows how the search got
// there. It is built like the run's page: one static file beside its
// figures, no scripts, nothing fetched, well-formed XML as well as HTML.

// planPageData is what the plan's page shows.
type planPageData struct {
	studyPage
	Answers []planAnswerLine
	Method  string
	Notes   []string
	Steps   summaryTable
}

// planAnswerLine is a transform's row of the answer table.
type planAnswerLine struct {
	answerLine
	Checked      int
	Replicates   int64
	Window       string
	Oscillations string
	Undecided    string
}

var planPageTemplate = newPageTemplate(planPageParts)

// PlanPage renders index.html for the saved plan p, with figs (from
// PlanFigures) as the images it shows, referenced by file name beside
// the page.
func PlanPage(p *plan.Result, figs []Figure) ([]byte, error) {
	return renderPage(planPageTemplate, buildPlanPage(p, figs))
}

func buildPlanPage(p *plan.Result, figs []Figure) planPageData {
	spec, st := p.Spec, p.Study
	window := p.WindowRule
	glance := []keyValue{
		{"Search range", fmt.Sprintf("n from %d to %d", spec.NMin, spec.NMax)},
		{"Replicates", fmt.Sprintf("at most %d per n, added in batches of %d until the verdict is decided", spec.MaxReplicates, spec.Batch)},
		{"Decisions", p.Method},
		{"Window", "above each answer, " + window + " are also checked"},
	}
	glance = slices.Insert(glance, 1, armSizesGlance(st, []int{spec.NMin, spec.NMax})...)
	exhausted := "no"
	if p.Exhausted {
		exhausted = "yes: decisions marked unclear could not be made within it"
	}
	provenance := []keyValue{
		{"Search range", fmt.Sprintf("%d to %d", spec.NMin, spec.NMax)},
		{"Replicates per n", fmt.Sprintf("at most %d, in batches of %d", spec.MaxReplicates, spec.Batch)},
		{"Interval quantile per look", fmt.Sprintf("z = %.3f", p.Z)},
		{"Block size", strconv.Itoa(study.BlockSize)},
		{"Replicates simulated in all", strconv.FormatInt(p.Total, 10)},
		{"Budget cap reached", exhausted},
		{"Workers", strconv.Itoa(p.Workers)},
		{"Simulation time", fmt.Sprintf("%.2f s", p.Elapsed)},
		{"Finished", dashIfEmpty(p.Finished)},
		{"Plan layout", strconv.Itoa(p.Layout)},
	}
	d := planPageData{
		studyPage: newStudyPage(st, p.Tool, p.Build, false, glance, provenance),
		Method:    p.Method,
		Steps:     planStepsTable(p),
	}
	z := fmt3(p.Z)
	d.Criteria = criterionRules(st.Criteria, "interval (z = "+z+", widened for repeated looks)")
	stems := transformStems(st.Transforms)
	for t, info := range st.Transforms {
		v := newPlanView(p, t)
		line := planAnswerLine{
			answerLine:   newAnswerLine(info, stems[t], v.verdict, planExplainPower(p, v, spec)),
			Checked:      len(v.steps),
			Replicates:   v.replicates,
			Window:       dash(""),
			Oscillations: "none",
			Undecided:    "none",
		}
		if v.windowTop > 0 {
			line.Window = fmt.Sprintf("+%d (%d–%d)", v.window, v.answer+1, v.windowTop)
		}
		if len(v.oscill) > 0 {
			line.Oscillations = joinInts(v.oscill)
			if t < len(p.LargestFail) {
				line.Oscillations += fmt.Sprintf("; largest %d", p.LargestFail[t])
			}
			d.Notes = append(d.Notes, fmt.Sprintf("%s: not monotone in n. n = %s failed above an earlier passing n, and the search started again above it.", info.Name, joinInts(v.oscill)))
		}
		if len(v.undecided) > 0 {
			line.Undecided = joinInts(v.undecided)
			d.Notes = append(d.Notes, fmt.Sprintf("%s: %d n above the answer stayed undecided within %d replicates (they neither passed nor failed).", info.Name, len(v.undecided), spec.MaxReplicates))
		}
		d.Answers = append(d.Answers, line)
		d.addSection(line.answerLine, t, figs, func(Figure) string { return planCaption(v) })
	}
	if p.Exhausted {
		d.Notes = append(d.Notes, "The -budget cap on the replicates of the whole plan was reached: decisions marked unclear could not be made within it.")
	}
	return d
}

func planCaption(v planView) string {
	s := "Left: every n the search evaluated, on a log axis over the search range, with the Monte Carlo interval each decision used, widened for repeated looks; the marker gives that criterion's verdict at that n (filled circle pass, cross fail, open diamond unclear). Grey bands are the accepted bands."
	if v.answer > 0 {
		s += " The dash-dot line marks the search's answer (n_high: the smallest adequate n when the bracket closes) and the hatched strip the window above it that was also checked; the right-hand column shows the n near the answer one integer at a time."
	}
	return s + " The bottom row gives the replicates behind each decision, topped by the overall verdict at that n."
}

// planStepsTable is plan.csv for reading: every column, to four
// significant digits (the file has eight).
func planStepsTable(p *plan.Result) summaryTable {
	cols := PlanColumns(p.Study.Criteria)
	tb := summaryTable{Caption: "Every evaluation, per transform, in the order the search made them", Columns: cols}
	for _, st := range p.Steps {
		cells := make([]summaryCell, len(cols))
		for i, col := range cols {
			cells[i] = planCellFor(st, col)
		}
		tb.Rows = append(tb.Rows, cells)
	}
	return tb
}

func planCellFor(st plan.Step, col string) summaryCell {
	switch col {
	case "step":
		return summaryCell{Text: strconv.Itoa(st.Step), Class: "num"}
	case "replicates":
		return summaryCell{Text: strconv.FormatInt(st.Replicates, 10), Class: "num"}
	}
	return summaryCellFor(st.Row, col)
}

// planExplain says, for one transform, what the plan found and why the
// answer is not smaller, from the evaluations themselves.
func planExplain(v planView, spec study.PlanSpec) string {
	tv := v.verdict
	var b strings.Builder
	switch tv.Status {
	case measure.Adequate:
		a := tv.SmallestN
		fmt.Fprintf(&b, "Smallest adequate n = %d: %s all pass there, and no n checked above it fails", a, criteriaInWords(v.steps[0].Row))
		if v.windowTop > 0 {
			fmt.Fprintf(&b, ", the window n = %d–%d included", a+1, v.windowTop)
		}
		b.WriteString(".")
		switch prev, ok := v.below(a); {
		case !ok:
			b.WriteString(" It is the smallest n searched; smaller n were not checked.")
		case prev.Row.Verdict != measure.Pass:
			fmt.Fprintf(&b, " Not at n = %d, the largest n below it checked: %s.", prev.N, planVoice.shortfalls(prev.Row))
		default:
			fmt.Fprintf(&b, " n = %d passes too, but a larger n failed, so adequacy could not start there.", prev.N)
		}
		if len(v.undecided) > 0 {
			fmt.Fprintf(&b, " %d n above it stayed undecided within %d replicates (%s): they neither passed nor failed, so they do not move the answer, but the plan does not vouch for them either.",
				len(v.undecided), spec.MaxReplicates, joinInts(v.undecided))
		}
		if len(v.oscill) > 0 {
			fmt.Fprintf(&b, " The verdict is not monotone in n: n = %s failed above an earlier passing n, and the search started again above it.", joinInts(v.oscill))
		}
	case measure.NotReached:
		fmt.Fprintf(&b, "Not adequate at any n checked, up to %d.", spec.NMax)
		if last, ok := v.stepAt(v.largestN); ok {
			fmt.Fprintf(&b, " At n = %d, the largest checked, %s.", last.N, planVoice.shortfalls(last.Row))
		}
	default:
		if tv.High > 0 {
			fmt.Fprintf(&b, "The smallest adequate n lies in %s. n = %d passes, with no n checked above it failing", boundsText(tv), tv.High)
			if v.windowTop > 0 {
				fmt.Fprintf(&b, " (the window n = %d–%d included)", tv.High+1, v.windowTop)
			}
			if len(tv.Undecided) > 0 {
				fmt.Fprintf(&b, "; below it, %s.", undecidedText(tv.Undecided, spec.MaxReplicates))
				if tv.Low > spec.NMin {
					fmt.Fprintf(&b, " n = %d decidedly fails, so the answer is above it.", tv.Low-1)
				}
				fmt.Fprintf(&b, " Raising max_replicates above %d would narrow the range.", spec.MaxReplicates)
			} else {
				b.WriteString("; the -budget cap left the window above it unchecked.")
			}
			break
		}
		b.WriteString("Undecided.")
		if last, ok := v.stepAt(v.largestN); ok {
			fmt.Fprintf(&b, " At n = %d, the largest checked, no criterion fails, but %s.", last.N, planVoice.shortfalls(last.Row))
		}
		fmt.Fprintf(&b, " %d replicates per n could not settle it.", spec.MaxReplicates)
	}
	return b.String()
}

// planExplainPower is planExplain, and for a transform whose power
// decides, what the delta method's power formula said.
func planExplainPower(p *plan.Result, v planView, spec study.PlanSpec) string {
	s := planExplain(v, spec)
	if n, ok := p.DeltaPowerN[v.info.Name]; ok {
		s += " " + strings.ToUpper(deltaPowerWords(p, n)[:1]) + deltaPowerWords(p, n)[1:] + "."
	}
	return s
}

// deltaPowerWords says where the delta method's power formula reaches
// the target, the planner's usual answer.
func deltaPowerWords(p *plan.Result, n int) string {
	target := fmtG(p.Study.Criteria.PowerTarget())
	if n == 0 {
		return fmt.Sprintf("the delta method's power formula (reject_delta) does not reach %s by n = %d", target, p.Spec.NMax)
	}
	return fmt.Sprintf("the delta method's power formula (reject_delta) reaches %s at n = %d", target, n)
}
