package report

import (
	"context"
	"strings"
	"testing"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// A regression fitted by another family than its data's (fit in a
// regression [model]) gets the same words as any misfit: the page and
// the terminal say the fitted model differs from the data model and give
// θ*, the figures' subtitle names both families and the variance.
func TestFitWordsRegression(t *testing.T) {
	s, err := study.Parse("lpm.toml", []byte(`seed = 5
replicates = 1000
sample_sizes = [80]
[model]
family = "logistic_regression"
fit = "linear_regression"
variance = "robust"
coefficients = { intercept = -1.0, dose = 0.5 }
[[model.covariate]]
name = "dose"
distribution = "levels"
values = [0, 1, 2, 4]
[[transform]]
name = "slope"
expr = "dose"
`))
	if err != nil {
		t.Fatal(err)
	}
	r, err := runner.Run(context.Background(), s, runner.Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	page, err := Page(r, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, must := range []string{"The fitted model differs from the data model", "logistic_regression data fitted as linear_regression", "θ*: dose = ", "sd = ", "pseudo-true", "sandwich", "fitted as linear_regression"} {
		if !strings.Contains(string(page), must) {
			t.Errorf("the page of a regression misfit lacks %q", must)
		}
	}
	if got := fitShort(r.Study, 0); got != "Fit differs from the data model: logistic_regression data fitted as linear_regression; robust (sandwich) plug-in variance." {
		t.Errorf("fitShort = %q", got)
	}
	var term strings.Builder
	VerdictTable(&term, r)
	words := strings.Join(strings.Fields(term.String()), " ") // the table wraps its notes
	if !strings.Contains(words, "pseudo-true") || !strings.Contains(words, "logistic_regression data fitted as linear_regression") {
		t.Errorf("the terminal says nothing of the misfit:\n%s", term.String())
	}
}
