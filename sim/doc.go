// Package sim holds deltaprobe's engine, cut by job into small packages;
// it has no code of its own. Data flow one way:
//
//	study file ─▶ study.Load ─▶ study.Study ─▶ runner.Run ─▶ runner.Result (saved)
//	                                 │                             │
//	                                 └────────▶ plan.Plan ──▶ plan.Result (saved)
//	                                                               │
//	                       measure: rows, checks and verdicts from a saved state
//
// The packages, each with one job:
//
//   - [deltaprobe/sim/family]: the data-generating families and their
//     estimators (drawing, fitting, Fisher information, O(1/n) bias),
//     fits of another family's data (pseudo-true θ*, sandwich) and
//     censored lifetimes.
//   - [deltaprobe/sim/stream]: the generator every sampler draws from
//     (math/rand/v2's PCG and ziggurat, bit for bit, inlinable).
//   - [deltaprobe/sim/regress]: logistic, Poisson and linear regressions
//     on a declared covariate design, and chains of equations.
//   - [deltaprobe/sim/expr]: the transform language, with exact derivatives.
//   - [deltaprobe/sim/study]: the study file: decoding, validation, errors,
//     and the delta-method predictions at the truth.
//   - [deltaprobe/sim/runner]: the parallel runner, its streaming
//     accumulators and the mergeable result file (shards, resume).
//   - [deltaprobe/sim/measure]: summary measures, their Monte Carlo errors,
//     the criteria and the verdicts, computed from a saved result.
//   - [deltaprobe/sim/plan]: the sequential search for the smallest
//     adequate n.
//
// The engine is opinionated. Estimates are maximum likelihood (unless a
// family says otherwise), standard errors are the plug-in delta method
// with the inverse observed information or the sandwich (or the
// analyst's own stated standard error), intervals are Wald intervals
// with a normal or t quantile, and Monte Carlo errors follow Morris,
// White & Crowther (2019) with a kurtosis-aware variance MCSE. It offers
// no bootstrap, no profile intervals and no higher-order corrections: it
// checks the first-order approximation people actually report, and says
// plainly when that fails.
package sim
