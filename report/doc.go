// Package report turns a sim.Result into what people read: summary.csv and
// verdicts.csv, the terminal verdict table, figures and the HTML page.
//
// It reads a sim.Result and nothing else, so a saved or merged result
// reports exactly as a fresh one. It computes no statistics of its own:
// every number comes from sim.Result.Summarize and sim.Verdicts.
package report
