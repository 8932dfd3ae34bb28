package report

import (
	"fmt"
	"strconv"
	"strings"

	"deltaprobe/sim/study"
)

// With several arms, or one arm with an allocation, n is a base size:
// arm a draws ceil(n × allocation) observations and the study as a whole
// the total N of them. Wherever such a study shows n, it also says what n
// stands for; a one-sample study with allocation 1 shows n alone.

// armLabel names arm a for the sizes: its name, "sample" for an unnamed
// single sample, "arm k" otherwise.
func armLabel(st study.Info, a int) string {
	switch {
	case st.Arms[a].Name != "":
		return st.Arms[a].Name
	case len(st.Arms) == 1:
		return "sample"
	}
	return "arm " + strconv.Itoa(a+1)
}

// armSizesText lists each arm's size and the total at base size n:
// "control 40, treated 60, total 100".
func armSizesText(st study.Info, n int) string {
	var parts []string
	for a, size := range st.ArmSizes(n) {
		parts = append(parts, armLabel(st, a)+" "+strconv.Itoa(size))
	}
	return strings.Join(append(parts, "total "+strconv.Itoa(st.Total(n))), ", ")
}

// armSizesNote says once what n stands for, with the sizes at n as the
// example; empty for a one-sample study.
func armSizesNote(st study.Info, n int) string {
	if !st.PerArm() {
		return ""
	}
	return fmt.Sprintf("n is the base size of each arm: at n = %d, %s.", n, armSizesText(st, n))
}

// exampleN is the n a note on the arm sizes shows: the smallest adequate
// n when there is one, else the largest n of the grid.
func exampleN(st study.Info, smallest int) int {
	if smallest > 0 || len(st.SampleSizes) == 0 {
		return smallest
	}
	return st.SampleSizes[len(st.SampleSizes)-1]
}

// armSizesGlance is the page's line on the arm sizes: the rule, then the
// sizes at each of ns; nil for a one-sample study.
func armSizesGlance(st study.Info, ns []int) []keyValue {
	if !st.PerArm() || len(ns) == 0 {
		return nil
	}
	parts := make([]string, len(ns))
	for i, n := range ns {
		parts[i] = fmt.Sprintf("at n = %d, %s", n, armSizesText(st, n))
	}
	return []keyValue{{"Arm sizes", "n is the base size of each arm, which draws ceil(n × allocation) observations; the total N is their sum (n_total): " +
		strings.Join(parts, "; ") + "."}}
}

// censoringText says, for each arm with censored lifetimes, how they are
// censored and the share of observations expected to be events at the
// truth: "control: all enter at 0, study ends at 2, expected share of
// events 0.632"; empty when no arm is censored.
func censoringText(st study.Info) string {
	var parts []string
	for a, arm := range st.Arms {
		if arm.Censoring == nil {
			continue
		}
		parts = append(parts, fmt.Sprintf("%s: %s; expected share of events %.3g", armLabel(st, a), arm.Censoring.Words(), arm.EventShare))
	}
	return strings.Join(parts, ". ")
}

// censoredMisfit reports whether an arm with censored lifetimes fits
// another family than its data's.
func censoredMisfit(st study.Info) bool {
	for _, arm := range st.Arms {
		if arm.Censoring != nil && arm.Fit != "" && arm.Fit != arm.Family {
			return true
		}
	}
	return false
}

// censoredPredictionWords says what the predictions of censored arms
// use: the expected information under the censoring, and for a fit of
// another family the sandwich at θ* with expectations under the data law
// and the censoring.
func censoredPredictionWords(st study.Info) string {
	own := false
	for _, arm := range st.Arms {
		if arm.Censoring != nil && (arm.Fit == "" || arm.Fit == arm.Family) {
			own = true
		}
	}
	switch {
	case !censoredMisfit(st):
		return "the expected information under this censoring"
	case !own:
		return "the sandwich at θ* with expectations under the data law and this censoring"
	}
	return "the expected information under this censoring (for a fit of another family, the sandwich at θ* with expectations under the data law and this censoring)"
}

// censoringNote is censoringText as a sentence for notes and subtitles.
func censoringNote(st study.Info) string {
	if t := censoringText(st); t != "" {
		return "Censored lifetimes, " + t + "."
	}
	return ""
}
