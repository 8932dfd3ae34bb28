package family

// The lognormal family, θ = (meanlog, sdlog). The likelihood depends on
// the sample only through log y, which is a Normal(meanlog, sdlog²)
// sample, so the MLE, its covariance and its bias are the normal family's
// on the log scale, and so is the model: its sampler draws log y directly
// (its sample is the normal's, in standard units of log y), since forming
// y = exp(·) and taking its logarithm back would only add rounding, and
// overflow once meanlog + sdlog·z passes 709.
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
		Support:   Positive,
		// The lognormal fit is the normal fit of log y, so its θ* matches
		// E log y and Var log y, and its sandwich needs the central
		// moments of log y up to the fourth: offered for the laws that
		// give them in closed form.
		fitsData: func(d *Family) bool {
			return d.Name == "lognormal" || d.Name == "weibull" || d.Name == "exponential"
		},
		fitLaw: func(_ *Family, _ map[string]float64, l law, v Variance) (Model, error) {
			return newMomentFit(logOf{l.(logLaw)}, normalFit, v == RobustVariance).model(), nil
		},
		law: func(v map[string]float64) (law, error) {
			return &lognormalLaw{v["meanlog"], v["sdlog"]}, nil
		},
		New: func(v map[string]float64) (Model, error) {
			return newNormalModel(v["meanlog"], v["sdlog"]), nil
		},
	})
}
