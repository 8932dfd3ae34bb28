package family

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"sync"
	"testing"

	"deltaprobe/sim/stream"
)

// contractCase is one family's study-file contract: its name, the
// parameters it takes, the estimated parameters in θ order, and a truth.
type contractCase struct {
	name      string
	params    []string
	estimated []string
	values    map[string]float64
}

// familyContract lists every family, sorted by name.
var familyContract = []contractCase{
	{"bernoulli", []string{"p"}, []string{"p"}, map[string]float64{"p": 0.3}},
	{"binomial", []string{"size", "p"}, []string{"p"}, map[string]float64{"size": 10, "p": 0.3}},
	{"bivariate_normal", []string{"mean_x", "mean_y", "sd_x", "sd_y", "rho"},
		[]string{"mean_x", "mean_y", "sd_x", "sd_y", "rho"},
		map[string]float64{"mean_x": 1, "mean_y": 2, "sd_x": 3, "sd_y": 4, "rho": 0.5}},
	{"exponential", []string{"rate"}, []string{"rate"}, map[string]float64{"rate": 2}},
	{"gamma", []string{"shape", "rate"}, []string{"shape", "rate"}, map[string]float64{"shape": 2, "rate": 3}},
	{"lognormal", []string{"meanlog", "sdlog"}, []string{"meanlog", "sdlog"}, map[string]float64{"meanlog": 1, "sdlog": 2}},
	{"negative_binomial", []string{"mean", "dispersion"}, []string{"mean", "dispersion"}, map[string]float64{"mean": 4, "dispersion": 0.5}},
	{"normal", []string{"mean", "sd"}, []string{"mean", "sd"}, map[string]float64{"mean": 1, "sd": 2}},
	{"poisson", []string{"mean"}, []string{"mean"}, map[string]float64{"mean": 4}},
	{"student_t", []string{"location", "scale", "df"}, []string{}, map[string]float64{"location": 1, "scale": 2, "df": 5}},
	{"weibull", []string{"shape", "scale"}, []string{"shape", "scale"}, map[string]float64{"shape": 1.5, "scale": 2}},
	{"zero_inflated_poisson", []string{"mean", "zero_share"}, []string{}, map[string]float64{"mean": 3, "zero_share": 0.2}},
}

// namedModel is a model to put through the checks every model must pass.
type namedModel struct {
	name string
	m    Model
}

// everyModel builds each fittable family's own model, the poisson's PTRS
// path at mean, and a model of every fit with the robust variance and of
// every fit of another family's data that deltaprobe offers.
func everyModel(t testing.TB, ptrsMean float64) []namedModel {
	t.Helper()
	var out []namedModel
	values := map[string]map[string]float64{}
	for _, c := range familyContract {
		values[c.name] = c.values
		if f, _ := Lookup(c.name); f.Fittable() {
			out = append(out, namedModel{c.name, mustModel(t, c.name, c.values)})
		}
	}
	out = append(out, namedModel{"poisson ptrs", mustModel(t, "poisson", map[string]float64{"mean": ptrsMean})})
	for _, fit := range All() {
		for _, data := range fit.FitsData() {
			d, _ := Lookup(data)
			for _, v := range []Variance{ModelVariance, RobustVariance} {
				if d == fit && (v == ModelVariance || !fit.Robust()) {
					continue
				}
				m, err := Build(d, values[data], fit, v)
				if err != nil {
					t.Fatalf("%s data, %s fit, %s variance: %v", data, fit.Name, v, err)
				}
				out = append(out, namedModel{fmt.Sprintf("%s data, %s fit, %s variance", data, fit.Name, v), m})
			}
		}
	}
	return out
}

func TestFamilyRegistry(t *testing.T) {
	var names []string
	for _, c := range familyContract {
		names = append(names, c.name)
	}
	if got := Names(); !slices.Equal(got, names) {
		t.Fatalf("Names() = %v, want %v", got, names)
	}
	for _, c := range familyContract {
		f, _ := Lookup(c.name)
		var ps []string
		for _, p := range f.Params {
			ps = append(ps, p.Name)
			if p.Integer != (p.Name == "size") {
				t.Errorf("%s.%s: Integer = %v", c.name, p.Name, p.Integer)
			}
			if p.Check == nil || p.Accepts == "" {
				t.Errorf("%s.%s: missing Check or Accepts", c.name, p.Name)
			}
		}
		if !slices.Equal(ps, c.params) {
			t.Errorf("%s: parameters %v, want %v", c.name, ps, c.params)
		}
		if f.Summary == "" || f.Estimator == "" {
			t.Errorf("%s: missing Summary or Estimator", c.name)
		}
		if !slices.Equal(f.Estimates, c.estimated) {
			t.Errorf("%s: Estimates = %v, want %v", c.name, f.Estimates, c.estimated)
		}
		if f.DataOnly {
			if len(f.Estimates) != 0 || f.New != nil || f.law == nil {
				t.Errorf("%s: a data-only family needs a law, and no estimates or New", c.name)
			}
			continue
		}
		m := mustModel(t, c.name, c.values)
		if m.Sampler == nil || m.Estimator == nil || m.Asymptotics == nil {
			t.Fatalf("%s: model %+v lacks a piece", c.name, m)
		}
		if len(m.Truth) != len(c.estimated) {
			t.Fatalf("%s: Truth has %d entries, want one per estimate %v", c.name, len(m.Truth), c.estimated)
		}
		for i, p := range c.estimated {
			if m.Truth[i] != c.values[p] {
				t.Errorf("%s: Truth %s = %v, want %v", c.name, p, m.Truth[i], c.values[p])
			}
		}
	}
}

func TestFamilyParamChecks(t *testing.T) {
	cases := []struct {
		family, param string
		value         float64
		ok            bool
	}{
		{"normal", "mean", -1e300, true}, {"normal", "sd", 0, false},
		{"lognormal", "meanlog", -5, true}, {"lognormal", "sdlog", 0, false}, {"lognormal", "sdlog", 1e-9, true},
		{"exponential", "rate", 0, false}, {"exponential", "rate", -1, false}, {"exponential", "rate", 0.1, true},
		{"gamma", "shape", 0, false}, {"gamma", "shape", 0.05, true}, {"gamma", "rate", -2, false},
		{"poisson", "mean", 0, false}, {"poisson", "mean", 1e-4, true},
		{"bernoulli", "p", 0, false}, {"bernoulli", "p", 1, false}, {"bernoulli", "p", 0.999, true},
		{"binomial", "p", 1, false}, {"binomial", "p", 0.5, true},
		{"binomial", "size", 0, false}, {"binomial", "size", 1, true}, {"binomial", "size", 0.5, false},
		{"bivariate_normal", "rho", 1, false}, {"bivariate_normal", "rho", -1, false},
		{"bivariate_normal", "rho", -0.999, true}, {"bivariate_normal", "sd_x", 0, false},
		{"bivariate_normal", "sd_y", -1, false}, {"bivariate_normal", "mean_y", -7, true},
	}
	for _, c := range cases {
		f, _ := Lookup(c.family)
		i := slices.IndexFunc(f.Params, func(p ParamSpec) bool { return p.Name == c.param })
		if i < 0 {
			t.Fatalf("%s has no parameter %s", c.family, c.param)
		}
		if got := f.Params[i].Check(c.value); got != c.ok {
			t.Errorf("%s.%s Check(%g) = %v, want %v", c.family, c.param, c.value, got, c.ok)
		}
	}
}

// TestFamilyNewErrors covers what New refuses beyond the range checks.
func TestFamilyNewErrors(t *testing.T) {
	cases := []struct {
		family string
		values map[string]float64
		wide   bool // the error is the inversion table's size limit
	}{
		{"binomial", map[string]float64{"size": 2.5, "p": 0.5}, false},
		{"binomial", map[string]float64{"size": 1e15, "p": 0.5}, true},
		{"poisson", map[string]float64{"mean": 1e16}, false},
	}
	for _, c := range cases {
		f, _ := Lookup(c.family)
		_, err := f.New(c.values)
		if err == nil {
			t.Errorf("%s.New(%v) succeeded, want an error", c.family, c.values)
			continue
		}
		if errors.Is(err, errTableTooWide) != c.wide {
			t.Errorf("%s.New(%v): %v", c.family, c.values, err)
		}
	}
	// The widest binomial still accepted, size·p(1−p) = 10⁹, and a large
	// size with a small p, whose table covers only the counts near the mean.
	for _, v := range []map[string]float64{{"size": 4e9, "p": 0.5}, {"size": 1e15, "p": 1e-12}} {
		if _, err := newBinomialModel(v["size"], v["p"]); err != nil {
			t.Errorf("binomial %v: %v", v, err)
		}
	}
}

// TestFamilyFitAllocs checks that Draw, Fit, Cov and Bias allocate
// nothing, for every family and for the PTRS path of the poisson.
func TestFamilyFitAllocs(t *testing.T) {
	for _, c := range everyModel(t, 1e7) {
		m := c.m
		p := len(m.Truth)
		theta, cov, bias := make([]float64, p), make([]float64, p*p), make([]float64, p)
		tr := newTrial(m, 50)
		rng := testRand(1)
		if a := testing.AllocsPerRun(100, func() { tr.fit(rng, 50, theta) }); a != 0 {
			t.Errorf("%s: Draw and Fit allocate %v per call", c.name, a)
		}
		if a := testing.AllocsPerRun(100, func() { m.Asymptotics.Cov(theta, cov); m.Asymptotics.Bias(theta, bias) }); a != 0 {
			t.Errorf("%s: Cov and Bias allocate %v per call", c.name, a)
		}
	}
}

// TestFamilyFitConcurrent shares one model between several goroutines,
// each with its own generator, sample and fitter, as the runner's workers
// have, and checks that every goroutine gets what a serial run with the
// same seed gets (run it with -race too).
func TestFamilyFitConcurrent(t *testing.T) {
	const workers, reps, n = 4, 200, 30
	for _, c := range everyModel(t, 5e6) {
		m := c.m
		p := len(m.Truth)
		run := func(seed uint64, out []float64) {
			rng := stream.New(seed, 7)
			tr := newTrial(m, n)
			for k := range reps {
				if !tr.fit(rng, n, out[k*p:(k+1)*p]) {
					out[k*p] = math.NaN()
				}
			}
		}
		want := make([][]float64, workers)
		for w := range workers {
			want[w] = make([]float64, reps*p)
			run(uint64(w), want[w])
		}
		got := make([][]float64, workers)
		var wg sync.WaitGroup
		for w := range workers {
			got[w] = make([]float64, reps*p)
			wg.Add(1)
			go func() {
				defer wg.Done()
				run(uint64(w), got[w])
			}()
		}
		wg.Wait()
		for w := range workers {
			if !slices.Equal(got[w], want[w]) {
				t.Errorf("%s: concurrent results of worker %d differ from the serial run", c.name, w)
			}
		}
	}
}

// BenchmarkSample times drawing and fitting one sample of 50 observations
// (the plug-in covariance included), as a worker does for one arm.
func BenchmarkSample(b *testing.B) {
	bench := func(b *testing.B, m Model) {
		tr := newTrial(m, 50)
		theta := make([]float64, len(m.Truth))
		rng := testRand(9)
		b.ReportAllocs()
		for b.Loop() {
			tr.fit(rng, 50, theta)
		}
	}
	for _, c := range everyModel(b, 1e7) {
		b.Run(strings.ReplaceAll(c.name, " ", "_"), func(b *testing.B) { bench(b, c.m) })
	}
	// Larger means and shapes take the other code paths.
	for _, c := range []struct {
		name   string
		family string
		values map[string]float64
	}{
		{"gamma_boost", "gamma", map[string]float64{"shape": 0.3, "rate": 1}},
		{"binomial_wide", "binomial", map[string]float64{"size": 1e6, "p": 0.4}},
	} {
		b.Run(c.name, func(b *testing.B) { bench(b, mustModel(b, c.family, c.values)) })
	}
}

// TestFamilyFitUndefined: with one observation the gamma likelihood has no
// maximum and Pearson r has no value, so Fit must report false there and
// true from n = 2 on (for continuous draws, ties have probability 0).
func TestFamilyFitUndefined(t *testing.T) {
	for _, name := range []string{"gamma", "bivariate_normal"} {
		i := slices.IndexFunc(familyContract, func(c contractCase) bool { return c.name == name })
		c := familyContract[i]
		tr := newTrial(mustModel(t, name, c.values), 2)
		theta := make([]float64, len(c.estimated))
		rng := testRand(5)
		for range 100 {
			if tr.fit(rng, 1, theta) {
				t.Errorf("%s: Fit at n = 1 reported true", name)
				break
			}
			if !tr.fit(rng, 2, theta) {
				t.Errorf("%s: Fit at n = 2 reported false", name)
				break
			}
		}
	}
}
