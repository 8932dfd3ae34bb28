package regress

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"deltaprobe/sim/expr"
)

// Kind is an equation's family: its outcome's distribution given the
// covariates and its link.
type Kind uint8

const (
	// Logistic: a 0/1 outcome with P(y = 1) = expit(η).
	Logistic Kind = iota
	// Poisson: a count with mean exp(η).
	Poisson
	// Linear: y = η + sd·ε, ε standard normal.
	Linear
)

// Family describes a regression family for the study file and the
// families command.
type Family struct {
	Name      string
	Kind      Kind
	Summary   string
	Estimator string
}

// Families are the regression families, in the order the families
// command lists them.
var Families = []Family{
	{Name: "logistic_regression", Kind: Logistic,
		Summary:   "y ~ Bernoulli(expit(η)), η = intercept + Σ coefficient·covariate",
		Estimator: "MLE by Newton/IRLS; no finite MLE under complete or quasi-complete separation (counted, by cause); O(1/n) bias by Cox & Snell (1968)"},
	{Name: "poisson_regression", Kind: Poisson,
		Summary:   "y ~ Poisson(exp(η)), η = intercept + Σ coefficient·covariate (log link)",
		Estimator: "MLE by Newton/IRLS; no finite MLE when the counts are zero on every row or on a face of the design (counted, by cause); O(1/n) bias by Cox & Snell (1968); fit = \"poisson_regression\" also fits logistic_regression data (a log-linear fit of binary outcomes, for risk ratios) at the pseudo-true θ*"},
	{Name: "linear_regression", Kind: Linear,
		Summary:   "y ~ Normal(η, sd²), η = intercept + Σ coefficient·covariate",
		Estimator: "MLE: least squares (unbiased) and sd = sqrt(RSS/n) (bias ≈ −sd·(2p+1)/(4n), p coefficients); fit = \"linear_regression\" also fits logistic_regression and poisson_regression data (the linear probability model, a linear fit of counts) at the pseudo-true θ*: population least squares and the rms residual"},
}

// Lookup returns the regression family with the given name.
func Lookup(name string) (Family, bool) {
	for _, f := range Families {
		if f.Name == name {
			return f, true
		}
	}
	return Family{}, false
}

// Names are the regression families' names.
func Names() []string {
	var names []string
	for _, f := range Families {
		names = append(names, f.Name)
	}
	return names
}

func (k Kind) String() string { return Families[k].Name }

// Dist is how a covariate is drawn.
type Dist uint8

const (
	// Levels: values assigned in turn (a designed experiment).
	Levels Dist = iota
	// Bernoulli: 1 with probability P, else 0, independently per row.
	Bernoulli
	// Normal: Mean + SD·z, independently per row.
	Normal
	// Uniform: uniform on [Min, Max], independently per row.
	Uniform
	// Derived: Expr of the covariates declared above it.
	Derived
)

// DistNames are the words of the study file's distribution key.
var DistNames = []string{"levels", "bernoulli", "normal", "uniform"}

// Covariate is one column of the design.
type Covariate struct {
	Name     string
	Dist     Dist
	Values   []float64 // Levels
	P        float64   // Bernoulli
	Mean, SD float64   // Normal
	Min, Max float64   // Uniform
	Expr     string    // Derived
	// Program is Expr compiled over the names of the covariates above
	// this one, in order; set by New.
	Program *expr.Program
}

// Equation is one regression of the chain: its outcome on an intercept
// and some covariates or earlier outcomes.
type Equation struct {
	Outcome string // "y" for a model of one equation
	Kind    Kind
	// Terms are the coefficients other than the intercept, each naming a
	// covariate or an earlier equation's outcome.
	Terms     []Term
	Intercept float64
	SD        float64 // Linear only
	// Refit says the analysis fits the family Fit rather than Kind, the
	// family the outcome is drawn from (a misfit: θ then holds Fit's
	// parameters at their pseudo-true values). Offered for one equation
	// only; FitsData lists the pairs.
	Refit bool
	Fit   Kind
}

// Fitted is the family the analysis fits to the equation's outcome.
func (e *Equation) Fitted() Kind {
	if e.Refit {
		return e.Fit
	}
	return e.Kind
}

// FitsData names the data families a fit of kind k accepts: its own,
// and for a linear fit (the linear probability model, or a linear fit
// of counts) logistic and Poisson outcomes, for a Poisson fit (a
// log-linear fit of binary outcomes, for risk ratios) logistic ones.
func FitsData(k Kind) []Kind {
	switch k {
	case Linear:
		return []Kind{Linear, Logistic, Poisson}
	case Poisson:
		return []Kind{Poisson, Logistic}
	}
	return []Kind{Logistic}
}

// FitsFor names the fits offered for data of kind k, its own first.
func FitsFor(k Kind) []Kind {
	fits := []Kind{k}
	for _, f := range Families {
		if f.Kind != k && slices.Contains(FitsData(f.Kind), k) {
			fits = append(fits, f.Kind)
		}
	}
	return fits
}

// Term is one coefficient and the column it multiplies.
type Term struct {
	Name  string
	Value float64
}

// Design is the covariates and the equations of one model. Chain says
// parameters are named OUTCOME.COEF (several [[model.equation]] tables);
// otherwise the one equation's coefficients go by their own names.
type Design struct {
	Covariates []Covariate
	Equations  []Equation
	Chain      bool
}

// ParamNames names θ's entries in order: per equation, the intercept,
// the terms in the order given, and sd for a linear equation.
func (d *Design) ParamNames() []string {
	var names []string
	for _, e := range d.Equations {
		prefix := ""
		if d.Chain {
			prefix = e.Outcome + "."
		}
		names = append(names, prefix+"intercept")
		for _, t := range e.Terms {
			names = append(names, prefix+t.Name)
		}
		if e.Fitted() == Linear {
			names = append(names, prefix+"sd")
		}
	}
	return names
}

// Misfit reports whether some equation is fitted by another family
// than its data's.
func (d *Design) Misfit() bool {
	for _, e := range d.Equations {
		if e.Refit && e.Fit != e.Kind {
			return true
		}
	}
	return false
}

// DataNames names the data model's parameters (ParamNames when no
// equation is refitted): per equation, the intercept, the terms, and sd
// for linear data.
func (d *Design) DataNames() []string {
	var names []string
	for _, e := range d.Equations {
		prefix := ""
		if d.Chain {
			prefix = e.Outcome + "."
		}
		names = append(names, prefix+"intercept")
		for _, t := range e.Terms {
			names = append(names, prefix+t.Name)
		}
		if e.Kind == Linear {
			names = append(names, prefix+"sd")
		}
	}
	return names
}

// Truth is the data model's θ0 in the order of DataNames.
func (d *Design) Truth() []float64 {
	var theta []float64
	for _, e := range d.Equations {
		theta = append(theta, e.Intercept)
		for _, t := range e.Terms {
			theta = append(theta, t.Value)
		}
		if e.Kind == Linear {
			theta = append(theta, e.SD)
		}
	}
	return theta
}

// Discrete reports whether some outcome is a count or 0/1: coverage then
// oscillates in n.
func (d *Design) Discrete() bool {
	for _, e := range d.Equations {
		if e.Kind != Linear {
			return true
		}
	}
	return false
}

// Describe is the design in words, for the report: the covariates, then
// each equation.
func (d *Design) Describe() string {
	var cov []string
	for _, c := range d.Covariates {
		switch c.Dist {
		case Levels:
			cov = append(cov, fmt.Sprintf("%s at levels %s assigned in turn", c.Name, numbers(c.Values)))
		case Bernoulli:
			cov = append(cov, fmt.Sprintf("%s ~ bernoulli(p = %s)", c.Name, num(c.P)))
		case Normal:
			cov = append(cov, fmt.Sprintf("%s ~ normal(mean = %s, sd = %s)", c.Name, num(c.Mean), num(c.SD)))
		case Uniform:
			cov = append(cov, fmt.Sprintf("%s ~ uniform(%s, %s)", c.Name, num(c.Min), num(c.Max)))
		case Derived:
			cov = append(cov, fmt.Sprintf("%s = %s", c.Name, c.Expr))
		}
	}
	var eqs []string
	for _, e := range d.Equations {
		eqs = append(eqs, e.describe())
	}
	s := "covariates: " + strings.Join(cov, "; ")
	if len(d.Covariates) == 0 {
		s = "no covariates"
	}
	levels := 0
	for _, c := range d.Covariates {
		if c.Dist == Levels {
			levels++
		}
	}
	if levels > 1 {
		s += fmt.Sprintf(" (the %d combinations of levels cycle in turn, the first covariate fastest)", levelCombinations(d.Covariates))
	}
	return s + "; " + strings.Join(eqs, "; ")
}

func (e *Equation) describe() string {
	eta := num(e.Intercept)
	for _, t := range e.Terms {
		sign, v := " + ", t.Value
		if v < 0 {
			sign, v = " − ", -v
		}
		eta += sign + num(v) + "·" + t.Name
	}
	var s string
	switch e.Kind {
	case Logistic:
		s = fmt.Sprintf("%s ~ bernoulli(expit(%s))", e.Outcome, eta)
	case Poisson:
		s = fmt.Sprintf("%s ~ poisson(exp(%s))", e.Outcome, eta)
	default:
		s = fmt.Sprintf("%s ~ normal(%s, sd = %s)", e.Outcome, eta, num(e.SD))
	}
	if e.Fitted() != e.Kind {
		s += ", fitted as " + e.Fitted().String()
	}
	return s
}

func num(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

func numbers(vs []float64) string {
	parts := make([]string, len(vs))
	for i, v := range vs {
		parts[i] = num(v)
	}
	return "[" + strings.Join(parts, ", ") + "]"
}

// levelCombinations is the number of rows after which the levels
// covariates' assignment repeats: the product of their level counts.
func levelCombinations(cs []Covariate) int {
	k := 1
	for _, c := range cs {
		if c.Dist == Levels {
			k *= len(c.Values)
		}
	}
	return k
}

// finite reports whether every value is a finite number.
func finite(vs ...float64) bool {
	for _, v := range vs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
