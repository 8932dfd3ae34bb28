// Package plan searches for the smallest adequate n without a grid:
// it doubles n until the criteria pass, bisects, checks a window above
// the answer, and bisects below it for the largest n that decidedly
// fails, adding replicates in batches until each decision is made. Its
// answer is a bracket [n_low, n_high] that closes only when the n just
// below the answer decidedly fails; the error is split over the
// decisions that bound an answer and over the looks (Bonferroni, see
// measure.PlanRule).
package plan
