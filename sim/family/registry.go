package family

import (
	"fmt"
	"sort"
	"strings"

	"deltaprobe/sim/stream"
)

// Sample is one replicate's data as a Sampler leaves it for a Fitter: the
// number of observations drawn and what the sampler keeps of them, either
// sufficient statistics only (as every sampler here does: the normal's
// keeps two sums, whatever n is) or the observations themselves. The
// layout of Data (which statistics, in which units, or how observations
// are packed) is the sampler's, and each sampler documents it on its
// SampleLen; a fitter reads the layouts of the samplers it is paired with.
// Statistics may be kept in the sampler's own units (the normal's in
// standard units, so the sum of squares carries no cancellation); a
// fitter of such a sample is built with those units.
//
// A Sample belongs to one worker, which makes Data long enough once, for
// the largest n it will draw (Sampler.SampleLen), and reuses it for every
// replicate.
type Sample struct {
	N    int       // observations drawn
	Data []float64 // at least SampleLen(N) long; Draw writes the first SampleLen(N) entries
}

// Sampler draws samples from a data-generating model whose parameters are
// fixed at their true values. It is shared by every worker, so its methods
// must not change its state.
type Sampler interface {
	// SampleLen is the length of Sample.Data that Draw fills for n
	// observations: a constant for a sampler that keeps sufficient
	// statistics, proportional to n for one that keeps observations.
	SampleLen(n int) int
	// Draw draws n observations with rng into s, setting s.N to n. It
	// allocates nothing.
	Draw(rng *stream.PCG, n int, s *Sample)
}

// Estimator makes the fitters of one estimator. It is shared by every
// worker, so it must not change its state.
type Estimator interface {
	// NewFitter returns a fitter for samples of at most maxN
	// observations. A worker calls it once and keeps the fitter to
	// itself, so whatever buffers an iterative fit needs are allocated
	// here, once per worker, and never per replicate.
	NewFitter(maxN int) Fitter
}

// Fitter computes an estimate and its plug-in covariance from a sample.
// A fitter belongs to one worker: it may keep buffers from one replicate
// to the next (kept inside padding, as expr.Evaluator keeps its own, if
// it writes them per replicate), but it reads the sample only.
type Fitter interface {
	// Fit writes the estimate θ̂ into theta and the plug-in estimate of
	// the per-observation covariance of θ̂ into cov (row-major,
	// len(theta)² entries). The plug-in may use the sample as well as θ̂
	// (observed information, a sandwich): the model-based variance is the
	// inverse observed information at θ̂ (for the full exponential
	// families, their Asymptotics.Cov at θ̂), the robust one the sandwich
	// from the sample. Fit reports false when the estimator has no
	// value for this sample (for example a numerical MLE that did not
	// converge); the replicate is then undefined, and neither theta nor
	// cov is read. Fit allocates nothing.
	Fit(s *Sample, theta, cov []float64) bool
}

// OtherVariance is a Fitter that can also give the plug-in covariance
// of the variance the study did not choose: the sandwich when the study
// uses the model-based variance, the inverse observed information when
// it uses the sandwich. A report sets the two beside the empirical
// variance. After EnableOther, every Fit that reports true also computes
// the other covariance, and OtherCov writes it (len(theta)² entries,
// row-major); OtherCov reports false when it has no value for that
// sample. Neither allocates.
type OtherVariance interface {
	EnableOther()
	OtherCov(cov []float64) bool
}

// Asymptotics is what first-order theory says about an estimator under
// the data-generating model; the delta-method predictions are built from
// it at the truth. It is shared by every worker and allocates nothing.
type Asymptotics interface {
	// Cov writes Σ(θ), the per-observation asymptotic covariance of θ̂
	// (for a maximum-likelihood fit of the data's own family, the inverse
	// of the expected Fisher information of one observation; for a fit of
	// another family's data, the sandwich A⁻¹BA⁻¹ at the pseudo-true θ*
	// with expectations under the data law, defined at θ* only, which is
	// where the study evaluates it), row-major, len(theta)² entries.
	Cov(theta, cov []float64)
	// Bias writes b(θ), the estimator's first-order bias per
	// observation: E θ̂ − θ = b(θ)/n + o(1/n). Zero where the estimator
	// is unbiased; NaN (not available) where it is not derived, so that
	// no transform reading that parameter is given a second-order bias.
	Bias(theta, bias []float64)
}

// Model is one arm's data-generating model with its estimator, the
// parameters fixed at their true values: a sampler, an estimator and the
// estimator's asymptotics, kept apart so that a study can draw from one
// model and fit another. All of it is shared by every worker.
type Model struct {
	// Truth is θ0, the value the estimator targets, one entry per name
	// in the fitted family's Estimates: the true parameter when the fit is
	// the data's family, the pseudo-true θ* otherwise. It must not be
	// changed.
	Truth       []float64
	Sampler     Sampler
	Estimator   Estimator
	Asymptotics Asymptotics
	// EventShare is, for a lifetime family, the expected share of
	// observations that are events (not censored) at the truth: 1
	// without censoring. 0 for a family without lifetimes.
	EventShare float64
}

// EventCounter is implemented by the samplers of lifetime families: how
// many of a sample's observations are events, the rest being censored.
// The runner reports the share (summary.csv's events) and names a
// replicate with no events as the reason it is undefined.
type EventCounter interface {
	Events(s *Sample) int
	// MinEvents is the fewest events with which the fit can have a
	// value; fewer is the reason a replicate is undefined.
	MinEvents() int
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
	// order. For a family's own MLE they are its Params less those fixed
	// and known (binomial size).
	Estimates []string
	// New builds the model from validated parameter values, keyed by
	// ParamSpec.Name: the family's data fitted by its own estimator with
	// the model-based variance. Nil for a data-only family.
	New func(values map[string]float64) (Model, error)
	// Censor builds the model of right-censored lifetimes under c, fitted
	// by the MLE under non-informative censoring with variance v; nil for a family that
	// is not a lifetime family.
	Censor func(values map[string]float64, c Censoring, v Variance) (Model, error)
	// CensoredEstimator is one line on the censored fit, for families
	// with Censor.
	CensoredEstimator string
	// Support is the set of values one observation takes.
	Support Support
	// DataOnly says the family can be drawn from but not fitted (its
	// Estimates are empty): a study names another family as its fit.
	DataOnly bool

	// law builds the family's data law at validated values, for fits of
	// other families; nil when no other family can be fitted to it.
	law func(values map[string]float64) (law, error)
	// fitsData reports whether this family, as the fit, accepts data
	// drawn from d through d's law (d itself included, for the robust
	// variance); nil: only its own data, model variance only.
	fitsData func(d *Family) bool
	// fitLaw builds the model that draws from l, the law of family d at
	// values, and fits this family with variance v.
	fitLaw func(d *Family, values map[string]float64, l law, v Variance) (Model, error)
}

// Variance is the plug-in variance an analysis reports with its fit.
type Variance int

const (
	// ModelVariance is the inverse observed information at θ̂ (for the
	// full exponential families the inverse expected information there).
	ModelVariance Variance = iota
	// RobustVariance is the sandwich A⁻¹BA⁻¹ from the sample (Huber 1967;
	// White 1982): A the mean negative Hessian, B the mean outer product
	// of the per-observation scores, both at θ̂.
	RobustVariance
)

// String is the study-file word for the variance.
func (v Variance) String() string {
	if v == RobustVariance {
		return "robust"
	}
	return "model"
}

// Fittable reports whether the family can be fitted at all.
func (f *Family) Fittable() bool { return !f.DataOnly }

// FitsData names the data families this family, as the fit, accepts,
// sorted: its own (when it can be fitted) and those whose support suits
// its density and whose pseudo-true parameter deltaprobe derives.
func (f *Family) FitsData() []string {
	var names []string
	for _, d := range All() {
		if (d == f && f.Fittable()) || (d != f && f.accepts(d)) {
			names = append(names, d.Name)
		}
	}
	return names
}

// accepts reports whether f can be fitted to data drawn from d through
// d's law.
func (f *Family) accepts(d *Family) bool {
	return f.Fittable() && f.fitsData != nil && f.fitLaw != nil && d.law != nil && f.fitsData(d)
}

// Robust reports whether the fit offers variance = "robust".
func (f *Family) Robust() bool { return f.Fittable() && f.accepts(f) }

// Build returns the model that draws from family data at values (already
// checked against data's ParamSpecs) and fits family fit (nil: data
// itself) with variance v. A fit of the data's own family with the model
// variance is the family's own New, so today's studies draw and fit
// exactly as before.
func Build(data *Family, values map[string]float64, fit *Family, v Variance) (Model, error) {
	if fit == nil {
		fit = data
	}
	if !fit.Fittable() {
		if fit == data {
			return Model{}, fmt.Errorf("%s is a data family only: it cannot be fitted; add fit = %s", data.Name, quotedOr(fitsFor(data)))
		}
		return Model{}, fmt.Errorf("fit = %q: %s is a data family only and cannot be fitted; fittable families: %s", fit.Name, fit.Name, strings.Join(fittableNames(), ", "))
	}
	if fit == data && v == ModelVariance {
		return data.New(values)
	}
	if !fit.accepts(data) {
		if fit == data {
			return Model{}, fmt.Errorf(`variance = "robust" is not available for the %s fit; it is for fits of %s`, fit.Name, strings.Join(robustNames(), ", "))
		}
		why := fmt.Sprintf("the %s fit is not offered for %s data", fit.Name, data.Name)
		if fit.Support != data.Support && !(fit.Support == Reals && data.Support != Pairs) {
			why = fmt.Sprintf("the %s fit needs %s, and %s data are %s", fit.Name, fit.Support, data.Name, data.Support)
		}
		return Model{}, fmt.Errorf("fit = %q: %s; the %s fit accepts data from %s", fit.Name, why, fit.Name, strings.Join(fit.FitsData(), ", "))
	}
	l, err := data.law(values)
	if err != nil {
		return Model{}, err
	}
	return fit.fitLaw(data, values, l, v)
}

// FitsFor names the families that can be fitted to data of family d,
// sorted.
func (d *Family) FitsFor() []string { return fitsFor(d) }

// fitsFor names the families that can be fitted to data of family d.
func fitsFor(d *Family) []string {
	var names []string
	for _, f := range All() {
		if f.accepts(d) || (f == d && f.Fittable()) {
			names = append(names, f.Name)
		}
	}
	return names
}

// quotedOr lists names as "a", "b" or "c".
func quotedOr(names []string) string {
	q := make([]string, len(names))
	for i, n := range names {
		q[i] = `"` + n + `"`
	}
	if len(q) < 2 {
		return strings.Join(q, "")
	}
	return strings.Join(q[:len(q)-1], ", ") + " or " + q[len(q)-1]
}

func fittableNames() []string {
	var names []string
	for _, f := range All() {
		if f.Fittable() {
			names = append(names, f.Name)
		}
	}
	return names
}

func robustNames() []string {
	var names []string
	for _, f := range All() {
		if f.Robust() {
			names = append(names, f.Name)
		}
	}
	return names
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
