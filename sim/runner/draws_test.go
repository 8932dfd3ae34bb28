package runner

import (
	"context"
	"math"
	"strconv"
	"strings"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/study"
	"deltaprobe/sim/study/studytest"
)

// drawsStudies are one study per family with an exact statistics
// sampler; "DRAWS" is replaced by the draws line of the [model] table.
var drawsStudies = map[string]string{
	"normal": `[model]
family = "normal"
mean = 2.0
sd = 1.5
DRAWS
[[transform]]
name = "inverse"
expr = "1 / mean"
[[transform]]
name = "log_sd"
expr = "log(sd)"
`,
	"lognormal": `[model]
family = "lognormal"
meanlog = 0.5
sdlog = 0.8
DRAWS
[[transform]]
name = "mean"
expr = "exp(meanlog + sdlog^2 / 2)"
`,
	"exponential": `[model]
family = "exponential"
rate = 0.4
DRAWS
[[transform]]
name = "log_mean"
expr = "log(1 / rate)"
`,
	"poisson": `[model]
family = "poisson"
mean = 1.3
DRAWS
[[transform]]
name = "sqrt"
expr = "sqrt(mean)"
`,
	"bernoulli": `[model]
family = "bernoulli"
p = 0.3
DRAWS
[[transform]]
name = "odds"
expr = "p / (1 - p)"
`,
	"binomial": `[model]
family = "binomial"
size = 4
p = 0.6
DRAWS
[[transform]]
name = "p"
expr = "p"
`,
	"bivariate_normal": `[model]
family = "bivariate_normal"
mean_x = 1.0
mean_y = 2.0
sd_x = 1.0
sd_y = 2.0
rho = 0.6
DRAWS
[[transform]]
name = "fisher_z"
expr = "0.5 * log((1 + rho) / (1 - rho))"
[[transform]]
name = "slope"
expr = "rho * sd_y / sd_x"
`,
}

// For every family with an exact statistics sampler, a study drawn
// statistic by statistic (the default) and observation by observation
// (draws = "each") agree within Monte Carlo error: the mean of the
// estimate, its variance (MCSE of s² from the sample kurtosis, as
// measure does) and the coverage, at two sample sizes. The two runs are
// independent, so each difference is compared with the root sum of the
// two squared MCSEs, at 4.5 of them: with about 80 comparisons a false
// alarm has probability about 80·7·10⁻⁶ (common practice). Power: a
// sampler whose mean or variance is off by 5% of the estimate's sd or
// variance is caught at 20000 replicates, since 0.05·√10000 = 5 MCSEs.
func TestDrawsBothWaysAgree(t *testing.T) {
	t.Parallel()
	for name, body := range drawsStudies {
		head := "seed = 31\nreplicates = 20000\nsample_sizes = [8, 60]\n"
		exact := studytest.Parse(t, head+strings.Replace(body, "DRAWS", "", 1))
		each := studytest.Parse(t, head+strings.Replace(body, "DRAWS", `draws = "each"`, 1))
		if !family.DrawsStatistics(exact.Arms[0].Model.Sampler) || exact.Arms[0].Draws != study.DrawsStatistics {
			t.Fatalf("%s: the default does not draw statistics", name)
		}
		if family.DrawsStatistics(each.Arms[0].Model.Sampler) || !family.HasStatistics(each.Arms[0].Model.Sampler) || each.Arms[0].Draws != study.DrawsEach {
			t.Fatalf(`%s: draws = "each" still draws statistics`, name)
		}
		a, err := Run(context.Background(), exact, Options{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		b, err := Run(context.Background(), each, Options{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for tr := range a.Cells {
			for ni := range a.Cells[tr] {
				ca, cb := a.Cells[tr][ni], b.Cells[tr][ni]
				ma, mb := ca.Merged().Moments, cb.Merged().Moments
				where := name + " " + exact.Transforms[tr].Name + " n=" + strconv.Itoa(ca.N)
				check := func(what string, x, y, se float64) {
					if z := math.Abs(x-y) / se; !(z <= 4.5) {
						t.Errorf("%s: %s %v (statistics) vs %v (each): %.1f MCSEs apart", where, what, x, y, z)
					}
				}
				check("mean", ma.Mean, mb.Mean, math.Sqrt(ma.Var()/float64(ma.N)+mb.Var()/float64(mb.N)))
				check("variance", ma.Var(), mb.Var(), math.Hypot(varSE(ma), varSE(mb)))
				pa := float64(ca.Covered) / float64(ca.Replicates)
				pb := float64(cb.Covered) / float64(cb.Replicates)
				check("coverage", pa, pb, math.Sqrt(pa*(1-pa)/float64(ca.Replicates)+pb*(1-pb)/float64(cb.Replicates)))
			}
		}
	}
}

// varSE is the MCSE of the sample variance, √((m4 − s⁴(R−3)/(R−1))/R).
func varSE(m Moments) float64 {
	r := float64(m.N)
	s2 := m.Var()
	return math.Sqrt((m.M4/r - s2*s2*(r-3)/(r-1)) / r)
}
