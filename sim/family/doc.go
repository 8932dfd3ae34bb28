// Package family holds the data-generating families deltaprobe can draw
// from and the estimators fitted to them: for each, its parameters and
// the names of what it estimates, a sampler, the estimator (maximum
// likelihood unless the family says otherwise), the per-observation
// inverse Fisher information and the estimator's known O(1/n) bias, each
// formula with its published source.
//
// Drawing and fitting are separate steps: a Sampler draws a replicate into
// a Sample (sufficient statistics only, or the observations), and a
// Fitter, each worker's own, computes θ̂ and its plug-in covariance from
// it. Samplers are exact (no normal approximation to a count); neither
// step allocates per replicate. Where a sample's statistics have a known
// exact joint law, the sampler can also draw them directly in O(1)
// (StatisticsSampler; sample_statistics.go), which the study uses unless
// it asks for draws = "each".
package family
