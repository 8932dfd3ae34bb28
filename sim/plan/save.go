package plan

import (
	"fmt"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// Layout is the layout version of plan.json. Layout 2: the cached
// one-point results are of runner.ResultVersion 2, and the random numbers
// of exact sufficient-statistic draws.
const Layout = 2

// File is the name of a plan's saved state in its output folder.
const File = "plan.json"

// Save writes r to path atomically.
func Save(path string, r *Result) error { return runner.SaveState(path, "plan", r) }

// Load reads a plan written by Save, refusing one whose study text was
// edited, one of another layout, and one whose parts do not fit together.
func Load(path string) (*Result, error) {
	var r Result
	if err := runner.LoadStateLayout(path, "plan", Layout, &r, func() study.Info { return r.Study }); err != nil {
		return nil, err
	}
	nt := len(r.Study.Transforms)
	if r.Incomplete {
		// The lists hold only the transforms finished; Resume recomputes them.
		if len(r.Verdicts) > nt {
			return nil, fmt.Errorf("%s is inconsistent: %d transforms but %d verdicts", path, nt, len(r.Verdicts))
		}
		return &r, nil
	}
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
