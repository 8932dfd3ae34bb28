package study

import (
	"fmt"
	"slices"

	"deltaprobe/sim/family"
)

// Info is what a saved result records of the study that was run, and
// all the report needs to know of it.
type Info struct {
	File        string `json:"file"`
	SHA256      string `json:"sha256"`
	Source      string `json:"source"`
	Title       string `json:"title"`
	Description string `json:"description,omitempty"`
	Seed        uint64 `json:"seed"`       // as run
	Replicates  int    `json:"replicates"` // as run
	// Overrides names the values above that a flag set to other than the
	// file's ("seed", "replicates"); FileSeed and FileReplicates are the
	// file's own.
	Overrides      []string        `json:"overrides,omitempty"`
	FileSeed       uint64          `json:"file_seed"`
	FileReplicates int             `json:"file_replicates"`
	Level          float64         `json:"level"`
	SampleSizes    []int           `json:"sample_sizes"`
	Criteria       Criteria        `json:"criteria"`
	Arms           []ArmInfo       `json:"arms"`
	Transforms     []TransformInfo `json:"transforms"`
	Interval       *Interval       `json:"interval,omitempty"` // nil: normal quantile, no correction
}

// ArmInfo describes one arm of the model as run.
type ArmInfo struct {
	Name       string             `json:"name,omitempty"`
	Family     string             `json:"family"`
	Values     map[string]float64 `json:"values"`
	Allocation float64            `json:"allocation"`
	// Design describes a regression model's covariates and equations in
	// words; empty for the other families.
	Design string `json:"design,omitempty"`
	// Fit is the fitted family when it is not Family; Variance is
	// "robust" when the file asks for it. Both are left out otherwise, so
	// a study without them records what it did before the keys existed.
	Fit      string `json:"fit,omitempty"`
	Variance string `json:"variance,omitempty"`
	// PseudoTrue is θ*, the fitted family's parameters closest to the
	// data law, by name; only when Fit differs from Family.
	PseudoTrue map[string]float64 `json:"pseudo_true,omitempty"`
	// Censoring and EventShare (the expected share of events at the
	// truth) are set for an arm with censored lifetimes.
	Censoring  *family.Censoring `json:"censoring,omitempty"`
	EventShare float64           `json:"event_share,omitempty"`
}

// FitFamily is the family the arm fits.
func (a ArmInfo) FitFamily() string {
	if a.Fit == "" {
		return a.Family
	}
	return a.Fit
}

// Robust reports whether the arm's plug-in variance is the sandwich.
func (a ArmInfo) Robust() bool { return a.Variance == "robust" }

// Misspecified reports whether any arm fits another family than its data's.
func (i Info) Misspecified() bool {
	for _, a := range i.Arms {
		if a.Fit != "" && a.Fit != a.Family {
			return true
		}
	}
	return false
}

// TransformInfo names one transform as run.
type TransformInfo struct {
	Name string   `json:"name"`
	Expr string   `json:"expr"`
	SE   string   `json:"se,omitempty"`   // the analyst's standard error; empty: the plug-in delta SE
	Null *float64 `json:"null,omitempty"` // H0's value; nil: no test
}

// Overridden reports whether a flag overrode the named value ("seed",
// "replicates").
func (i Info) Overridden(name string) bool { return slices.Contains(i.Overrides, name) }

// Info describes the study for the result file.
func (s *Study) Info() Info {
	info := Info{
		File: s.File, SHA256: s.SHA256, Source: string(s.Source),
		Title: s.Title, Description: s.Description, Seed: s.Seed,
		Replicates: s.Replicates, Level: s.Level,
		SampleSizes: append([]int(nil), s.SampleSizes...), Criteria: s.Criteria,
		FileSeed: s.FileSeed, FileReplicates: s.FileReplicates,
		Interval: s.Interval,
	}
	if s.Seed != s.FileSeed {
		info.Overrides = append(info.Overrides, "seed")
	}
	if s.Replicates != s.FileReplicates {
		info.Overrides = append(info.Overrides, "replicates")
	}
	for _, a := range s.Arms {
		ai := ArmInfo{Name: a.Name, Family: a.Family, Values: a.Values, Allocation: a.Allocation, Fit: a.Fit}
		if a.Regression != nil {
			ai.Design = a.Regression.Describe()
		}
		if a.Variance == family.RobustVariance {
			ai.Variance = "robust"
		}
		if a.Misspecified() {
			ai.PseudoTrue = map[string]float64{}
			for i, name := range a.Estimates() {
				ai.PseudoTrue[name] = a.Model.Truth[i]
			}
		}
		if a.Censoring != nil {
			c := *a.Censoring
			ai.Censoring, ai.EventShare = &c, a.Model.EventShare
		}
		info.Arms = append(info.Arms, ai)
	}
	for _, t := range s.Transforms {
		info.Transforms = append(info.Transforms, TransformInfo{Name: t.Name, Expr: t.Expr, SE: t.SE, Null: t.Null})
	}
	return info
}

// DrawsPerReplicate is the number of draws one replicate at n makes over
// all arms, the unit of the work estimate and the progress line: an arm
// that draws every observation makes its size's worth, one that draws
// its sufficient statistics from their exact law makes one, whatever n.
func (s *Study) DrawsPerReplicate(n int) int {
	d := 0
	for a := range s.Arms {
		if family.DrawsStatistics(s.Arms[a].Model.Sampler) {
			d++
			continue
		}
		d += s.ArmSize(a, n)
	}
	return d
}

// ArmSizes are the sizes of the arms, in order, at base sample size n, by
// the rule the runner draws with (Study.ArmSize).
func (i Info) ArmSizes(n int) []int {
	sizes := make([]int, len(i.Arms))
	for a, arm := range i.Arms {
		sizes[a] = armSize(arm.Allocation, n)
	}
	return sizes
}

// Total is the number of observations over all arms at base sample size
// n: n_total, the sum of ArmSizes(n).
func (i Info) Total(n int) int {
	t := 0
	for _, size := range i.ArmSizes(n) {
		t += size
	}
	return t
}

// PerArm reports whether n is a base size that differs from the arm sizes
// or their total: several arms, or an allocation other than 1.
func (i Info) PerArm() bool {
	return len(i.Arms) > 1 || len(i.Arms) == 1 && i.Arms[0].Allocation != 1
}

// Discrete reports whether any arm draws discrete data (counts).
func (s *Study) Discrete() bool {
	for _, a := range s.Arms {
		if a.Regression != nil && a.Regression.Design.Discrete() {
			return true
		}
		if f, ok := family.Lookup(a.Family); ok && f.Discrete {
			return true
		}
	}
	return false
}

// Rebuild loads the study a saved state was made from, out of the study
// text it carries, with the seed and replicates it ran with; what names
// the state in errors ("result", "plan"). Text that no longer loads or
// no longer matches its SHA-256 is refused.
func (i Info) Rebuild(what string) (*Study, error) {
	s, err := Parse(i.File, []byte(i.Source))
	if err != nil {
		return nil, fmt.Errorf("the study stored in the %s no longer loads: %w", what, err)
	}
	if s.SHA256 != i.SHA256 {
		return nil, fmt.Errorf("the %s's study text does not match its SHA-256 %s; the file was edited", what, i.SHA256)
	}
	s.Seed = i.Seed
	s.Replicates = i.Replicates
	return s, nil
}
