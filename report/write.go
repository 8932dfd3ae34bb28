package report

import (
	"fmt"
	"os"
	"path/filepath"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
)

// Write writes summary.csv, verdicts.csv, the figures and index.html for
// r into dir, each file atomically. The page goes last, so a page on disk
// never points at a figure that is not there yet.
func Write(dir string, r *runner.Result) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("creating output folder: %w", err)
	}
	rows := measure.Summarize(r)
	files := []struct {
		name string
		data []byte
	}{
		{"summary.csv", SummaryCSV(rows)},
		{"verdicts.csv", VerdictsCSV(measure.Verdicts(rows))},
	}
	for _, f := range files {
		if err := runner.WriteFileAtomic(filepath.Join(dir, f.name), f.data); err != nil {
			return err
		}
	}
	figs, err := Figures(r)
	if err != nil {
		return err
	}
	for _, f := range figs {
		if err := runner.WriteFileAtomic(filepath.Join(dir, f.File), f.PNG); err != nil {
			return err
		}
	}
	page, err := Page(r, figs)
	if err != nil {
		return err
	}
	return runner.WriteFileAtomic(filepath.Join(dir, PageFile), page)
}
