// Command deltaprobe checks, by Monte Carlo, whether the delta-method
// normal approximation for a transformed estimate is adequate at the
// sample sizes of a declared study. See the README for the study file.
//
// Usage:
//
//	deltaprobe run STUDY.toml [-o DIR] [-workers N] [-replicates R] [-seed S] [-force] [-quiet]
//	deltaprobe predict STUDY.toml
//	deltaprobe families
package main

import (
	"os"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}
