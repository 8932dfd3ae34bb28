package report

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/runner"
)

// Write writes summary.csv, verdicts.csv, the figures in each of formats
// (none: the DefaultFormats) and index.html for the saved run r into
// dir, each file atomically.
func Write(dir string, r *runner.Result, formats ...Format) error {
	rows := measure.Summarize(r)
	tables := []table{
		{"summary.csv", SummaryCSV(rows)},
		{"verdicts.csv", VerdictsCSV(measure.Verdicts(rows))},
	}
	return writeFolder(dir, tables,
		func(emit func(Figure) error) error { return eachFigure(r, formats, emit) },
		func(figs []Figure) ([]byte, error) { return Page(r, figs) })
}

// WritePlan writes plan.csv, verdicts.csv, the plan's figure of every
// transform in each of formats (none: the DefaultFormats) and index.html
// for the saved plan p into dir, each file atomically.
func WritePlan(dir string, p *plan.Result, formats ...Format) error {
	tables := []table{
		{"plan.csv", PlanCSV(p)},
		{"verdicts.csv", VerdictsCSV(p.Verdicts)},
	}
	return writeFolder(dir, tables,
		func(emit func(Figure) error) error { return eachPlanFigure(p, formats, emit) },
		func(figs []Figure) ([]byte, error) { return PlanPage(p, figs) })
}

// table is one file of a folder's tables.
type table struct {
	name string
	data []byte
}

// writeFolder writes a run's or a plan's folder: the tables, then the
// figures, then the page that shows them. The page goes last, so a page
// on disk never points at a figure that is not there yet. A figure's
// files in formats not rendered this time, left by an earlier writing of
// the folder, are removed, so the folder holds the formats asked for.
func writeFolder(dir string, tables []table, figures func(emit func(Figure) error) error, page func([]Figure) ([]byte, error)) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("creating output folder: %w", err)
	}
	for _, t := range tables {
		if err := runner.WriteFileAtomic(filepath.Join(dir, t.name), t.data); err != nil {
			return err
		}
	}
	// Each figure is written as soon as it is drawn and its bytes are
	// dropped: the page needs only its names and sizes, so memory holds
	// one figure at a time however many transforms there are.
	var figs []Figure
	err := figures(func(fig Figure) error {
		for _, f := range fig.Files {
			if err := runner.WriteFileAtomic(filepath.Join(dir, f.Name), f.Data); err != nil {
				return err
			}
		}
		if err := removeOtherFormats(dir, fig); err != nil {
			return err
		}
		fig.Files = slices.Clone(fig.Files)
		for i := range fig.Files {
			fig.Files[i].Data = nil
		}
		figs = append(figs, fig)
		return nil
	})
	if err != nil {
		return err
	}
	html, err := page(figs)
	if err != nil {
		return err
	}
	return runner.WriteFileAtomic(filepath.Join(dir, PageFile), html)
}

// removeOtherFormats removes the files of fig's formats that it was not
// rendered in, if an earlier writing of the folder left them.
func removeOtherFormats(dir string, fig Figure) error {
	if len(fig.Files) == 0 {
		return nil
	}
	first := fig.Files[0]
	stem := strings.TrimSuffix(first.Name, "."+string(first.Format))
	for _, f := range Formats {
		if fig.has(f) {
			continue
		}
		err := os.Remove(filepath.Join(dir, stem+"."+string(f)))
		if err != nil && !errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("removing a figure of an earlier format: %w", err)
		}
	}
	return nil
}
