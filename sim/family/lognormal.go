package family

func init() {
	register(&Family{
		Name:      "lognormal",
		Summary:   "LogNormal: log y ~ Normal(meanlog, sdlog²)",
		Estimator: "MLE on log y: mean (unbiased) and sd with divisor n (bias ≈ −3·sdlog/(4n))",
		Params: []ParamSpec{
			{Name: "meanlog", Accepts: "any real number", Check: anyReal},
			{Name: "sdlog", Accepts: "a number > 0", Check: positive},
		},
		Estimates: []string{"meanlog", "sdlog"},
		New: func(v map[string]float64) (Model, error) {
			return lognormalModel{normalModel{mean: v["meanlog"], sd: v["sdlog"]}}, nil
		},
	})
}

// lognormalModel is the lognormal family, θ = (meanlog, sdlog). The
// likelihood depends on the sample only through log y, which is a
// Normal(meanlog, sdlog²) sample, so the MLE, its covariance and its bias
// are the normal family's on the log scale. Fit therefore draws log y
// directly: forming y = exp(·) and taking its logarithm back would only add
// rounding, and overflow once meanlog + sdlog·z passes 709.
type lognormalModel struct{ normalModel }

func (lognormalModel) Params() []string { return []string{"meanlog", "sdlog"} }
