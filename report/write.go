package report

import (
	"fmt"
	"os"
	"path/filepath"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/runner"
)

// Write writes summary.csv, verdicts.csv, the figures and index.html for
// the saved run r into dir, each file atomically.
func Write(dir string, r *runner.Result) error {
	rows := measure.Summarize(r)
	tables := []table{
		{"summary.csv", SummaryCSV(rows)},
		{"verdicts.csv", VerdictsCSV(measure.Verdicts(rows))},
	}
	return writeFolder(dir, tables,
		func() ([]Figure, error) { return Figures(r) },
		func(figs []Figure) ([]byte, error) { return Page(r, figs) })
}

// WritePlan writes plan.csv, verdicts.csv, the plan's figure of every
// transform and index.html for the saved plan p into dir, each file
// atomically.
func WritePlan(dir string, p *plan.Result) error {
	tables := []table{
		{"plan.csv", PlanCSV(p)},
		{"verdicts.csv", VerdictsCSV(p.Verdicts)},
	}
	return writeFolder(dir, tables,
		func() ([]Figure, error) { return PlanFigures(p) },
		func(figs []Figure) ([]byte, error) { return PlanPage(p, figs) })
}

// table is one file of a folder's tables.
type table struct {
	name string
	data []byte
}

// writeFolder writes a run's or a plan's folder: the tables, then the
// figures, then the page that shows them. The page goes last, so a page
// on disk never points at a figure that is not there yet.
func writeFolder(dir string, tables []table, figures func() ([]Figure, error), page func([]Figure) ([]byte, error)) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("creating output folder: %w", err)
	}
	for _, t := range tables {
		if err := runner.WriteFileAtomic(filepath.Join(dir, t.name), t.data); err != nil {
			return err
		}
	}
	figs, err := figures()
	if err != nil {
		return err
	}
	for _, f := range figs {
		if err := runner.WriteFileAtomic(filepath.Join(dir, f.File), f.PNG); err != nil {
			return err
		}
	}
	html, err := page(figs)
	if err != nil {
		return err
	}
	return runner.WriteFileAtomic(filepath.Join(dir, PageFile), html)
}
