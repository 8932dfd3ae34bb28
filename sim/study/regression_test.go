package study

import (
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
