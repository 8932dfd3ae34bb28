// Package report turns a runner.Result into what people read: summary.csv and
// verdicts.csv, the terminal tables, the figures and the HTML page; and a
// plan.Result into plan.csv and its own tables.
//
// It reads a runner.Result and nothing else, so a saved or merged result
// reports exactly as a fresh one. Every estimate, MCSE and verdict comes
// from sim (Result.Summarize, measure.Verdicts); report derives only what
// drawing needs: error bars for the one-sided miss rates, the KS noise
// level 1.358/√R, and rebinned histograms and quantiles for the shapes.
package report
