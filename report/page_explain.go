package report

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
)

// explain answers, for one transform, "from what n is the delta method
// adequate here, and why not before?" in a sentence or two built from the
// rows: the n the verdict names, and what each criterion that held it
// back showed at the n just below, with its Monte Carlo interval and band.
func explain(rows []measure.Row, v measure.TransformVerdict) string {
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
			return fmt.Sprintf("Smallest adequate n = %d, the smallest n studied: %s pass at every n of the grid. Smaller samples were not checked.", first.N, criteriaInWords(first))
		}
		prev := rows[idx-1]
		s := fmt.Sprintf("Smallest adequate n = %d. Not before, because at n = %d %s.", v.SmallestN, prev.N, runVoice.shortfalls(prev))
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
		return fmt.Sprintf("Not adequate at any n of the grid. At the largest, n = %d, %s.", last.N, runVoice.shortfalls(last))
	case measure.StatusUnclear:
		if v.High > 0 {
			var ns []string
			for _, u := range v.Undecided {
				ns = append(ns, strconv.Itoa(u.N))
			}
			return fmt.Sprintf("Undecided: the smallest adequate n lies between %d and %d, but the replicates did not decide n = %s. More replicates would narrow the Monte Carlo intervals and settle it.", v.Low, v.High, strings.Join(ns, ", "))
		}
		return fmt.Sprintf("Undecided. At the largest n, %d, no criterion fails, but %s. More replicates would narrow the Monte Carlo intervals and settle it.", last.N, runVoice.shortfalls(last))
	}
	return ""
}

// checkVoice is how a page words what a check showed: what it calls the
// interval, and for each criterion a sentence for each place the interval
// can take against the band. The run's and the plan's pages describe
// checks the same way, in their own words.
type checkVoice struct {
	interval  string // what the interval is called
	sentences func(cr *measure.Criterion) checkSentences
}

// checkSentences say what one criterion showed. In each, {value} stands
// for the criterion's value, {interval} for the interval and its ends,
// {band} for the band and its edges, {bound} for the band's upper edge,
// and {edges} for the edges of the band the interval crosses.
type checkSentences struct {
	missing  string // an end of the interval is not a number; "" places it as any other
	below    string // failed, the interval wholly below the band
	above    string // failed, the interval wholly above the band
	across   string // the interval crosses {edges}
	unplaced string // none of the above: the interval crosses no edge
}

// runVoice says what each criterion's failure means for the quantity
// itself, in the criterion's own words (measure's table), of the Monte
// Carlo intervals that the run's verdicts use (their level is stated
// once, with the criteria).
var runVoice = checkVoice{
	interval: "Monte Carlo interval",
	sentences: func(cr *measure.Criterion) checkSentences {
		return checkSentences{
			below:    cr.Below,
			above:    cr.Above,
			across:   strings.Replace(cr.Unclear, "{crosses}", "{interval} crosses the band's edge at {edges}", 1),
			unplaced: strings.Replace(cr.Unclear, "{crosses}", "{interval}, {band}", 1),
		}
	},
}

// planVoice says every criterion alike, by its place against the band;
// the plan's intervals are widened for repeated looks, so they are named
// by no level.
var planVoice = checkVoice{
	interval:  "interval",
	sentences: func(cr *measure.Criterion) checkSentences { return placeSentences(cr.Noun) },
}

// placeSentences say where subject's interval lies against its band.
func placeSentences(subject string) checkSentences {
	return checkSentences{
		missing:  subject + " could not be estimated ({band})",
		below:    subject + " is below its band: {value} ({interval}; {band})",
		above:    subject + " is above its band: {value} ({interval}; {band})",
		across:   subject + " is not clearly inside its band: {value} ({interval} crosses {edges})",
		unplaced: subject + " is not clearly inside its band: {value} ({interval}; {band})",
	}
}

// shortfalls describes every criterion that does not pass at row r, in
// one clause each, joined by "; and ".
func (v checkVoice) shortfalls(r measure.Row) string {
	var out []string
	for _, cr := range measure.Criteria() {
		if ch := r.Check(cr); ch.Verdict != measure.Pass && !ch.Advisory {
			out = append(out, v.describe(cr, r, ch))
		}
	}
	if len(out) == 0 {
		// Cannot happen for a row whose verdict is not pass; say so
		// rather than print an empty clause.
		out = append(out, "every criterion passes")
	}
	return strings.Join(out, "; and ")
}

// describe says what criterion cr showed at row r: its value, and where
// its interval ch lies against its band.
func (v checkVoice) describe(cr *measure.Criterion, r measure.Row, ch measure.Check) string {
	s := v.sentences(cr)
	var edges []string
	for _, e := range ch.Band {
		if ch.Low < e && e < ch.High {
			edges = append(edges, fmt3(e))
		}
	}
	sentence := s.unplaced
	switch {
	case s.missing != "" && (math.IsNaN(ch.Low) || math.IsNaN(ch.High)):
		sentence = s.missing
	case ch.Verdict == measure.Fail && ch.High < ch.Band[0]:
		sentence = s.below
	case ch.Verdict == measure.Fail && ch.Low > ch.Band[1]:
		sentence = s.above
	case len(edges) > 0:
		sentence = s.across
	}
	return strings.NewReplacer(
		"{value}", fmt3(r.Get(cr.Measure)),
		"{interval}", fmt.Sprintf("%s %s to %s", v.interval, fmt3(ch.Low), fmt3(ch.High)),
		"{band}", fmt.Sprintf("band %s to %s", fmt3(ch.Band[0]), fmt3(ch.Band[1])),
		"{bound}", fmt3(ch.Band[1]),
		"{edges}", strings.Join(edges, " and "),
	).Replace(sentence)
}

// criteriaInWords lists the names of the criteria that decide row r as
// a sentence does: "coverage, variance and bias".
func criteriaInWords(r measure.Row) string {
	var names []string
	for _, c := range measure.Criteria() {
		if !r.Check(c).Advisory {
			names = append(names, c.Name)
		}
	}
	if len(names) < 2 {
		return strings.Join(names, "")
	}
	return strings.Join(names[:len(names)-1], ", ") + " and " + names[len(names)-1]
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
