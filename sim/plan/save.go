package plan

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"os"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
)

// Layout is the layout version of plan.json.
const Layout = 1

// File is the name of a plan's saved state in its output folder.
const File = "plan.json"

// Save writes r to path atomically.
func Save(path string, r *Result) error {
	b, err := json.MarshalIndent(r, "", " ")
	if err != nil {
		return fmt.Errorf("encoding plan: %w", err)
	}
	return runner.WriteFileAtomic(path, append(b, '\n'))
}

// Load reads a plan written by Save, refusing one whose study text was
// edited, one of another layout, and one whose parts do not fit together.
func Load(path string) (*Result, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("reading plan: %w", err)
	}
	var r Result
	if err := json.Unmarshal(b, &r); err != nil {
		return nil, fmt.Errorf("%s is not a valid plan file: %w", path, err)
	}
	if r.Layout != Layout {
		return nil, fmt.Errorf("%s has plan layout %d; this deltaprobe reads layout %d", path, r.Layout, Layout)
	}
	if sum := sha256.Sum256([]byte(r.Study.Source)); hex.EncodeToString(sum[:]) != r.Study.SHA256 {
		return nil, fmt.Errorf("%s has been edited: its study text does not match its SHA-256 %.12s…", path, r.Study.SHA256)
	}
	nt := len(r.Study.Transforms)
	if len(r.Verdicts) != nt || len(r.Window) != nt || len(r.LargestFail) != nt || len(r.Oscillations) != nt || len(r.Undecided) != nt {
		return nil, fmt.Errorf("%s is inconsistent: %d transforms but %d verdicts", path, nt, len(r.Verdicts))
	}
	nc := len(measure.Criteria())
	for _, v := range r.Verdicts {
		if len(v.PerCriterion) != nc {
			return nil, fmt.Errorf("%s is inconsistent: %s has %d criteria, this deltaprobe has %d", path, v.Transform, len(v.PerCriterion), nc)
		}
	}
	return &r, nil
}
