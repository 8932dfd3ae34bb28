package report

import (
	"fmt"
	"os"
	"path/filepath"

	"deltaprobe/sim"
)

// Write writes summary.csv and verdicts.csv for r into dir, each
// atomically.
func Write(dir string, r *sim.Result) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("creating output folder: %w", err)
	}
	rows := r.Summarize()
	files := []struct {
		name string
		data []byte
	}{
		{"summary.csv", SummaryCSV(rows)},
		{"verdicts.csv", VerdictsCSV(sim.Verdicts(rows))},
	}
	for _, f := range files {
		if err := sim.WriteFileAtomic(filepath.Join(dir, f.name), f.data); err != nil {
			return err
		}
	}
	return nil
}
