package family

import (
	"math/rand/v2"
	"sort"
)

// Model is a family with its parameters fixed at their true values. It is
// shared by every worker, so its methods must not change its state.
type Model interface {
	// Params names the estimated parameters, in the order of θ.
	Params() []string
	// Truth writes θ0 into theta.
	Truth(theta []float64)
	// Fit draws a sample of n observations with rng and writes the
	// estimate θ̂ into theta. It reports false when the estimator has no
	// value for this sample (for example a numerical MLE that did not
	// converge); the replicate is then undefined. Fit allocates nothing.
	Fit(rng *rand.Rand, n int, theta []float64) bool
	// Cov writes Σ(θ), the per-observation asymptotic covariance of θ̂
	// (the inverse of the expected Fisher information of one
	// observation), row-major, len(Params())² entries. It allocates
	// nothing.
	Cov(theta, cov []float64)
	// Bias writes b(θ), the estimator's first-order bias per observation:
	// E θ̂ − θ = b(θ)/n + o(1/n). Zero where the estimator is unbiased.
	Bias(theta, bias []float64)
}

// ParamSpec describes one parameter a family takes in the study file.
type ParamSpec struct {
	Name    string
	Integer bool   // must be a whole number (binomial size)
	Accepts string // the accepted range, in words, for error messages
	// Check reports whether a value is accepted.
	Check func(v float64) bool
}

// Family is a named data-generating model with its estimator.
type Family struct {
	Name      string
	Summary   string // one line: the distribution
	Estimator string // one line: the estimator and its known bias
	// Discrete says the data are counts: the coverage of a Wald interval
	// then oscillates in n (Brown, Cai & DasGupta 2001), which the plan's
	// search must allow for.
	Discrete bool
	Params   []ParamSpec
	// Estimates names the estimated parameters, the entries of θ, in
	// order. They are the study file's parameter names but for those
	// fixed and known (binomial size).
	Estimates []string
	// New builds the model from validated parameter values, keyed by
	// ParamSpec.Name.
	New func(values map[string]float64) (Model, error)
}

var families = map[string]*Family{}

// register adds a family to the registry; it is called from init
// functions, so a duplicate name is a programmer error.
func register(f *Family) {
	if _, dup := families[f.Name]; dup {
		panic("sim: family registered twice: " + f.Name)
	}
	families[f.Name] = f
}

// Lookup returns the family with the given name.
func Lookup(name string) (*Family, bool) {
	f, ok := families[name]
	return f, ok
}

// All returns every family, sorted by name.
func All() []*Family {
	out := make([]*Family, 0, len(families))
	for _, f := range families {
		out = append(out, f)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out
}

// Names returns the sorted family names.
func Names() []string {
	var names []string
	for _, f := range All() {
		names = append(names, f.Name)
	}
	return names
}

func positive(v float64) bool   { return v > 0 }
func anyReal(v float64) bool    { return true }
func openUnit(v float64) bool   { return v > 0 && v < 1 }
func openSigned(v float64) bool { return v > -1 && v < 1 }
func atLeastOne(v float64) bool { return v >= 1 }
