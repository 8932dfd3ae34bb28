package report

import "deltaprobe/sim/study"

// regressionText states a regression model's design for the page and
// the terminal: the family, what n counts, the covariates and equations.
func regressionText(a study.ArmInfo) string {
	what := a.Family
	if what == "equations" {
		what = "a chain of regression equations, each fitted by its own MLE to the same rows"
	}
	return what + "; n is the number of rows (observations); " + a.Design
}
