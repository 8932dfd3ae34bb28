package study

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"deltaprobe/sim/expr"
	"deltaprobe/sim/family"
	"deltaprobe/sim/regress"
)

// Regression models live in [model]: family and coefficients for one
// equation, or [[model.equation]] tables for a chain; the covariates in
// [[model.covariate]] tables either way.

const maxCovariates = 32
const maxEquations = 8
const maxLevels = 1000

var covariateKeys = map[string][]string{
	"levels":    {"values"},
	"bernoulli": {"p"},
	"normal":    {"mean", "sd"},
	"uniform":   {"min", "max"},
}

// isRegression reports whether a [model] table declares a regression:
// a regression family, or equations.
func isRegression(m map[string]any) bool {
	if _, ok := m["equation"]; ok {
		return true
	}
	if name, ok := m["family"].(string); ok {
		_, reg := regress.Lookup(name)
		return reg
	}
	return false
}

// regression decodes a regression [model] into a.
func (d *decoder) regression(table string, m map[string]any, a *Arm) bool {
	_, chain := m["equation"]
	accepted := []string{"covariate"}
	design := &regress.Design{Chain: chain}
	if chain {
		accepted = append(accepted, "equation")
		if _, given := m["fit"]; given {
			d.fail(join(table, "fit"), "fit in [model] is for a regression of one equation (a linear fit of logistic_regression or poisson_regression data, a poisson_regression fit of logistic_regression data); a chain's equations are each fitted by their own family")
		}
		for _, k := range []string{"family", "coefficients", "sd"} {
			if _, given := m[k]; given {
				d.fail(join(table, k), "%s in [model] is for a model of one equation; with [[model.equation]] tables each equation gives its own family, coefficients (and sd)", k)
			}
		}
	} else {
		accepted = append(accepted, "family", "coefficients", "sd")
	}
	d.unknownKeysAt(table, "in a regression [model]", m, append(accepted, "family", "coefficients", "sd", "variance", "fit"))
	robust := false
	if raw, given := m["variance"]; given {
		switch raw {
		case "model":
		case "robust":
			robust = true
		default:
			d.fail(join(table, "variance"), "variance must be \"model\" (inverse information at the estimate) or \"robust\" (the HC0 sandwich of the estimating equations, from the sample), got %s", variantText(raw))
			return false
		}
	}
	ok := d.covariates(table, m, design)
	var columns []string // covariates, then outcomes, in declaration order
	for _, c := range design.Covariates {
		columns = append(columns, c.Name)
	}
	if chain {
		list, isList := m["equation"].([]map[string]any)
		if !isList {
			d.fail(join(table, "equation"), "equation must be an array of tables ([[model.equation]]), got %s", typeName(m["equation"]))
			return false
		}
		if len(list) == 0 || len(list) > maxEquations {
			d.fail(join(table, "equation"), "%d equations given; a chain has from 1 to %d", len(list), maxEquations)
			return false
		}
		for i, em := range list {
			et := fmt.Sprintf("%s.equation[%d]", table, i)
			d.unknownKeysAt(et, "in [[model.equation]]", em, []string{"outcome", "family", "coefficients", "sd"})
			outcome := d.str(em, et, "outcome", "")
			switch {
			case outcome == "":
				d.fail(et, "this [[model.equation]] has no outcome: add outcome = \"...\", the name later equations and transforms use")
				ok = false
				continue
			case !armNamePattern.MatchString(outcome) || len(outcome) > maxNameLength || outcome == "intercept" || outcome == "sd":
				d.fail(join(et, "outcome"), "outcome %q is not accepted: use letters, digits and _, starting with a letter or _, at most %d characters, and not intercept or sd", outcome, maxNameLength)
				ok = false
				continue
			case slices.Contains(columns, outcome):
				d.fail(join(et, "outcome"), "outcome %q is already the name of a covariate or an earlier outcome", outcome)
				ok = false
				continue
			}
			e, good := d.equation(et, em, outcome, columns, laterOutcomes(list[i+1:]), "an earlier equation's outcome")
			ok = ok && good
			columns = append(columns, outcome)
			design.Equations = append(design.Equations, e)
		}
	} else {
		e, good := d.equation(table, m, "y", columns, nil, "")
		ok = ok && good
		if good {
			ok = d.regressionFit(table, m, &e) && ok
		}
		design.Equations = []regress.Equation{e}
	}
	if !ok {
		return false
	}
	// Every drawn covariate must enter some equation.
	for _, c := range design.Covariates {
		if c.Dist == regress.Derived {
			continue
		}
		usedBy := false
		for _, e := range design.Equations {
			for _, t := range e.Terms {
				usedBy = usedBy || t.Name == c.Name
			}
		}
		if !usedBy {
			where := "coefficients"
			if chain {
				where = "the coefficients of some equation"
			}
			d.fail(table, "covariate %s has no coefficient: add %s = ... to %s, or remove the covariate", c.Name, c.Name, where)
			ok = false
		}
	}
	if !ok {
		return false
	}
	model, err := regress.New(design)
	if err != nil {
		d.fail(table, "[model]: %v", err)
		return false
	}
	a.Family = design.Equations[0].Kind.String()
	if chain {
		a.Family = "equations"
	}
	model.Robust = robust
	if robust {
		a.Variance = family.RobustVariance
	}
	a.Regression = model
	a.Names = design.ParamNames()
	truth := design.Truth()
	for i, name := range design.DataNames() {
		a.Values[name] = truth[i]
	}
	if e := design.Equations[0]; !chain && e.Fitted() != e.Kind {
		a.Fit = e.Fitted().String()
	}
	a.Model = model.Model()
	return true
}

// covariates decodes [[model.covariate]] into design.
func (d *decoder) covariates(table string, m map[string]any, design *regress.Design) bool {
	raw, given := m["covariate"]
	if !given {
		return true
	}
	list, isList := raw.([]map[string]any)
	if !isList {
		d.fail(join(table, "covariate"), "covariate must be an array of tables ([[model.covariate]]), got %s", typeName(raw))
		return false
	}
	if len(list) > maxCovariates {
		d.fail(join(table, "covariate"), "%d covariates given; at most %d are accepted", len(list), maxCovariates)
		return false
	}
	ok := true
	var names []string
	for i, cm := range list {
		ct := fmt.Sprintf("%s.covariate[%d]", table, i)
		name := d.str(cm, ct, "name", "")
		switch {
		case name == "":
			d.fail(ct, "this [[model.covariate]] has no name: add name = \"...\", the name its coefficient goes by")
			ok = false
			continue
		case !armNamePattern.MatchString(name) || len(name) > maxNameLength || name == "intercept" || name == "sd":
			d.fail(join(ct, "name"), "covariate name %q is not accepted: use letters, digits and _, starting with a letter or _, at most %d characters, and not intercept or sd", name, maxNameLength)
			ok = false
			continue
		case slices.Contains(names, name):
			d.fail(join(ct, "name"), "covariate name %q is used twice: each covariate needs its own name", name)
			ok = false
			continue
		}
		c := regress.Covariate{Name: name}
		if src, derived := cm["expr"]; derived {
			d.unknownKeysAt(ct, "for a derived covariate (expr)", cm, []string{"name", "expr"})
			s, isStr := src.(string)
			if !isStr || s == "" {
				d.fail(join(ct, "expr"), "expr must be a non-empty string, e.g. expr = \"%s^2\"", firstOr(names, "dose"))
				ok = false
				continue
			}
			c.Dist, c.Expr = regress.Derived, s
			if _, err := expr.Compile(s, names); err != nil {
				if later := laterName(s, names, list[i+1:]); later != "" {
					d.fail(join(ct, "expr"), "covariate %s uses %s, which is declared below it: a derived covariate may use only the covariates declared above it; declare %s below %s", name, later, name, later)
				} else {
					d.fail(join(ct, "expr"), "covariate %s: %v (a derived covariate may use the covariates declared above it: %s)", name, strings.TrimPrefix(err.Error(), "expr: "), orNone(names))
				}
				ok = false
			}
			design.Covariates = append(design.Covariates, c)
			names = append(names, name)
			continue
		}
		distRaw, has := cm["distribution"]
		dist, isStr := distRaw.(string)
		if !has || !isStr || covariateKeys[dist] == nil {
			msg := "covariate %s needs distribution = \"levels\", \"bernoulli\", \"normal\" or \"uniform\" (or expr = \"...\" for a derived covariate)"
			if has {
				msg += fmt.Sprintf("; got %v%s", distRaw, didYouMeanAny(distRaw, regress.DistNames))
			}
			d.fail(ct, msg, name)
			ok = false
			continue
		}
		d.unknownKeysAt(ct, "for a "+dist+" covariate", cm, append([]string{"name", "distribution"}, covariateKeys[dist]...))
		need := func(key, accepts string, check func(float64) bool) float64 {
			if _, given := cm[key]; !given {
				d.fail(ct, "%s covariate %s needs %s (%s)", dist, name, key, accepts)
				ok = false
				return 0
			}
			v, good := d.number(cm, ct, key)
			if good && !check(v) {
				d.fail(join(ct, key), "%s = %v is out of range for covariate %s: accepted is %s", key, v, name, accepts)
				good = false
			}
			ok = ok && good
			return v
		}
		switch dist {
		case "levels":
			c.Dist = regress.Levels
			c.Values = d.levels(ct, cm, name)
			if c.Values == nil {
				ok = false
			}
		case "bernoulli":
			c.Dist = regress.Bernoulli
			c.P = need("p", "a number strictly between 0 and 1", func(v float64) bool { return v > 0 && v < 1 })
		case "normal":
			c.Dist = regress.Normal
			c.Mean = need("mean", "any real number", func(float64) bool { return true })
			c.SD = need("sd", "a number > 0", func(v float64) bool { return v > 0 })
		case "uniform":
			c.Dist = regress.Uniform
			c.Min = need("min", "any real number", func(float64) bool { return true })
			c.Max = need("max", "a number above min", func(float64) bool { return true })
			if ok && !(c.Max > c.Min) {
				d.fail(join(ct, "max"), "covariate %s: max = %v must be larger than min = %v", name, c.Max, c.Min)
				ok = false
			}
		}
		design.Covariates = append(design.Covariates, c)
		names = append(names, name)
	}
	return ok
}

// laterName is the first covariate declared below a derived one whose
// name, added to those above, makes its expression compile: the
// expression uses a covariate declared too late.
func laterName(src string, above []string, later []map[string]any) string {
	for _, cm := range later {
		n, ok := cm["name"].(string)
		if !ok || n == "" || slices.Contains(above, n) {
			continue
		}
		if _, err := expr.Compile(src, append(slices.Clone(above), n)); err == nil {
			return n
		}
	}
	return ""
}

func didYouMeanAny(v any, accepted []string) string {
	if s, ok := v.(string); ok {
		return didYouMean(s, accepted)
	}
	return ""
}

// levels decodes a levels covariate's values.
func (d *decoder) levels(ct string, cm map[string]any, name string) []float64 {
	raw, given := cm["values"]
	if !given {
		d.fail(ct, "levels covariate %s needs values, the levels assigned in turn, e.g. values = [0, 1, 2, 4]", name)
		return nil
	}
	list, isList := raw.([]any)
	if !isList || len(list) < 2 || len(list) > maxLevels {
		d.fail(join(ct, "values"), "values of covariate %s must be an array of 2 to %d numbers, e.g. [0, 1, 2, 4]", name, maxLevels)
		return nil
	}
	var vals []float64
	for i, e := range list {
		var v float64
		switch x := e.(type) {
		case int64:
			v = float64(x)
		case float64:
			v = x
		default:
			d.fail(join(ct, "values"), "values entry %d of covariate %s is %s; levels are numbers", i+1, name, typeName(e))
			return nil
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			d.fail(join(ct, "values"), "values entry %d of covariate %s is not a finite number", i+1, name)
			return nil
		}
		vals = append(vals, v)
	}
	if slices.Min(vals) == slices.Max(vals) {
		d.fail(join(ct, "values"), "every level of covariate %s is %v: a constant covariate is the intercept again; give at least two different levels", name, vals[0])
		return nil
	}
	return vals
}

// equation decodes one equation's family, coefficients and sd from m.
// columns are the names its terms may use; laterWhat names what else
// they may be in messages.
func (d *decoder) equation(table string, m map[string]any, outcome string, columns, later []string, laterWhat string) (regress.Equation, bool) {
	e := regress.Equation{Outcome: outcome}
	famRaw, given := m["family"]
	famName, isStr := famRaw.(string)
	fam, known := regress.Lookup(famName)
	switch {
	case !given:
		d.fail(table, "this equation has no family: add family = \"...\"; accepted: %s", strings.Join(regress.Names(), ", "))
		return e, false
	case !isStr || !known:
		msg := "; accepted: " + strings.Join(regress.Names(), ", ")
		if isStr {
			msg = didYouMean(famName, regress.Names())
		}
		d.fail(join(table, "family"), "family %v is not a regression family%s", famRaw, msg)
		return e, false
	}
	e.Kind = fam.Kind
	ok := true
	if sdRaw, has := m["sd"]; has {
		if fam.Kind != regress.Linear {
			d.fail(join(table, "sd"), "sd is for linear_regression only (its error sd); %s has none", fam.Name)
			ok = false
		} else if v, good := d.number(m, table, "sd"); good {
			if !(v > 0) {
				d.fail(join(table, "sd"), "sd = %v is out of range: the error sd must be > 0", v)
				ok = false
			}
			e.SD = v
		} else {
			_ = sdRaw
			ok = false
		}
	} else if fam.Kind == regress.Linear {
		d.fail(table, "linear_regression needs sd, the sd of its normal errors (a number > 0)")
		ok = false
	}
	raw, has := m["coefficients"]
	if !has {
		d.fail(table, "%s needs coefficients, e.g. coefficients = { intercept = -2.0, dose = 0.9 }", fam.Name)
		return e, false
	}
	coefs, isTable := raw.(map[string]any)
	if !isTable {
		d.fail(join(table, "coefficients"), "coefficients must be a table of numbers, e.g. { intercept = -2.0, dose = 0.9 }, got %s", typeName(raw))
		return e, false
	}
	path := join(table, "coefficients")
	if _, has := coefs["intercept"]; !has {
		d.fail(path, "coefficients have no intercept: the constant term must be declared (intercept = ...)")
		ok = false
	}
	known2 := slices.Sorted(slices.Values(columns))
	var terms []regress.Term
	names := make([]string, 0, len(coefs))
	for n := range coefs {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		v, good := d.number(coefs, path, n)
		if !good {
			ok = false
			continue
		}
		if n == "intercept" {
			e.Intercept = v
			continue
		}
		if !slices.Contains(columns, n) {
			what := "a declared covariate"
			if laterWhat != "" {
				what += " or " + laterWhat
			}
			if slices.Contains(later, n) {
				d.fail(path, "coefficient %s names the outcome of a later equation: an equation may use only the outcomes of the equations above it; move the equation of %s up", n, n)
			} else {
				d.fail(path, "coefficient %s has no covariate: every coefficient but intercept must name %s%s", n, what, didYouMean(n, known2))
			}
			ok = false
			continue
		}
		terms = append(terms, regress.Term{Name: n, Value: v})
	}
	// Terms in the order their columns are declared.
	sort.Slice(terms, func(i, j int) bool {
		return slices.Index(columns, terms[i].Name) < slices.Index(columns, terms[j].Name)
	})
	e.Terms = terms
	return e, ok
}

func orNone(names []string) string {
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}

// laterOutcomes names the outcomes of the equations in list.
func laterOutcomes(list []map[string]any) []string {
	var names []string
	for _, em := range list {
		if n, ok := em["outcome"].(string); ok {
			names = append(names, n)
		}
	}
	return names
}

// regressionFit reads a one-equation regression's fit key into e: the
// family the analysis fits, when it differs from the data's.
func (d *decoder) regressionFit(table string, m map[string]any, e *regress.Equation) bool {
	raw, given := m["fit"]
	if !given {
		return true
	}
	var accepted []string
	for _, k := range regress.FitsFor(e.Kind) {
		accepted = append(accepted, k.String())
	}
	name, isStr := raw.(string)
	if !isStr {
		d.fail(join(table, "fit"), "fit must be a string naming the fitted regression family, got %s; accepted for %s data: %s", typeName(raw), e.Kind, strings.Join(accepted, ", "))
		return false
	}
	fam, known := regress.Lookup(name)
	if !known {
		d.fail(join(table, "fit"), "unknown fit family %q for %s data%s", name, e.Kind, didYouMean(name, accepted))
		return false
	}
	if !slices.Contains(accepted, name) {
		d.fail(join(table, "fit"), "fit = %q is not offered for %s data: accepted for %s data: %s (linear_regression fits logistic_regression and poisson_regression data, poisson_regression fits logistic_regression data)", name, e.Kind, e.Kind, strings.Join(accepted, ", "))
		return false
	}
	if fam.Kind != e.Kind {
		e.Refit, e.Fit = true, fam.Kind
	}
	return true
}
