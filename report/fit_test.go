package report

import (
	"context"
	"strings"
	"testing"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// The page, the terminal and the figures' subtitles say where the fit
// differs from the data model, the pseudo-true values and the variance
// used; a study without fit or variance keys says nothing of the kind.
func TestFitWords(t *testing.T) {
	run := func(src string) *runner.Result {
		t.Helper()
		s, err := study.Parse("fit.toml", []byte(src))
		if err != nil {
			t.Fatal(err)
		}
		s.Replicates = 1000
		r, err := runner.Run(context.Background(), s, runner.Options{Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	const head = "seed = 5\nreplicates = 1000\nsample_sizes = [20]\n"
	mis := run(head + `[model]
family = "weibull"
shape = 1.5
scale = 2.0
fit = "exponential"
variance = "robust"
[[transform]]
name = "survival"
expr = "exp(-rate)"
`)
	own := run(head + `[model]
family = "exponential"
rate = 0.5
[[transform]]
name = "survival"
expr = "exp(-rate)"
`)
	page, err := Page(mis, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, must := range []string{"fitted as exponential, robust variance", "The fitted model differs from the data model", "θ*: rate = 0.55", "pseudo-true", "sandwich"} {
		if !strings.Contains(string(page), must) {
			t.Errorf("the page of a misfit lacks %q", must)
		}
	}
	if got := fitShort(mis.Study, 0); got != "Fit differs from the data model: weibull data fitted as exponential; robust (sandwich) plug-in variance." {
		t.Errorf("fitShort = %q", got)
	}
	var term strings.Builder
	VerdictTable(&term, mis)
	if !strings.Contains(term.String(), "pseudo-true") {
		t.Errorf("the terminal says nothing of the pseudo-true θ*:\n%s", term.String())
	}
	page, err = Page(own, nil)
	if err != nil {
		t.Fatal(err)
	}
	if fitNote(own.Study) != "" || fitShort(own.Study, 0) != "" || strings.Contains(string(page), "pseudo-true") {
		t.Error("a study fitting its own family with the model variance mentions fits")
	}
}

// The plug-in series is named by the variance of the arms a transform
// reads.
func TestPluginLabel(t *testing.T) {
	st := study.Info{
		Arms: []study.ArmInfo{
			{Name: "m", Family: "weibull", Fit: "exponential"},
			{Name: "r", Family: "weibull", Fit: "exponential", Variance: "robust"},
			{Name: "own", Family: "normal"},
			{Name: "rm", Family: "normal"},
		},
		Transforms: []study.TransformInfo{
			{Expr: "exp(-m.rate)"}, {Expr: "exp(-r.rate)"}, {Expr: "m.rate / r.rate"}, {Expr: "own.mean"}, {Expr: "rm.sd"},
		},
	}
	want := []string{"mean model-based plug-in / simulated", "mean robust plug-in / simulated", "mean plug-in (robust in some arms) / simulated", "", ""}
	for i, w := range want {
		if got := pluginLabel(st, i); got != w {
			t.Errorf("transform %q: label %q, want %q", st.Transforms[i].Expr, got, w)
		}
	}
}
