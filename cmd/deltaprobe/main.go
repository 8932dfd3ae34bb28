// Command deltaprobe checks, by Monte Carlo, whether the delta-method
// normal approximation for a transformed estimate is adequate at the
// sample sizes of a declared study. See the README for the study file.
//
// Usage:
//
//	deltaprobe run STUDY.toml [-o DIR] [-workers N] [-replicates R] [-seed S] [-force] [-quiet]
//	                          [-dry-run] [-checkpoint 5s] [-shard K/N | -shard auto [-shards N]]
//	                          [-figures png,svg,pdf]
//	deltaprobe run -resume DIR [-figures png,svg,pdf]
//	deltaprobe merge -o DIR [-partial] [-force] [-figures png,svg,pdf] PART...
//	deltaprobe plan STUDY.toml [-o DIR] [-budget R] [-workers N] [-seed S] [-force] [-quiet]
//	                           [-figures png,svg,pdf]
//	deltaprobe plan -resume DIR [-workers N] [-quiet] [-figures png,svg,pdf]
//	deltaprobe predict STUDY.toml
//	deltaprobe report DIR [-figures png,svg,pdf]
//	deltaprobe families
//	deltaprobe version
//
// The whole command is run(args, stdout, stderr) in cli.go, so tests drive
// it in-process; this file is its shell.
package main

import (
	"os"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}
