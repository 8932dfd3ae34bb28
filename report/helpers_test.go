package report

import (
	"context"
	"sync"
	"testing"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// The tests run real, small studies through sim rather than keep a
// result file: normal data and a few thousand replicates take well under
// a second, and the report is then checked against what sim produces now.

// studyFuel is small but has what the page must cope with: a title and
// comment that need escaping, a name that is not a safe file name, two
// names that meet once made safe, and an estimate that is adequate only
// from some n on.
const studyFuel = `# Test study: a < b & "c" must reach the page escaped.
title = "Reciprocal <and> log & co"
description = "Normal data; 100 / mean and log(mean)."
seed = 42
replicates = 2000
sample_sizes = [5, 10, 20, 40, 80]
level = 0.95

[model]
family = "normal"
mean = 14.0
sd = 3.5

[[transform]]
name = "litres / 100 km"
expr = "100 / mean"

[[transform]]
name = "litres _ 100 km"
expr = "log(mean)"
`

// studyHeavy has a reciprocal of a mean near zero: heavy tails, values
// beyond the pivot histogram's range, huge variance ratios.
const studyHeavy = `title = "Heavy tails"
seed = 7
replicates = 1000
sample_sizes = [4, 6, 8, 11, 16, 23, 32, 45, 64, 91, 128, 181, 256, 362]
level = 0.9

[model]
family = "normal"
mean = 0.6
sd = 1.0

[[transform]]
name = "1/mean"
expr = "1 / mean"
`

// studyOne has a single sample size: the smallest layout.
const studyOne = `title = "One n"
seed = 3
replicates = 500
sample_sizes = [30]

[model]
family = "normal"
mean = 2.0
sd = 1.0

[[transform]]
name = "sq"
expr = "mean^2"
`

var (
	resultsMu sync.Mutex
	results   = map[string]*runner.Result{}
)

// runStudy parses and runs src once per test binary.
func runStudy(t testing.TB, src string) *runner.Result {
	t.Helper()
	resultsMu.Lock()
	defer resultsMu.Unlock()
	if r, ok := results[src]; ok {
		return r
	}
	s, err := study.Parse("test.toml", []byte(src))
	if err != nil {
		t.Fatalf("parsing test study: %v", err)
	}
	r, err := runner.Run(context.Background(), s, runner.Options{Workers: 2})
	if err != nil {
		t.Fatalf("running test study: %v", err)
	}
	results[src] = r
	return r
}
