// Package measure turns a saved result into what a reader judges by: the
// summary measures of each transform at each n with their Monte Carlo
// standard errors (Morris, White & Crowther 2019), the criteria decided
// from Monte Carlo intervals against their bands, and the verdict over
// the grid, which only the criteria the study's decide list names
// decide. It reads runner.Result and nothing live.
package measure
