// Package plan searches for the smallest adequate n without a grid:
// it doubles n until the criteria pass, bisects, and checks a window
// above the answer, adding replicates in batches until each decision is
// made, with the error split over the looks (Bonferroni).
package plan
