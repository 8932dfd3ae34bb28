package family

// Failure is why an estimator had no value for a sample. Fitters whose
// failures have more than one cause say which (FailureReporter); the
// runner counts each cause per sample size, and the report gives their
// shares.
type Failure uint8

const (
	// NotConverged: an iterative fit stopped at its cap without
	// converging and without a proof that the estimate does not exist.
	NotConverged Failure = iota
	// Separation: a logistic fit's data are completely or
	// quasi-completely separated, so no finite MLE exists (Albert &
	// Anderson 1984).
	Separation
	// ZeroCounts: a Poisson fit's counts are zero on every row, or on
	// every row of a face of the design (a whole level), so no finite
	// MLE exists.
	ZeroCounts
	// Singular: the sample's design matrix does not have full column
	// rank (a covariate constant in the sample, or collinear with others).
	Singular
	// Failures is the number of causes.
	Failures
)

// Name is the cause's word in result.json and the report.
func (f Failure) Name() string {
	switch f {
	case Separation:
		return "separation"
	case ZeroCounts:
		return "zero_counts"
	case Singular:
		return "singular_design"
	}
	return "not_converged"
}

// Describe is the cause in a few words, for warnings.
func (f Failure) Describe() string {
	switch f {
	case Separation:
		return "separation in a logistic fit (no finite MLE)"
	case ZeroCounts:
		return "Poisson counts all zero, overall or on a face of the design (no finite MLE)"
	case Singular:
		return "a singular design in the sample"
	}
	return "fits that did not converge"
}

// FailureReporter is implemented by fitters that say why their last Fit
// reported false.
type FailureReporter interface {
	// LastFailure is the cause of the last failed Fit.
	LastFailure() Failure
}
