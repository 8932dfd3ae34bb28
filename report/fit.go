package report

import (
	"math"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/study"
)

// fitNote says, in words, where the fitted model differs from the data
// model and which plug-in variance the intervals use; "" for a study in
// which every arm fits its own family with the model-based variance, so
// such a study's page and figures read as they did before fits existed.
func fitNote(st study.Info) string {
	var mis, robust, model []string
	for a, arm := range st.Arms {
		label := armWord(st, a)
		if arm.Fit != "" && arm.Fit != arm.Family {
			mis = append(mis, label+arm.Family+" data fitted as "+arm.Fit+" (θ*: "+valuesText(arm.PseudoTrue)+")")
		}
		if arm.Robust() {
			robust = append(robust, strings.TrimSuffix(label, ": "))
		} else {
			model = append(model, strings.TrimSuffix(label, ": "))
		}
	}
	if len(mis) == 0 && len(robust) == 0 {
		return ""
	}
	var b strings.Builder
	if len(mis) > 0 {
		b.WriteString("The fitted model differs from the data model: " + strings.Join(mis, "; ") + ". ")
		b.WriteString("truth is the transform at the pseudo-true θ*, the fitted family's parameter closest to the data law in Kullback–Leibler divergence; delta_var is the delta method applied to the sandwich variance at θ* under the data law, the variance the estimate really has for large n. ")
	}
	switch {
	case len(model) == 0:
		b.WriteString("The intervals use the robust plug-in variance (the sandwich from each sample).")
	default:
		b.WriteString("The intervals use the robust plug-in variance (the sandwich from each sample) for " + strings.Join(robust, ", ") +
			" and the model-based one (inverse observed information at the estimate) for " + strings.Join(model, ", ") + ".")
	}
	if len(robust) == 0 {
		// Only misfits, all with the model-based variance.
		s := b.String()
		return s[:strings.LastIndex(s, "The intervals")] + "The intervals use the model-based plug-in variance (inverse observed information at the estimate), which a misfit can get wrong."
	}
	return b.String()
}

// armWord names arm a for fitNote: "arm NAME: ", or "" for one sample.
func armWord(st study.Info, a int) string {
	if st.Arms[a].Name == "" {
		return ""
	}
	return "arm " + st.Arms[a].Name + ": "
}

// valuesText writes named values in name order, "mean = 4, sd = 2".
func valuesText(v map[string]float64) string {
	keys := make([]string, 0, len(v))
	for k := range v {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	parts := make([]string, len(keys))
	for i, k := range keys {
		parts[i] = k + " = " + strconv.FormatFloat(v[k], 'g', 8, 64)
	}
	return strings.Join(parts, ", ")
}

// fitShort is fitNote in one sentence for transform t, for its figures'
// subtitle: which data the arms it reads were fitted as, and their
// plug-in variance; "" when those arms fit their own family with the
// model variance.
func fitShort(st study.Info, t int) string {
	var mis []string
	robust, read := 0, 0
	for a, arm := range st.Arms {
		if !readsArm(st, t, a) {
			continue
		}
		read++
		if arm.Fit != "" && arm.Fit != arm.Family {
			m := arm.Family + " data fitted as " + arm.Fit
			if !slices.Contains(mis, m) {
				mis = append(mis, m)
			}
		}
		if arm.Robust() {
			robust++
		}
	}
	var parts []string
	if len(mis) > 0 {
		parts = append(parts, "Fit differs from the data model: "+strings.Join(mis, "; "))
	}
	switch {
	case robust > 0 && robust == read:
		parts = append(parts, "robust (sandwich) plug-in variance")
	case robust > 0:
		parts = append(parts, "robust plug-in variance in some arms, model-based in the others")
	case len(mis) > 0:
		parts = append(parts, "model-based plug-in variance")
	}
	if len(parts) == 0 {
		return ""
	}
	return strings.Join(parts, "; ") + "."
}

// pluginLabel names the plug-in series of transform t's variance panel
// by the variance of the arms it reads: "" (the plain label) when they
// all fit their own family with the model variance.
func pluginLabel(st study.Info, t int) string {
	robust, model, mis := 0, 0, false
	for a, arm := range st.Arms {
		if !readsArm(st, t, a) {
			continue
		}
		if arm.Robust() {
			robust++
		} else {
			model++
		}
		mis = mis || (arm.Fit != "" && arm.Fit != arm.Family)
	}
	switch {
	case robust > 0 && model == 0:
		return "mean robust plug-in / simulated"
	case robust > 0:
		return "mean plug-in (robust in some arms) / simulated"
	case mis:
		return "mean model-based plug-in / simulated"
	}
	return ""
}

// readsArm reports whether transform t's expression names arm a: every
// transform reads the one arm of a [model] study, and a transform of a
// study with arms names each arm it reads as "arm.param".
func readsArm(st study.Info, t, a int) bool {
	name := st.Arms[a].Name
	if name == "" {
		return true
	}
	re := regexp.MustCompile(`(^|[^A-Za-z0-9_.])` + regexp.QuoteMeta(name) + `\.`)
	return re.MatchString(st.Transforms[t].Expr)
}

// readsMisfit reports whether transform t reads an arm whose fit differs
// from its data family.
func readsMisfit(st study.Info, t int) bool {
	for a, arm := range st.Arms {
		if readsArm(st, t, a) && arm.Fit != "" && arm.Fit != arm.Family {
			return true
		}
	}
	return false
}

// otherLabel names the series of the plug-in variance the intervals of
// transform t do not use, when rows hold it at some n: the robust one
// beside model-based intervals, the model-based one beside robust ones.
func otherLabel(st study.Info, t int, rows []measure.Row) string {
	kept := false
	for _, r := range rows {
		if !math.IsNaN(r.Get(measure.PluginOtherRatio)) {
			kept = true
		}
	}
	if !kept {
		return ""
	}
	robust := 0
	for a, arm := range st.Arms {
		if readsArm(st, t, a) && arm.Robust() {
			robust++
		}
	}
	if robust > 0 {
		return "mean model-based plug-in / simulated (not used)"
	}
	return "mean robust plug-in / simulated (not used)"
}
