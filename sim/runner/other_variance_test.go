package runner

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"deltaprobe/sim/study/studytest"
)

// The other plug-in variance a run keeps beside the one its intervals use
// is, bit for bit, the plug-in variance of the same study run with the
// other variance: the draws do not depend on the variance chosen, and
// the fitter computes both from the same sample. Checked for a moment fit
// of another family's data, and for the two numerical MLEs.
func TestOtherVarianceIsTheOtherRunsPluginVariance(t *testing.T) {
	arms := []string{
		"family = \"negative_binomial\"\nmean = 3.0\ndispersion = 0.4\nfit = \"poisson\"",
		"family = \"weibull\"\nshape = 1.5\nscale = 2.0\nfit = \"exponential\"",
		"family = \"student_t\"\nlocation = 1.0\nscale = 1.0\ndf = 6.0\nfit = \"normal\"",
		"family = \"negative_binomial\"\nmean = 3.0\ndispersion = 0.4",
		"family = \"weibull\"\nshape = 1.5\nscale = 2.0",
		// Censored lifetimes fitted by the other lifetime family.
		"family = \"weibull\"\nshape = 1.5\nscale = 2.0\nfit = \"exponential\"\n[model.censoring]\nentry = 1.0\nend = 3.0\ndropout_rate = 0.1",
		"family = \"exponential\"\nrate = 0.5\nfit = \"weibull\"\n[model.censoring]\nend = 4.0",
	}
	for _, arm := range arms {
		name := strings.Split(arm, "\n")[0]
		t.Run(name, func(t *testing.T) {
			// A censoring table follows the arm's keys.
			head, censoring, _ := strings.Cut(arm, "\n[model.censoring]")
			if censoring != "" {
				censoring = "[model.censoring]" + censoring
			}
			src := func(variance string) string {
				return fmt.Sprintf(`seed = 17
replicates = 2000
sample_sizes = [15, 60]
[model]
%s
variance = %q
%s
[[transform]]
name = "first"
expr = "log(%s)"
`, head, variance, censoring, firstParam(arm))
			}
			run := func(variance string) *Result {
				res, err := Run(context.Background(), studytest.Parse(t, src(variance)), Options{Workers: 2})
				if err != nil {
					t.Fatal(err)
				}
				return res
			}
			model, robust := run("model"), run("robust")
			for ni := range model.Cells[0] {
				m, r := model.Cells[0][ni].Merged(), robust.Cells[0][ni].Merged()
				if m.Moments != r.Moments {
					t.Fatalf("n index %d: the two runs drew different estimates; the check needs the same draws", ni)
				}
				if math.Float64bits(m.PluginOther) != math.Float64bits(r.PluginVar) || math.Float64bits(r.PluginOther) != math.Float64bits(m.PluginVar) {
					t.Errorf("n index %d: model run plug-in %v, other %v; robust run plug-in %v, other %v",
						ni, m.PluginVar, m.PluginOther, r.PluginVar, r.PluginOther)
				}
				if !(m.PluginOther > 0) {
					t.Errorf("n index %d: no other plug-in variance kept (%v)", ni, m.PluginOther)
				}
			}
		})
	}
}

// firstParam names the parameter of the fitted family the test's
// transform reads: the fit's when given, the family's own otherwise.
func firstParam(arm string) string {
	switch {
	case strings.Contains(arm, `fit = "poisson"`):
		return "mean"
	case strings.Contains(arm, `fit = "exponential"`):
		return "rate"
	case strings.Contains(arm, `fit = "normal"`):
		return "sd"
	case strings.Contains(arm, "negative_binomial"):
		return "mean"
	}
	return "scale"
}

// A fit of the data's own family with the model-based variance keeps no
// other plug-in variance (NaN), and neither does a transform with the
// analyst's own standard error.
func TestNoOtherVarianceWhereItTellsNothing(t *testing.T) {
	for _, src := range []string{`seed = 1
replicates = 1000
sample_sizes = [20]
[model]
family = "normal"
mean = 1.0
sd = 2.0
[[transform]]
name = "m"
expr = "mean"
`, `seed = 1
replicates = 1000
sample_sizes = [20]
[model]
family = "negative_binomial"
mean = 3.0
dispersion = 0.4
fit = "poisson"
[[transform]]
name = "m"
expr = "mean"
se = "sqrt(mean / n)"
`} {
		res, err := Run(context.Background(), studytest.Parse(t, src), Options{Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		if got := res.Cells[0][0].Merged().PluginOther; !math.IsNaN(got) {
			t.Errorf("other plug-in variance %v, want none (NaN) for\n%s", got, src)
		}
	}
}
