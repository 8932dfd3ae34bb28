// Package regress is the regression families: logistic, Poisson (log
// link) and linear (normal errors) fits of one or several equations to
// rows drawn from a declared covariate design, each equation fitted by
// its own maximum-likelihood estimate.
//
// A Model is one arm's design with its truth: it draws the rows (Draw),
// fits every equation by Newton's method, which for these canonical links
// is iteratively reweighted least squares (Fitter), and gives the
// per-observation expected information and O(1/n) bias at the truth
// (Cov, Bias), computed as exact averages over levels and bernoulli
// covariates and by Gauss–Hermite and Gauss–Legendre product rules over
// continuous ones.
//
// The plug-in variance is the inverse observed information or, with
// variance = "robust", the HC0 sandwich (for a chain, the sandwich of the
// stacked estimating equations), and a one-equation model may be fitted
// by another family than the one that drew its rows (misfit.go: the
// pseudo-true θ* and the sandwich at it under the data law).
//
// What it refuses to do: a replicate whose MLE does not exist
// (separation, Poisson counts all zero, a singular design) is reported as
// such, never replaced by a penalised or capped estimate; and it offers
// no fit of another family inside a chain of equations.
package regress
