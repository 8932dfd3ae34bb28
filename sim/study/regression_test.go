package study

import (
	"strings"
	"testing"

	"deltaprobe/sim/family"
)

// A chain with variance = "robust" loads with parameters named
// OUTCOME.COEF, records the robust variance, and its fitter writes the
// sandwich (checked against gonum diff/fd in sim/regress).
func TestRegressionChainRobustLoads(t *testing.T) {
	s, err := Parse("chain.toml", []byte(`seed = 1
sample_sizes = [50]
[model]
variance = "robust"
[[model.covariate]]
name = "x"
distribution = "normal"
mean = 0
sd = 1
[[model.equation]]
outcome = "m"
family = "logistic_regression"
coefficients = { intercept = 0.2, x = 0.7 }
[[model.equation]]
outcome = "y"
family = "linear_regression"
coefficients = { intercept = 1, x = 0.3, m = 0.5 }
sd = 1.2
[[transform]]
name = "indirect"
expr = "m.x * y.m"
`))
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"m.intercept", "m.x", "y.intercept", "y.x", "y.m", "y.sd"}
	got := s.ParamNames()
	if len(got) != len(want) {
		t.Fatalf("parameter names %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("parameter names %v, want %v", got, want)
		}
	}
	a := s.Arms[0]
	if a.Variance != family.RobustVariance || !a.Regression.Robust || s.Info().Arms[0].Variance != "robust" {
		t.Errorf("variance = \"robust\" was not recorded: arm %v, model %v, info %q", a.Variance, a.Regression.Robust, s.Info().Arms[0].Variance)
	}
	if !s.Discrete() {
		t.Error("a chain with a logistic equation draws 0/1 outcomes; Discrete should say so")
	}
}

// fit = "linear_regression" on logistic data loads as a misfit: θ holds
// the linear fit's coefficients and sd at θ* (checked against gonum
// optimize and diff/fd in sim/regress), Values the data's coefficients,
// and Info records the fit and θ* by name, which the page and terminal
// turn into their words for a fit that differs from the data model.
func TestRegressionMisfitLoads(t *testing.T) {
	for _, c := range []struct {
		data, fit string
		names     []string
	}{
		{"logistic_regression", "linear_regression", []string{"intercept", "dose", "sd"}},
		{"poisson_regression", "linear_regression", []string{"intercept", "dose", "sd"}},
		{"logistic_regression", "poisson_regression", []string{"intercept", "dose"}},
		{"logistic_regression", "logistic_regression", []string{"intercept", "dose"}},
	} {
		s, err := Parse("misfit.toml", []byte(`seed = 1
sample_sizes = [50]
[model]
family = "`+c.data+`"
fit = "`+c.fit+`"
variance = "robust"
coefficients = { intercept = -1.5, dose = 0.3 }
[[model.covariate]]
name = "dose"
distribution = "levels"
values = [0, 1, 2, 4]
[[transform]]
name = "slope"
expr = "dose"
`))
		if err != nil {
			t.Fatalf("%s fitted as %s: %v", c.data, c.fit, err)
		}
		got := s.ParamNames()
		if len(got) != len(c.names) {
			t.Fatalf("%s fitted as %s: parameter names %v, want %v", c.data, c.fit, got, c.names)
		}
		for i := range got {
			if got[i] != c.names[i] {
				t.Fatalf("%s fitted as %s: parameter names %v, want %v", c.data, c.fit, got, c.names)
			}
		}
		a := s.Arms[0]
		info := s.Info().Arms[0]
		if _, has := a.Values["sd"]; has {
			t.Errorf("%s fitted as %s: Values %v hold the fit's sd; they are the data's parameters", c.data, c.fit, a.Values)
		}
		if a.Values["dose"] != 0.3 || a.Values["intercept"] != -1.5 {
			t.Errorf("%s fitted as %s: Values %v, want the data's coefficients", c.data, c.fit, a.Values)
		}
		if c.data == c.fit {
			if a.Misspecified() || info.Fit != "" || info.PseudoTrue != nil || a.Model.Truth[1] != 0.3 {
				t.Errorf("fit = family must change nothing: Fit %q, θ* %v, truth %v", info.Fit, info.PseudoTrue, a.Model.Truth)
			}
			continue
		}
		if !a.Misspecified() || info.Fit != c.fit || info.Family != c.data || info.Variance != "robust" {
			t.Errorf("%s fitted as %s: Info %+v does not record the misfit", c.data, c.fit, info)
		}
		for i, name := range c.names {
			if v, ok := info.PseudoTrue[name]; !ok || v != a.Model.Truth[i] {
				t.Errorf("%s fitted as %s: θ*[%s] = %v recorded, %v in the model", c.data, c.fit, name, v, a.Model.Truth[i])
			}
		}
		if a.Model.Truth[1] == 0.3 {
			t.Errorf("%s fitted as %s: the truth is the data's slope, not θ*", c.data, c.fit)
		}
		if !strings.Contains(info.Design, "fitted as "+c.fit) {
			t.Errorf("%s fitted as %s: design %q does not say what is fitted", c.data, c.fit, info.Design)
		}
	}
}
