package report

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"deltaprobe/sim/plan"
)

// outputFiles are the tables and states a run, plan or merge writes by a
// fixed name; figures are named by transform (see IsOutput).
var outputFiles = []string{"summary.csv", "verdicts.csv", "plan.csv", "result.json", plan.File, PageFile}

// IsOutput reports whether name, a file name inside an output folder, is
// one that deltaprobe writes there: a table, a saved state, the page, a
// figure (STEM-trends, STEM-shapes or STEM-plan in a figure format), or
// the temporary file of one of these that a hard kill left behind.
func IsOutput(name string) bool {
	if rest, ok := strings.CutPrefix(name, "."); ok {
		if i := strings.Index(rest, ".tmp"); i > 0 {
			return IsOutput(rest[:i])
		}
		return false
	}
	if slices.Contains(outputFiles, name) {
		return true
	}
	for _, f := range Formats {
		stem, ok := strings.CutSuffix(name, "."+string(f))
		if !ok {
			continue
		}
		for _, kind := range []string{KindTrends, KindShapes, KindPlan} {
			if s, ok := strings.CutSuffix(stem, "-"+kind); ok && s != "" {
				return true
			}
		}
	}
	return false
}

// RemoveOutputs deletes from dir the files an earlier run, plan or merge
// wrote there (IsOutput), and nothing else, so that no stale figure sits
// beside new results; it returns the names it removed. A folder that does
// not exist holds nothing to remove.
func RemoveOutputs(dir string) ([]string, error) {
	entries, err := os.ReadDir(dir)
	if errors.Is(err, os.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("reading output folder: %w", err)
	}
	var removed []string
	for _, e := range entries {
		if !e.Type().IsRegular() || !IsOutput(e.Name()) {
			continue
		}
		if err := os.Remove(filepath.Join(dir, e.Name())); err != nil {
			return removed, fmt.Errorf("removing an earlier output: %w", err)
		}
		removed = append(removed, e.Name())
	}
	return removed, nil
}
