package runner_test

// Regression fits against exact finite-sample theory. The helpers and
// tolerances are exact_test.go's (4 MCSE from the exact distribution, or
// the exact binomial tail for counts of replicates).

import (
	"context"
	"fmt"
	"math"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"

	"gonum.org/v1/gonum/stat/distuv"
)

// exactRunResult is exactRun that also returns the result, for the
// counts by cause.
func exactRunResult(t *testing.T, src string) (map[exactKey]measure.Row, *runner.Result) {
	t.Helper()
	s, err := study.Parse(t.Name()+".toml", []byte(src))
	if err != nil {
		t.Fatalf("parsing the study: %v", err)
	}
	res, err := runner.Run(context.Background(), s, runner.Options{Workers: 2})
	if err != nil {
		t.Fatalf("running the study: %v", err)
	}
	rows := map[exactKey]measure.Row{}
	for _, r := range measure.Summarize(res) {
		rows[exactKey{r.Transform, r.N}] = r
	}
	return rows, res
}

// groupedLogit fits intercept + slope·x to success counts s of m trials
// at each level x by Newton's method on the grouped likelihood, with the
// 2×2 information inverted in closed form; independent of the fitter
// under test, which fits rows. It returns β̂ and the inverse information.
func groupedLogit(x, s []float64, m float64) (b0, b1 float64, inv [3]float64) {
	var tot float64
	for _, v := range s {
		tot += v
	}
	pbar := tot / (m * float64(len(s)))
	b0 = math.Log(pbar / (1 - pbar))
	for it := 0; it < 200; it++ {
		var g0, g1, i00, i01, i11 float64
		for j := range x {
			p := 1 / (1 + math.Exp(-(b0 + b1*x[j])))
			r := s[j] - m*p
			w := m * p * (1 - p)
			g0 += r
			g1 += r * x[j]
			i00 += w
			i01 += w * x[j]
			i11 += w * x[j] * x[j]
		}
		det := i00*i11 - i01*i01
		inv = [3]float64{i11 / det, -i01 / det, i00 / det}
		d0 := inv[0]*g0 + inv[1]*g1
		d1 := inv[1]*g0 + inv[2]*g1
		b0 += d0
		b1 += d1
		if math.Abs(d0) < 1e-13 && math.Abs(d1) < 1e-13 {
			break
		}
	}
	return b0, b1, inv
}

// separatedLevels reports whether counts s of m at increasing levels x
// are completely or quasi-completely separated for intercept + slope: by
// Albert & Anderson's (1984) definition, some threshold leaves only
// failures on one side and only successes on the other (a level at the
// threshold itself may hold both), or every outcome is alike.
func separatedLevels(s []float64, m float64) bool {
	k := len(s)
	all0, allM := true, true
	for _, v := range s {
		all0 = all0 && v == 0
		allM = allM && v == m
	}
	if all0 || allM {
		return true
	}
	// A threshold at level t (that level free) or between t−1 and t.
	for t := 0; t <= k; t++ {
		for _, free := range []bool{true, false} {
			if free && t == k {
				continue
			}
			up, down := true, true // failures below and successes above, or the reverse
			for j := 0; j < k; j++ {
				switch {
				case free && j == t:
				case j < t:
					up = up && s[j] == 0
					down = down && s[j] == m
				default:
					up = up && s[j] == m
					down = down && s[j] == 0
				}
			}
			if up || down {
				return true
			}
		}
	}
	return false
}

// Logistic regression on a levels design (k = 3 levels, n/3 rows each):
// the MLE depends on the data only through the three success counts
// S_j ~ Binomial(n/3, p_j), independent, so enumerating all count
// vectors with gonum's binomial pmf gives the exact distribution of every
// estimate, of its Wald interval and of separation (derived). The median
// effective dose −intercept/dose is not among the transforms: equal
// success shares at every level give a slope of exactly 0 (ED50
// infinite) with positive probability, which floating point turns into
// ±1e29 or so, so its exact and simulated distributions cannot agree.
func TestExactLogisticLevels(t *testing.T) {
	const b0, b1 = -1.0, 0.8
	x := []float64{0, 1, 2}
	const replicates = 40 * study.BlockSize
	rows, res := exactRunResult(t, fmt.Sprintf(`seed = 271828
replicates = %d
sample_sizes = [9, 30]
[model]
family = "logistic_regression"
coefficients = { intercept = %v, dose = %v }
[[model.covariate]]
name = "dose"
distribution = "levels"
values = [0, 1, 2]
[[transform]]
name = "dose"
expr = "dose"
[[transform]]
name = "p2"
expr = "expit(intercept + 2 * dose)"
`, replicates, b0, b1))
	z := exactZ(0.95)
	for ni, n := range []int{9, 30} {
		m := float64(n / 3)
		var probs []distuv.Binomial
		for _, xv := range x {
			probs = append(probs, distuv.Binomial{N: m, P: 1 / (1 + math.Exp(-(b0 + b1*xv)))})
		}
		type tally struct {
			ks, w            []float64
			cover, undefined float64
		}
		var slope, p2 tally
		var pSep float64
		s := make([]float64, 3)
		for s0 := 0.0; s0 <= m; s0++ {
			for s1 := 0.0; s1 <= m; s1++ {
				for s2 := 0.0; s2 <= m; s2++ {
					s[0], s[1], s[2] = s0, s1, s2
					pr := probs[0].Prob(s0) * probs[1].Prob(s1) * probs[2].Prob(s2)
					if separatedLevels(s, m) {
						pSep += pr
						slope.undefined += pr
						p2.undefined += pr
						continue
					}
					e0, e1, inv := groupedLogit(x, s, m)
					slope.ks, slope.w = append(slope.ks, e1), append(slope.w, pr)
					if c, _, _ := exactWald(e1, math.Sqrt(inv[2]), z, b1); c {
						slope.cover += pr
					}
					// expit(η̂) at dose 2, gradient p(1−p)·(1, 2).
					v := 1 / (1 + math.Exp(-(e0 + 2*e1)))
					d := v * (1 - v)
					se := d * math.Sqrt(inv[0]+4*inv[1]+4*inv[2])
					p2.ks, p2.w = append(p2.ks, v), append(p2.w, pr)
					if c, _, _ := exactWald(v, se, z, 1/(1+math.Exp(-(b0+2*b1)))); c {
						p2.cover += pr
					}
				}
			}
		}
		src := "Σ over count vectors of Π Binomial(S_j; n/3, p_j) (gonum distuv.Binomial), grouped Newton fit"
		for _, c := range []struct {
			name string
			tl   tally
		}{{"dose", slope}, {"p2", p2}} {
			row := exactRow(t, rows, c.name, n)
			label := fmt.Sprintf("logistic %s n=%d", c.name, n)
			R := row.Count(measure.Replicates)
			exactCheckShare(t, label+" undefined", float64(row.Count(measure.Undefined))/float64(R), R, c.tl.undefined, src)
			exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), R, c.tl.cover, src)
			w := make([]float64, len(c.tl.w))
			for i := range w {
				w[i] = c.tl.w[i] / (1 - c.tl.undefined)
			}
			exactCheckMoments(t, label, row, exactMomentsDiscrete(c.tl.ks, w), src+", given defined", true)
		}
		cell := res.Cells[0][ni]
		exactCheckShare(t, fmt.Sprintf("logistic separation n=%d", n), float64(cell.Separation)/float64(cell.Replicates), cell.Replicates, pSep,
			"Σ Π Binomial over separated count vectors (Albert & Anderson 1984's definition, by thresholds)")
		if cell.FitFailures != cell.Separation {
			t.Errorf("n=%d: %d fit failures, %d of them separation: a levels design has no other cause", n, cell.FitFailures, cell.Separation)
		}
	}
}

// Linear regression with normal errors on a fixed design (levels) and on
// one with a bernoulli covariate: given the design, (β̂_j − β_j)/(s·c_j)
// ~ t(n − p) with s² = RSS/(n − p) (Student 1908; the standard theory of
// least squares), and the MLE σ̂ = s·√((n − p)/n), so the z-Wald interval
// covers with probability 2F_t(z·√((n − p)/n); n − p) − 1 exactly
// (derived), whatever the design. With the bernoulli covariate the design
// is singular when it is constant, with probability pᵏ + (1 − p)ⁿ
// (derived; x on four levels admits no other dependence), and those
// replicates are undefined.
func TestExactLinearCoverage(t *testing.T) {
	const replicates = 40 * study.BlockSize
	rows, res := exactRunResult(t, fmt.Sprintf(`seed = 314159
replicates = %d
sample_sizes = [6, 8, 40]
[model]
family = "linear_regression"
coefficients = { intercept = 1.0, x = 0.5, b = -0.7 }
sd = 2.0
[[model.covariate]]
name = "x"
distribution = "levels"
values = [0, 1, 2, 3]
[[model.covariate]]
name = "b"
distribution = "bernoulli"
p = 0.5
[[transform]]
name = "x"
expr = "x"
[[transform]]
name = "b"
expr = "b"
`, replicates))
	z := exactZ(0.95)
	const p = 3
	for ni, n := range []int{6, 8, 40} {
		df := float64(n - p)
		T := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}
		tcov := 2*T.CDF(z*math.Sqrt(df/float64(n))) - 1
		pSing := 2 * math.Pow(0.5, float64(n))
		src := "derived: 2F_t(z√((n−p)/n); n−p) − 1 times P(design not singular), gonum distuv.StudentsT"
		for _, name := range []string{"x", "b"} {
			row := exactRow(t, rows, name, n)
			R := row.Count(measure.Replicates)
			label := fmt.Sprintf("linear %s n=%d", name, n)
			exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), R, tcov*(1-pSing), src)
			exactCheckShare(t, label+" undefined", float64(row.Count(measure.Undefined))/float64(R), R, pSing, "derived: P(bernoulli column constant) = 2·0.5ⁿ")
		}
		// The x coefficient is unbiased given the design (Gauss–Markov).
		row := exactRow(t, rows, "x", n)
		exactCheckValue(t, fmt.Sprintf("linear x n=%d mean", n), row.Get(measure.Mean), 0.5, row.Get(measure.BiasMCSE), row.Get(measure.BiasMCSE), "derived: least squares is unbiased (tool MCSE)")
		cell := res.Cells[0][ni]
		if cell.FitFailures != cell.SingularDesign {
			t.Errorf("n=%d: %d fit failures, %d of them a singular design", n, cell.FitFailures, cell.SingularDesign)
		}
	}
}

// Poisson regression on two levels x = 0, 1 (n/2 rows each): the MLE is
// β̂₀ = log(T₀/m), β̂₁ = log(T₁/T₀) from the level totals T_j ~
// Poisson(m·μ_j), independent (m = n/2), with inverse information
// 1/T₀ + 1/T₁ for β̂₁; it does not exist when either total is 0 (derived).
// Enumerated with gonum's Poisson pmf up to where the tail is below
// 1e-15.
func TestExactPoissonTwoLevels(t *testing.T) {
	const b0, b1 = 0.3, 0.5
	const replicates = 40 * study.BlockSize
	rows, res := exactRunResult(t, fmt.Sprintf(`seed = 141421
replicates = %d
sample_sizes = [4, 12]
[model]
family = "poisson_regression"
coefficients = { intercept = %v, x = %v }
[[model.covariate]]
name = "x"
distribution = "levels"
values = [0, 1]
[[transform]]
name = "rate_ratio"
expr = "exp(x)"
`, replicates, b0, b1))
	z := exactZ(0.95)
	for ni, n := range []int{4, 12} {
		m := float64(n / 2)
		P0 := distuv.Poisson{Lambda: m * math.Exp(b0)}
		P1 := distuv.Poisson{Lambda: m * math.Exp(b0+b1)}
		kmax := func(P distuv.Poisson) float64 {
			k := 0.0
			for 1-P.CDF(k) > 1e-15 {
				k++
			}
			return k
		}
		var ks, w []float64
		var cover, undef float64
		for t0 := 0.0; t0 <= kmax(P0); t0++ {
			for t1 := 0.0; t1 <= kmax(P1); t1++ {
				pr := P0.Prob(t0) * P1.Prob(t1)
				if t0 == 0 || t1 == 0 {
					undef += pr
					continue
				}
				v := t1 / t0
				ks, w = append(ks, v), append(w, pr)
				if c, _, _ := exactWald(v, v*math.Sqrt(1/t0+1/t1), z, math.Exp(b1)); c {
					cover += pr
				}
			}
		}
		for i := range w {
			w[i] /= 1 - undef
		}
		row := exactRow(t, rows, "rate_ratio", n)
		R := row.Count(measure.Replicates)
		label := fmt.Sprintf("poisson rate ratio n=%d", n)
		src := "Σ Pois(T₀)·Pois(T₁), gonum distuv.Poisson, tails below 1e-15"
		exactCheckShare(t, label+" undefined", float64(row.Count(measure.Undefined))/float64(R), R, undef, src)
		exactCheckShare(t, label+" coverage", row.Get(measure.Coverage), R, cover, src)
		exactCheckMoments(t, label, row, exactMomentsDiscrete(ks, w), src+", given defined", true)
		cell := res.Cells[0][ni]
		if cell.FitFailures != cell.ZeroCounts {
			t.Errorf("n=%d: %d fit failures, %d of them zero counts", n, cell.FitFailures, cell.ZeroCounts)
		}
	}
}

// The robust plug-in of a chain through the runner: the sandwich is
// consistent (White 1980), and with the data drawn from the fitted model
// its limit is the model-based variance, so at n = 800 the mean robust
// plug-in variance of the indirect effect must match the simulated
// variance within the Monte Carlo error of the latter (4 MCSE of
// emp_var, the tool's kurtosis-aware one; the plug-in mean's own error is
// far smaller), and so must the model-based one. Common practice, no
// exact reference: the sandwich's O(1/n) small-sample bias (about p/n,
// under 1% here) is inside that band.
func TestRegressionChainRobustPlugin(t *testing.T) {
	src := `seed = 8080
replicates = 4000
sample_sizes = [800]
[model]
variance = "%s"
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
`
	for _, v := range []string{"model", "robust"} {
		rows := exactRun(t, fmt.Sprintf(src, v))
		row := exactRow(t, rows, "indirect", 800)
		emp, mcse, plug := row.Get(measure.EmpVar), row.Get(measure.EmpVarMCSE), row.Get(measure.PluginVar)
		t.Logf("%s: plugin_var %.6g, emp_var %.6g ± %.3g, delta_var %.6g", v, plug, emp, mcse, row.Get(measure.DeltaVar))
		if math.Abs(plug-emp) > 4*mcse {
			t.Errorf("variance = %q: mean plug-in variance %.6g, simulated %.6g: off by %.2f MCSE", v, plug, emp, (plug-emp)/mcse)
		}
	}
}
