// Package report turns saved state into what people read: a
// runner.Result into summary.csv, verdicts.csv, the terminal table, the
// figures and the HTML page; a plan.Result into plan.csv, verdicts.csv,
// its table, figures and page.
//
// It reads saved results and nothing live (no study, no runner), so a
// saved, merged or resumed result reports exactly as a fresh one, and
// `deltaprobe report DIR` rebuilds any folder. Every estimate, MCSE and
// verdict comes from sim/measure (Summarize, Verdicts, the table of
// measures and criteria); report derives only what drawing needs: error
// bars for the one-sided miss rates, the KS noise level 1.358/√R, and
// rebinned histograms and quantiles for the shapes.
package report
