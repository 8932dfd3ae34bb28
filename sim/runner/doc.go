// Package runner simulates a study: parallel workers draw, fit and score
// replicates, and streaming accumulators (counts, central moments up to
// the fourth, fixed-range pivot histograms) gather them into a Result,
// the mergeable state saved as result.json.
//
// Results are reproducible to the bit: replicates are cut into blocks of
// BlockSize, each seeded from the study seed, the sample size and the
// block index, and blocks are folded along one fixed binary tree over
// their indices (reduce.go), whatever the number of workers or shards and
// across interrupt and resume. The tree keeps a few nodes per cell, so
// neither the state nor result.json grows with the replicates.
package runner
