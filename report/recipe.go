package report

import (
	"fmt"
	"strings"

	"deltaprobe/sim/study"
)

// customRecipe reports whether the study states an interval other than
// the plain Wald one: a t quantile, a zero-cell correction, an analyst's
// standard error or a test.
func customRecipe(st study.Info) bool {
	if st.Interval != nil && (st.Interval.Quantile == study.QuantileT || st.Interval.AddHalf()) {
		return true
	}
	for _, t := range st.Transforms {
		if t.SE != "" || t.Null != nil {
			return true
		}
	}
	return false
}

// mathText sets an expression of the study file for reading: a minus
// sign for "-" and √ for sqrt.
func mathText(src string) string {
	return strings.NewReplacer(" - ", " − ", "sqrt(", "√(").Replace(src)
}

// recipeWords says, in words, how transform t's interval is built and
// tested: "t quantile with n − 1 df, standard error 1/√(n − 3); test of
// H0: z = 0".
func recipeWords(st study.Info, t int) string {
	var parts []string
	q := "normal quantile"
	if st.Interval != nil && st.Interval.Quantile == study.QuantileT {
		q = "t quantile with " + mathText(st.Interval.DF) + " df"
	}
	parts = append(parts, q)
	tr := st.Transforms[t]
	if tr.SE != "" {
		parts = append(parts, "standard error "+mathText(tr.SE))
	} else {
		parts = append(parts, "standard error from the plug-in delta method")
	}
	if st.Interval.AddHalf() {
		parts = append(parts, "0.5 added to every cell when a count is 0 or all its trials (Haldane–Anscombe)")
	}
	s := strings.Join(parts, ", ")
	if tr.Null != nil {
		s += fmt.Sprintf("; test of H0: %s = %s", tr.Name, fmtG(*tr.Null))
	}
	return s
}

// decidingWords says how many criteria decide, for the pages: "all three
// criteria pass".
func decidingWords(k int) string {
	words := []string{"no", "one", "two", "three", "four", "five"}
	switch k {
	case 1:
		return "its one deciding criterion passes"
	case 2:
		return "both deciding criteria pass"
	}
	return "all " + words[min(k, len(words)-1)] + " criteria pass"
}

// intervalGlance is the page's one-line account of the intervals.
func intervalGlance(st study.Info) string {
	if !customRecipe(st) {
		return fmt.Sprintf("Wald intervals at level %s, standard error from the plug-in delta method", fmtG(st.Level))
	}
	var per []string
	for t, tr := range st.Transforms {
		per = append(per, tr.Name+": "+recipeWords(st, t))
	}
	return fmt.Sprintf("Intervals at level %s. %s", fmtG(st.Level), strings.Join(per, ". "))
}
