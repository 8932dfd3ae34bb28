// Package family holds the data-generating families deltaprobe can draw
// from and the estimators fitted to them: for each, its parameters, a
// sampler, the estimator (maximum likelihood unless the family says
// otherwise), the per-observation inverse Fisher information and the
// estimator's known O(1/n) bias, each formula with its published source.
//
// Samplers are exact (no normal approximation to a count) and allocate
// nothing per replicate.
package family
