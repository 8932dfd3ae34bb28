// Package sim turns a study file into Monte Carlo evidence about the
// delta method: it loads and validates the study, draws samples from the
// families, fits their estimators, scores each transform's Wald interval,
// and accumulates the results in streaming, mergeable form.
//
// The package is opinionated. Estimates are maximum likelihood (unless a
// family says otherwise), standard errors are the plug-in delta method
// with the inverse expected Fisher information, intervals are Wald
// intervals, and Monte Carlo errors follow Morris, White & Crowther (2019)
// with a kurtosis-aware variance MCSE. It offers no bootstrap, no profile
// intervals and no higher-order corrections: it checks the first-order
// approximation people actually report, and says plainly when that fails.
//
// Results are reproducible to the bit: replicates are cut into blocks of
// BlockSize, each seeded from the study seed, the sample size and the
// block index, and blocks are merged in block order, whatever the number
// of workers.
package sim
