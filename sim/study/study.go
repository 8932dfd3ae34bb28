package study

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"

	"github.com/BurntSushi/toml"

	"deltaprobe/sim/expr"
	"deltaprobe/sim/family"
	"deltaprobe/sim/regress"
)

// Limits on what a study may ask for; beyond them a typo is more likely
// than intent.
const (
	MinReplicates  = 100
	MaxReplicates  = 100_000_000
	MaxSampleSize  = 10_000_000
	MaxGridPoints  = 200
	MaxTransforms  = 64
	MaxArms        = 16
	MaxStudyBytes  = 1 << 20
	maxAllocation  = 1000.0
	maxNameLength  = 64
	defaultLevel   = 0.95
	defaultRepl    = 10000
	defaultStdBias = 0.1
	defaultPower   = 0.8
	// DefaultConfidence is the family-wise confidence of an answer when
	// [criteria] confidence is not given.
	DefaultConfidence = 0.95
)

// BlockSize is the number of replicates in one block, the unit of work,
// seeding and merging. Changing it changes every result.
const BlockSize = 1000

// Study is a validated study file, ready to run.
type Study struct {
	File        string // the path it was loaded from
	Source      []byte // the file's bytes, as run
	SHA256      string // hex digest of Source
	Title       string
	Description string
	Seed        uint64 // as run: the file's, unless a flag overrode it
	Replicates  int    // as run: the file's, unless a flag overrode it
	// FileSeed and FileReplicates are what the file gives (replicates: or
	// its default), kept when a flag overrides Seed or Replicates.
	FileSeed       uint64
	FileReplicates int
	SampleSizes    []int
	Level          float64
	Arms           []Arm
	Transforms     []Transform
	Criteria       Criteria
	Plan           *PlanSpec // nil unless the file has a [plan] table
	// Interval is the [interval] table; nil when the file has none (a
	// normal quantile, no zero-cell correction).
	Interval  *Interval
	dfProgram *expr.Program // Interval.DF compiled against SizeNames
}

// PlanSpec is the [plan] table: the range of n to search and the budget
// of replicates per n.
type PlanSpec struct {
	NMin          int     `json:"n_min"`
	NMax          int     `json:"n_max"`
	MaxReplicates int     `json:"max_replicates"` // per n
	Batch         int     `json:"batch"`          // replicates added per look, a multiple of BlockSize
	Confidence    float64 `json:"confidence"`     // of each decision; 0: chosen from [criteria] confidence (measure.PlanRule)
	Window        int     `json:"window"`         // integers above an answer checked; 0 means the default rule
}

// Looks is the largest number of looks the budget allows at one n.
// Grid is a coarse grid over the plan's range, for predictions where the
// study gives no sample_sizes: n_min, doubling while below n_max, then
// n_max.
func (p *PlanSpec) Grid() []int {
	var ns []int
	for n := p.NMin; n < p.NMax; n *= 2 {
		ns = append(ns, n)
	}
	return append(ns, p.NMax)
}

func (p *PlanSpec) Looks() int { return (p.MaxReplicates + p.Batch - 1) / p.Batch }

// Arm is one independent sample of the study; a study with a [model]
// table has one arm with an empty name.
type Arm struct {
	Name   string
	Family string
	Values map[string]float64 // the family's parameters, as given
	// Fit is the family the analysis fits; Family itself unless the file
	// gives fit = "...". θ holds its parameters.
	Fit        string
	Variance   family.Variance // the plug-in variance: model-based unless variance = "robust"
	Allocation float64         // arm size = ceil(n × Allocation)
	// Censoring is the arm's [model.censoring] or [arm.censoring] table;
	// nil when lifetimes are seen whole.
	Censoring *family.Censoring
	Model     family.Model // the family at Values with its estimator
	Offset    int          // index of the arm's first parameter in θ
	// Regression is the design of a regression [model], nil otherwise;
	// Names are then its parameters' names (Values holds their truth).
	Regression *regress.Model
	Names      []string
	// Draws is how a replicate's sample is drawn: DrawsStatistics (the
	// default) draws the sufficient statistics from their exact joint
	// law where the family can, DrawsEach every observation.
	Draws string
}

// The values of the draws key of [model] or an [[arm]].
const (
	DrawsStatistics = "statistics"
	DrawsEach       = "each"
)

// Transform is one function of θ whose delta-method interval is checked.
type Transform struct {
	Name    string
	Expr    string
	Program *expr.Program
	// SE is the analyst's standard error, an expression of the parameters
	// and the sizes (compiled against ParamNames then SizeNames); empty:
	// the plug-in delta-method standard error.
	SE        string
	SEProgram *expr.Program
	Null      *float64 // the value H0 puts the transform at; nil: no test
}

// Criteria are the bands inside which the approximation is adequate.
type Criteria struct {
	Coverage [2]float64 `json:"coverage"`  // band for the Wald coverage
	VarRatio [2]float64 `json:"var_ratio"` // band for delta_var / emp_var
	StdBias  float64    `json:"std_bias"`  // bound on |bias| / sqrt(delta_var)
	// Confidence is the family-wise confidence of each transform's
	// answer: the probability that every decision it rests on is right.
	// 0 (a result saved before the key existed) means the default.
	Confidence float64 `json:"confidence,omitempty"`
	// Decide lists the study keys of the criteria that decide the
	// verdict; nil means DefaultDecide. The others are reported only.
	Decide []string `json:"decide,omitempty"`
	// PluginRatio is the band for plugin_var / emp_var and Power the
	// target rejection rate; zero means the default (see PluginBand,
	// PowerTarget), so results saved without them read the same.
	PluginRatio [2]float64 `json:"plugin_ratio,omitzero"`
	Power       float64    `json:"power,omitempty"`
}

// DefaultDecide are the criteria that decide when [criteria] decide is
// not given.
var DefaultDecide = []string{"coverage", "var_ratio", "std_bias"}

// CriterionKeys are the keys decide accepts, in the criteria table's order.
var CriterionKeys = []string{"coverage", "var_ratio", "std_bias", "plugin_ratio", "power"}

// Decides reports whether the criterion with study key key decides.
func (c Criteria) Decides(key string) bool {
	if c.Decide == nil {
		return slices.Contains(DefaultDecide, key)
	}
	return slices.Contains(c.Decide, key)
}

// PluginBand is the band for plugin_var / emp_var (default [0.9, 1.1]).
func (c Criteria) PluginBand() [2]float64 {
	if c.PluginRatio == [2]float64{} {
		return [2]float64{0.9, 1.1}
	}
	return c.PluginRatio
}

// PowerTarget is the rejection rate the power criterion asks for
// (default 0.8).
func (c Criteria) PowerTarget() float64 {
	if c.Power == 0 {
		return defaultPower
	}
	return c.Power
}

// DefaultCriteria returns Bradley's (1978) liberal band for the coverage
// at the given level, [1 − 1.5α, 1 − 0.5α], and the common-practice bands
// for the variance ratio and standardised bias.
func DefaultCriteria(level float64) Criteria {
	alpha := 1 - level
	return Criteria{
		Coverage:   [2]float64{1 - 1.5*alpha, 1 - 0.5*alpha},
		VarRatio:   [2]float64{0.9, 1.1},
		StdBias:    defaultStdBias,
		Confidence: DefaultConfidence,
	}
}

// ParamNames returns the names of θ's entries as transforms use them:
// the family's names for a one-sample study, "arm.param" otherwise.
func (s *Study) ParamNames() []string {
	var names []string
	for _, a := range s.Arms {
		for _, p := range a.Estimates() {
			if a.Name == "" {
				names = append(names, p)
			} else {
				names = append(names, a.Name+"."+p)
			}
		}
	}
	return names
}

// Estimates names the arm's estimated parameters, in the order of its
// part of θ: its fitted family's Estimates.
func (a *Arm) Estimates() []string {
	if a.Regression != nil {
		return a.Names
	}
	f, ok := family.Lookup(a.FitFamily())
	if !ok {
		panic("study: an arm fitting the unregistered family " + a.FitFamily())
	}
	return f.Estimates
}

// FitFamily is the name of the family the arm fits: Fit, or Family when
// Fit is empty.
func (a *Arm) FitFamily() string {
	if a.Fit == "" {
		return a.Family
	}
	return a.Fit
}

// Misspecified reports whether the arm fits another family than the one
// its data are drawn from.
func (a *Arm) Misspecified() bool { return a.FitFamily() != a.Family }

// Dim is the length of θ.
func (s *Study) Dim() int {
	d := 0
	for _, a := range s.Arms {
		d += len(a.Model.Truth)
	}
	return d
}

// ArmSize is the number of observations arm a draws at sample size n
// (see armSize).
func (s *Study) ArmSize(a, n int) int { return armSize(s.Arms[a].Allocation, n) }

// armSize is the one rule for an arm's size at base sample size n:
// ceil(n × allocation), at least 1. A product that is a whole number but
// for binary rounding (50 × 1.1 = 55.000000000000007, two units in the
// last place off) counts as that whole number. The runner draws by it
// (Study.ArmSize) and the report counts by it (Info.ArmSizes).
func armSize(allocation float64, n int) int {
	v := float64(n) * allocation
	if r := math.Round(v); math.Abs(v-r) <= 2*(math.Nextafter(r, math.Inf(1))-r) {
		return max(int(r), 1)
	}
	return max(int(math.Ceil(v)), 1)
}

// Load reads, decodes and validates a study file. Every problem found is
// returned at once, as StudyErrors, each with the file and line.
func Load(path string) (*Study, error) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("reading study file: %w", err)
	}
	return Parse(path, src)
}

// Parse validates study-file bytes; name is used in messages.
func Parse(name string, src []byte) (*Study, error) {
	if len(src) > MaxStudyBytes {
		return nil, StudyErrors{{File: name, Msg: fmt.Sprintf("the file is %d bytes; a study file may have at most %d", len(src), MaxStudyBytes)}}
	}
	raw := map[string]any{}
	if _, err := toml.Decode(string(src), &raw); err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, StudyErrors{{File: name, Line: pe.Position.Line, Col: pe.Position.Col,
				Msg: "not valid TOML: " + pe.Message}}
		}
		return nil, StudyErrors{{File: name, Msg: "not valid TOML: " + err.Error()}}
	}
	d := &decoder{file: name, lines: scanKeyLines(src)}
	s := &Study{File: name, Source: src, SHA256: SHA256Of(string(src))}
	d.study(raw, s)
	if len(d.errs) > 0 {
		return nil, d.errs.sorted()
	}
	return s, nil
}

// SHA256Of is the hex SHA-256 digest of a study file's text, as results
// record it.
func SHA256Of(src string) string {
	sum := sha256.Sum256([]byte(src))
	return hex.EncodeToString(sum[:])
}

// decoder walks the generic TOML tree, collecting every problem.
type decoder struct {
	file  string
	lines keyLines
	errs  StudyErrors
}

func (d *decoder) fail(path, format string, args ...any) {
	d.errs = append(d.errs, &StudyError{File: d.file, Line: d.lines.line(path), Msg: fmt.Sprintf(format, args...)})
}

var topKeys = []string{"title", "description", "seed", "replicates", "sample_sizes", "level", "model", "arm", "transform", "criteria", "plan", "interval"}

func (d *decoder) study(raw map[string]any, s *Study) {
	d.unknownKeys("", raw, topKeys)
	s.Title = d.str(raw, "", "title", strings.TrimSuffix(filepath.Base(s.File), filepath.Ext(s.File)))
	s.Description = d.str(raw, "", "description", "")

	if _, ok := raw["seed"]; !ok {
		d.fail("", "seed is missing: give a whole number from 0 to %d that fixes the random streams", int64(math.MaxInt64))
	} else if v, ok := d.integer(raw, "", "seed", 0, math.MaxInt64); ok {
		s.Seed = uint64(v)
	}
	s.Replicates = defaultRepl
	if v, ok := d.integer(raw, "", "replicates", MinReplicates, MaxReplicates); ok {
		s.Replicates = int(v)
	}
	s.FileSeed, s.FileReplicates = s.Seed, s.Replicates
	s.Level = defaultLevel
	if v, ok := d.number(raw, "", "level"); ok {
		if !(v > 0 && v < 1) {
			d.fail("level", "level = %v is out of range: the nominal level of the Wald intervals must lie strictly between 0 and 1, e.g. 0.95", v)
		} else {
			s.Level = v
		}
	}
	s.Plan = d.plan(raw)
	if _, given := raw["sample_sizes"]; given || raw["plan"] == nil {
		s.SampleSizes = d.grid(raw)
	}
	d.arms(raw, s)
	d.interval(raw, s)
	d.transforms(raw, s)
	s.Criteria = d.criteria(raw, s.Level)
	if s.Criteria.Decides("power") {
		for i, t := range s.Transforms {
			if t.Null == nil {
				d.fail(fmt.Sprintf("transform[%d]", i), "transform %q has no null, but [criteria] decide includes \"power\": give null = ..., the value the test's H0 puts the transform at", t.Name)
			}
		}
	}
}

// unknownKeys reports every key of m that is not accepted, saying where
// it was found ("at the top level", "in [criteria]", "for the normal
// family").
func (d *decoder) unknownKeys(table string, m map[string]any, accepted []string) {
	where := "at the top level"
	if table != "" {
		where = "in [" + tableLabel(table) + "]"
	}
	d.unknownKeysAt(table, where, m, accepted)
}

func (d *decoder) unknownKeysAt(table, where string, m map[string]any, accepted []string) {
	var keys []string
	for k := range m {
		if !slices.Contains(accepted, k) {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	for _, k := range keys {
		d.fail(join(table, k), "unknown key %q %s%s", k, where, didYouMean(k, accepted))
	}
}

func tableLabel(path string) string {
	if i := strings.IndexByte(path, '['); i >= 0 {
		return "[" + path[:i] + "]"
	}
	return path
}

func join(table, key string) string {
	if table == "" {
		return key
	}
	return table + "." + key
}

func typeName(v any) string {
	switch v.(type) {
	case string:
		return "a string"
	case int64:
		return "an integer"
	case float64:
		return "a number"
	case bool:
		return "a boolean"
	case []any, []map[string]any:
		return "an array"
	case map[string]any:
		return "a table"
	}
	return fmt.Sprintf("a %T", v)
}

func (d *decoder) str(m map[string]any, table, key, def string) string {
	v, ok := m[key]
	if !ok {
		return def
	}
	s, ok := v.(string)
	if !ok {
		d.fail(join(table, key), "%s must be a string in quotes, got %s", key, typeName(v))
		return def
	}
	return s
}

// number accepts a TOML integer or float.
func (d *decoder) number(m map[string]any, table, key string) (float64, bool) {
	v, ok := m[key]
	if !ok {
		return 0, false
	}
	switch x := v.(type) {
	case int64:
		return float64(x), true
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			d.fail(join(table, key), "%s = %v is not a finite number", key, x)
			return 0, false
		}
		return x, true
	}
	d.fail(join(table, key), "%s must be a number, got %s", key, typeName(v))
	return 0, false
}

// integer accepts a TOML integer (or a float with no fractional part) in [lo, hi].
func (d *decoder) integer(m map[string]any, table, key string, lo, hi int64) (int64, bool) {
	v, ok := m[key]
	if !ok {
		return 0, false
	}
	var n int64
	switch x := v.(type) {
	case int64:
		n = x
	case float64:
		if x != math.Trunc(x) || math.Abs(x) > 1<<53 {
			d.fail(join(table, key), "%s = %v must be a whole number from %d to %d", key, x, lo, hi)
			return 0, false
		}
		n = int64(x)
	default:
		d.fail(join(table, key), "%s must be a whole number from %d to %d, got %s", key, lo, hi, typeName(v))
		return 0, false
	}
	if n < lo || n > hi {
		d.fail(join(table, key), "%s = %d is out of range: accepted are whole numbers from %d to %d", key, n, lo, hi)
		return 0, false
	}
	return n, true
}

func (d *decoder) grid(raw map[string]any) []int {
	v, ok := raw["sample_sizes"]
	if !ok {
		d.fail("", "sample_sizes is missing: give the grid of sample sizes to check, e.g. sample_sizes = [10, 20, 40, 80], or a [plan] table to search for the smallest adequate n")
		return nil
	}
	list, ok := v.([]any)
	if !ok {
		d.fail("sample_sizes", "sample_sizes must be an array of whole numbers, e.g. [10, 20, 40], got %s", typeName(v))
		return nil
	}
	if len(list) == 0 {
		d.fail("sample_sizes", "sample_sizes is empty: give at least one sample size of 2 or more")
		return nil
	}
	if len(list) > MaxGridPoints {
		d.fail("sample_sizes", "sample_sizes has %d entries; at most %d are accepted", len(list), MaxGridPoints)
		return nil
	}
	var grid []int
	for i, e := range list {
		var n int64
		switch x := e.(type) {
		case int64:
			n = x
		case float64:
			if x != math.Trunc(x) {
				d.fail("sample_sizes", "sample_sizes entry %d is %v: sample sizes must be whole numbers", i+1, x)
				return nil
			}
			n = int64(x)
		default:
			d.fail("sample_sizes", "sample_sizes entry %d is %s: sample sizes must be whole numbers", i+1, typeName(e))
			return nil
		}
		if n < 2 || n > MaxSampleSize {
			d.fail("sample_sizes", "sample_sizes entry %d is %d: accepted are whole numbers from 2 to %d", i+1, n, MaxSampleSize)
			return nil
		}
		if len(grid) > 0 && int(n) <= grid[len(grid)-1] {
			if int(n) == grid[len(grid)-1] {
				d.fail("sample_sizes", "sample_sizes lists %d twice: each sample size must appear once", n)
			} else {
				d.fail("sample_sizes", "sample_sizes must be in increasing order: %d comes after %d", n, grid[len(grid)-1])
			}
			return nil
		}
		grid = append(grid, int(n))
	}
	return grid
}

var armNamePattern = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

func (d *decoder) arms(raw map[string]any, s *Study) {
	modelRaw, hasModel := raw["model"]
	armRaw, hasArms := raw["arm"]
	switch {
	case hasModel && hasArms:
		d.fail("arm", "a study has either one [model] table or several [[arm]] tables, not both")
		return
	case !hasModel && !hasArms:
		d.fail("", "the data-generating model is missing: add a [model] table, or [[arm]] tables for several samples")
		return
	case hasModel:
		m, ok := modelRaw.(map[string]any)
		if !ok {
			d.fail("model", "model must be a table ([model]), got %s", typeName(modelRaw))
			return
		}
		if isRegression(m) {
			a := Arm{Allocation: 1, Values: map[string]float64{}}
			if d.regression("model", m, &a) {
				s.Arms = []Arm{a}
			}
		} else if a, ok := d.arm("model", m, false, smallestN(s)); ok {
			s.Arms = []Arm{a}
		}
	default:
		list, ok := armRaw.([]map[string]any)
		if !ok {
			d.fail("arm", "arm must be an array of tables ([[arm]]), got %s", typeName(armRaw))
			return
		}
		if len(list) > MaxArms {
			d.fail("arm", "%d arms given; at most %d are accepted", len(list), MaxArms)
			return
		}
		seen := map[string]bool{}
		for i, m := range list {
			table := fmt.Sprintf("arm[%d]", i)
			a, ok := d.arm(table, m, true, smallestN(s))
			if !ok {
				continue
			}
			if seen[a.Name] {
				d.fail(join(table, "name"), "arm name %q is used twice: each arm needs its own name", a.Name)
				continue
			}
			seen[a.Name] = true
			s.Arms = append(s.Arms, a)
		}
		if len(s.Arms) != len(list) {
			s.Arms = nil
		}
	}
	off := 0
	for i := range s.Arms {
		s.Arms[i].Offset = off
		off += len(s.Arms[i].Model.Truth)
	}
}

// smallestN is the smallest n the study will draw at: the grid's first,
// else the plan's n_min; 0 when neither is known (already an error).
func smallestN(s *Study) int {
	switch {
	case len(s.SampleSizes) > 0:
		return s.SampleSizes[0]
	case s.Plan != nil:
		return s.Plan.NMin
	}
	return 0
}

func (d *decoder) arm(table string, m map[string]any, named bool, smallest int) (Arm, bool) {
	a := Arm{Allocation: 1, Values: map[string]float64{}}
	ok := true
	label := "[model]"
	if named {
		label = "[[arm]]"
		name := d.str(m, table, "name", "")
		switch {
		case name == "":
			if _, given := m["name"]; !given {
				d.fail(table, "this [[arm]] has no name: add name = \"...\" (letters, digits and _, starting with a letter)")
			}
			ok = false
		case !armNamePattern.MatchString(name) || len(name) > maxNameLength:
			d.fail(join(table, "name"), "arm name %q is not accepted: use letters, digits and _, starting with a letter or _, at most %d characters", name, maxNameLength)
			ok = false
		}
		a.Name = name
		if v, given := d.number(m, table, "allocation"); given {
			if !(v > 0 && v <= maxAllocation) {
				d.fail(join(table, "allocation"), "allocation = %v is out of range: the arm's share of n must be > 0 and at most %v", v, maxAllocation)
				ok = false
			} else {
				a.Allocation = v
			}
		}
	}
	if named && isRegression(m) {
		d.fail(table, "regression models (%s, [[model.equation]]) go in [model], not in [[arm]] tables", strings.Join(regress.Names(), ", "))
		return a, false
	}
	famRaw, given := m["family"]
	if !given {
		d.fail(table, "%s has no family: add family = \"...\"; accepted: %s", label, strings.Join(append(family.Names(), regress.Names()...), ", "))
		return a, false
	}
	famName, isStr := famRaw.(string)
	if !isStr {
		d.fail(join(table, "family"), "family must be a string, got %s; accepted: %s", typeName(famRaw), strings.Join(family.Names(), ", "))
		return a, false
	}
	fam, known := family.Lookup(famName)
	if !known {
		d.fail(join(table, "family"), "unknown family %q%s", famName, didYouMean(famName, append(family.Names(), regress.Names()...)))
		return a, false
	}
	a.Family = famName
	fit, variance, fitOK := d.fitKeys(table, m, fam)
	ok = ok && fitOK
	accepted := []string{"family", "fit", "variance", "draws"}
	a.Draws = d.str(m, table, "draws", DrawsStatistics)
	if a.Draws != DrawsStatistics && a.Draws != DrawsEach {
		d.fail(join(table, "draws"), "draws = %q is not accepted: use \"statistics\" (draw the sufficient statistics from their exact law, the default) or \"each\" (draw every observation)", a.Draws)
		ok = false
	}
	if named {
		accepted = append(accepted, "name", "allocation")
	}
	var paramNames []string
	for _, p := range fam.Params {
		paramNames = append(paramNames, p.Name)
	}
	accepted = append(accepted, paramNames...)
	if _, given := m["censoring"]; given || fam.Censor != nil {
		accepted = append(accepted, "censoring")
	}
	d.unknownKeysAt(table, "for the "+fam.Name+" family", m, accepted)
	if _, given := m["censoring"]; given && fam.Censor == nil {
		d.fail(join(table, "censoring"), "censoring is for lifetimes: the %s family has none; families with censoring: %s", fam.Name, strings.Join(censorableFamilies(), ", "))
		ok = false
	}
	if raw, given := m["censoring"]; given && fam.Censor != nil {
		c, good := d.censoring(table, label, raw)
		ok = ok && good
		a.Censoring = c
	}
	for _, p := range fam.Params {
		if _, present := m[p.Name]; !present {
			d.fail(table, "%s family %s needs %s (%s); its parameters are %s", label, fam.Name, p.Name, p.Accepts, strings.Join(paramNames, ", "))
			ok = false
			continue
		}
		v, good := d.number(m, table, p.Name)
		if !good {
			ok = false
			continue
		}
		if (p.Integer && v != math.Trunc(v)) || !p.Check(v) {
			d.fail(join(table, p.Name), "%s = %v is out of range for the %s family: accepted is %s", p.Name, v, fam.Name, p.Accepts)
			ok = false
			continue
		}
		a.Values[p.Name] = v
	}
	if !ok {
		return a, false
	}
	if fit != fam {
		a.Fit = fit.Name
	}
	a.Variance = variance
	var model family.Model
	var err error
	switch {
	case a.Censoring != nil:
		model, err = family.BuildCensored(fam, a.Values, *a.Censoring, fit, variance)
	default:
		model, err = family.Build(fam, a.Values, fit, variance)
	}
	if err != nil {
		path := table
		if _, given := m["fit"]; given {
			path = join(table, "fit")
		} else if _, given := m["variance"]; given {
			path = join(table, "variance")
		}
		d.fail(path, "%s: %s", label, strings.TrimPrefix(err.Error(), "sim: "))
		return a, false
	}
	if a.Draws == DrawsStatistics {
		model.Sampler = family.Statistics(model.Sampler)
	}
	a.Model = model
	if a.Censoring != nil && smallest > 0 {
		size := armSize(a.Allocation, smallest)
		need := 1
		if c, ok := model.Sampler.(family.EventCounter); ok {
			need = c.MinEvents()
		}
		if expected := float64(size) * model.EventShare; expected < float64(need) {
			who := "the sample"
			if a.Name != "" {
				who = "arm " + a.Name
			}
			d.fail(join(table, "censoring"), "[%s.censoring]: at the smallest n, %d, %s draws %d observations and expects %d × %.3g = %.3g events (%.3g the probability of an event at the truth, with %s); an estimate needs at least %s: give a later end, less dropout or larger sample sizes",
				strings.Trim(label, "[]"), smallest, who, size, size, model.EventShare, expected, model.EventShare, a.Censoring.Words(), map[bool]string{true: "one", false: "two"}[need == 1])
			return a, false
		}
	}
	return a, true
}

// censorableFamilies names the families whose lifetimes can be censored.
func censorableFamilies() []string {
	var names []string
	for _, f := range family.All() {
		if f.Censor != nil {
			names = append(names, f.Name)
		}
	}
	return names
}

var censoringKeys = []string{"entry", "end", "dropout_rate"}

// censoring reads an arm's censoring sub-table: each number positive,
// at least one of end and dropout_rate, entry only with an end and
// before it.
func (d *decoder) censoring(table, label string, raw any) (*family.Censoring, bool) {
	path := join(table, "censoring")
	sub := strings.Trim(label, "[]") + ".censoring"
	m, isTable := raw.(map[string]any)
	if !isTable {
		d.fail(path, "censoring must be a table ([%s]) with entry, end and dropout_rate, got %s", sub, typeName(raw))
		return nil, false
	}
	d.unknownKeysAt(path, "in ["+sub+"]", m, censoringKeys)
	c := &family.Censoring{}
	ok := true
	for _, k := range censoringKeys {
		v, given := d.number(m, path, k)
		if !given {
			if _, present := m[k]; present {
				ok = false
			}
			continue
		}
		if !(v > 0) {
			d.fail(join(path, k), "%s = %v is out of range: %s", k, v, censoringAccepts[k])
			ok = false
			continue
		}
		switch k {
		case "entry":
			c.Entry = v
		case "end":
			c.End = v
		case "dropout_rate":
			c.DropoutRate = v
		}
	}
	if !ok {
		return nil, false
	}
	_, hasEnd := m["end"]
	_, hasDropout := m["dropout_rate"]
	_, hasEntry := m["entry"]
	switch {
	case !hasEnd && !hasDropout:
		d.fail(path, "[%s] censors nothing: give end (the calendar time the study ends) or dropout_rate (the rate of loss to follow-up), or both", sub)
		return nil, false
	case hasEntry && !hasEnd:
		d.fail(join(path, "entry"), "entry = %v needs end: staggered entry censors only when the study ends at a fixed calendar time", c.Entry)
		return nil, false
	case hasEntry && !(c.Entry < c.End):
		d.fail(join(path, "entry"), "entry = %v must be less than end = %v: a unit entering at the end would be followed for no time", c.Entry, c.End)
		return nil, false
	}
	return c, true
}

var censoringAccepts = map[string]string{
	"entry":        "the length of the entry period must be > 0 (leave it out when every unit enters at time 0)",
	"end":          "the calendar time the study ends must be > 0",
	"dropout_rate": "the rate of loss to follow-up must be > 0 (leave it out for none)",
}

// variantText shows a value given for a word key: quoted when it is a
// string, by its type otherwise.
func variantText(v any) string {
	if str, ok := v.(string); ok {
		return fmt.Sprintf("%q", str)
	}
	return typeName(v)
}

// fitKeys reads an arm's fit and variance keys: the fitted family (the
// data family when fit is not given) and the variance ("model" unless
// given).
func (d *decoder) fitKeys(table string, m map[string]any, data *family.Family) (*family.Family, family.Variance, bool) {
	fit, variance, ok := data, family.ModelVariance, true
	if raw, given := m["fit"]; given {
		name, isStr := raw.(string)
		f, known := family.Lookup(name)
		switch {
		case !isStr:
			d.fail(join(table, "fit"), "fit must be a string naming the fitted family, got %s; accepted: %s", typeName(raw), strings.Join(data.FitsFor(), ", "))
			ok = false
		case !known:
			d.fail(join(table, "fit"), "unknown fit family %q for %s data%s", name, data.Name, didYouMean(name, data.FitsFor()))
			ok = false
		default:
			fit = f
		}
	}
	if raw, given := m["variance"]; given {
		switch raw {
		case "model":
		case "robust":
			variance = family.RobustVariance
		default:
			d.fail(join(table, "variance"), "variance must be \"model\" (inverse observed information at the estimate) or \"robust\" (the sandwich from the sample), got %s", variantText(raw))
			ok = false
		}
	}
	return fit, variance, ok
}

func (d *decoder) transforms(raw map[string]any, s *Study) {
	v, ok := raw["transform"]
	if !ok {
		d.fail("", "no transform given: add at least one [[transform]] table with name and expr")
		return
	}
	list, ok := v.([]map[string]any)
	if !ok {
		d.fail("transform", "transform must be an array of tables ([[transform]]), got %s", typeName(v))
		return
	}
	if len(list) > MaxTransforms {
		d.fail("transform", "%d transforms given; at most %d are accepted", len(list), MaxTransforms)
		return
	}
	seen := map[string]bool{}
	var names []string
	haveModel := len(s.Arms) > 0
	if haveModel {
		names = s.ParamNames()
	}
	for i, m := range list {
		table := fmt.Sprintf("transform[%d]", i)
		d.unknownKeys(table, m, []string{"name", "expr", "se", "null"})
		name := d.str(m, table, "name", "")
		src := d.str(m, table, "expr", "")
		if name == "" {
			d.fail(table, "this [[transform]] has no name: add name = \"...\" (used for columns and file names)")
			continue
		}
		if len(name) > maxNameLength || strings.ContainsAny(name, "\n\r\t") {
			d.fail(join(table, "name"), "transform name %q is not accepted: one line of at most %d characters", name, maxNameLength)
			continue
		}
		if seen[name] {
			d.fail(join(table, "name"), "transform name %q is used twice: each transform needs its own name", name)
			continue
		}
		seen[name] = true
		if src == "" {
			d.fail(table, "transform %q has no expr: add expr = \"...\", e.g. expr = \"log(%s)\"", name, firstOr(names, "mean"))
			continue
		}
		if !haveModel {
			continue
		}
		if err := sizeInExpr(s, src); err != nil {
			d.fail(join(table, "expr"), "transform %q: %v", name, err)
			continue
		}
		prog, err := expr.Compile(src, names)
		if err != nil {
			d.fail(join(table, "expr"), "transform %q: %v", name, err)
			continue
		}
		t := Transform{Name: name, Expr: src, Program: prog}
		if err := checkAtTruth(s, t); err != nil {
			d.fail(join(table, "expr"), "transform %q: %v", name, err)
			continue
		}
		if !d.transformTest(table, m, s, &t) {
			continue
		}
		s.Transforms = append(s.Transforms, t)
	}
}

func firstOr(names []string, def string) string {
	if len(names) > 0 {
		return names[0]
	}
	return def
}

// checkAtTruth refuses a transform whose value, gradient or delta
// variance is not finite and positive at the true parameters: the
// delta method has nothing to say there.
func checkAtTruth(s *Study, t Transform) error {
	theta := s.Truth()
	used := false
	for i := range theta {
		used = used || t.Program.Uses(i)
	}
	if !used {
		return fmt.Errorf("the expression uses no parameter, so there is nothing to estimate; known names: %s", strings.Join(s.ParamNames(), ", "))
	}
	v, grad, _ := t.Program.ValueGradHessian(theta)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("its value at the true parameters (%s) is %v; the transform must be defined (finite) at the truth", truthText(s, theta), v)
	}
	for _, g := range grad {
		if math.IsNaN(g) || math.IsInf(g, 0) {
			return fmt.Errorf("its gradient at the true parameters is not finite; the delta method needs a differentiable transform at the truth")
		}
	}
	switch dv := s.deltaVar(grad, theta, s.SampleSizesOr(2)); {
	case math.IsInf(dv, 0) || math.IsNaN(dv):
		return fmt.Errorf("its delta-method variance at the true parameters (%s) is %v: the gradient is too large for its square to be represented; rescale the transform", truthText(s, theta), dv)
	case !(dv > 0):
		return fmt.Errorf("its delta-method variance at the true parameters (%s) is 0: the gradient vanishes there (or underflows), and where it vanishes the first-order method says nothing; deltaprobe offers no higher-order one", truthText(s, theta))
	}
	return nil
}

func truthText(s *Study, theta []float64) string {
	var parts []string
	for i, name := range s.ParamNames() {
		parts = append(parts, fmt.Sprintf("%s = %v", name, theta[i]))
	}
	return strings.Join(parts, ", ")
}

// SampleSizesOr returns the smallest grid size, or def when the grid is empty.
func (s *Study) SampleSizesOr(def int) int {
	if len(s.SampleSizes) > 0 {
		return s.SampleSizes[0]
	}
	return def
}

func (d *decoder) criteria(raw map[string]any, level float64) Criteria {
	c := DefaultCriteria(level)
	v, ok := raw["criteria"]
	if !ok {
		return c
	}
	m, ok := v.(map[string]any)
	if !ok {
		d.fail("criteria", "criteria must be a table ([criteria]), got %s", typeName(v))
		return c
	}
	d.unknownKeys("criteria", m, []string{"coverage", "var_ratio", "std_bias", "confidence", "decide", "plugin_ratio", "power"})
	d.decide(m, &c)
	if band, ok := d.band(m, "plugin_ratio"); ok {
		if !(band[0] > 0 && band[0] < 1 && band[1] > 1) {
			d.fail("criteria.plugin_ratio", "plugin_ratio band [%v, %v] must satisfy 0 < low < 1 < high, e.g. [0.9, 1.1]", band[0], band[1])
		} else {
			c.PluginRatio = band
		}
	}
	if v, ok := d.number(m, "criteria", "power"); ok {
		if !(v > 0 && v < 1) {
			d.fail("criteria.power", "power = %v is out of range: the target rejection rate must lie strictly between 0 and 1, e.g. 0.8", v)
		} else {
			c.Power = v
		}
	}
	if band, ok := d.band(m, "coverage"); ok {
		switch {
		case !(band[0] >= 0 && band[1] <= 1):
			d.fail("criteria.coverage", "coverage band [%v, %v] must lie within [0, 1]", band[0], band[1])
		case !(band[0] < level && level < band[1]):
			d.fail("criteria.coverage", "coverage band [%v, %v] must contain the nominal level %v", band[0], band[1], level)
		default:
			c.Coverage = band
		}
	}
	if band, ok := d.band(m, "var_ratio"); ok {
		if !(band[0] > 0 && band[0] < 1 && band[1] > 1) {
			d.fail("criteria.var_ratio", "var_ratio band [%v, %v] must satisfy 0 < low < 1 < high, e.g. [0.9, 1.1]", band[0], band[1])
		} else {
			c.VarRatio = band
		}
	}
	if b, ok := d.number(m, "criteria", "std_bias"); ok {
		if !(b > 0 && b <= 10) {
			d.fail("criteria.std_bias", "std_bias = %v is out of range: the bound on |bias|/sd must be > 0 and at most 10, e.g. 0.1", b)
		} else {
			c.StdBias = b
		}
	}
	if v, ok := d.number(m, "criteria", "confidence"); ok {
		if !(v >= 0.5 && v < 1) {
			d.fail("criteria.confidence", "confidence = %v is out of range: the family-wise confidence of an answer must be at least 0.5 and below 1, e.g. 0.95", v)
		} else {
			c.Confidence = v
		}
	}
	return c
}

// decide reads [criteria] decide, a non-empty list of distinct criterion keys.
func (d *decoder) decide(m map[string]any, c *Criteria) {
	v, ok := m["decide"]
	if !ok {
		return
	}
	list, ok := v.([]any)
	if !ok || len(list) == 0 {
		d.fail("criteria.decide", "decide must be a non-empty array of criterion names, e.g. [\"coverage\", \"power\"]; accepted: %s", strings.Join(CriterionKeys, ", "))
		return
	}
	var keys []string
	for _, e := range list {
		k, isStr := e.(string)
		switch {
		case !isStr:
			d.fail("criteria.decide", "decide lists %s; give criterion names in quotes: %s", typeName(e), strings.Join(CriterionKeys, ", "))
			return
		case !slices.Contains(CriterionKeys, k):
			d.fail("criteria.decide", "decide lists %q, which is no criterion%s", k, didYouMean(k, CriterionKeys))
			return
		case slices.Contains(keys, k):
			d.fail("criteria.decide", "decide lists %q twice: name each criterion once", k)
			return
		}
		keys = append(keys, k)
	}
	// Kept in the table's order, so the same set reads the same.
	var ordered []string
	for _, k := range CriterionKeys {
		if slices.Contains(keys, k) {
			ordered = append(ordered, k)
		}
	}
	c.Decide = ordered
}

func (d *decoder) band(m map[string]any, key string) ([2]float64, bool) {
	v, ok := m[key]
	if !ok {
		return [2]float64{}, false
	}
	list, ok := v.([]any)
	if !ok || len(list) != 2 {
		d.fail("criteria."+key, "%s must be a band of two numbers [low, high], e.g. %s", key, bandExample(key))
		return [2]float64{}, false
	}
	var band [2]float64
	for i, e := range list {
		switch x := e.(type) {
		case int64:
			band[i] = float64(x)
		case float64:
			band[i] = x
		default:
			d.fail("criteria."+key, "%s must be a band of two numbers [low, high], e.g. %s; entry %d is %s", key, bandExample(key), i+1, typeName(e))
			return band, false
		}
	}
	if !(band[0] < band[1]) {
		d.fail("criteria."+key, "%s band [%v, %v] is reversed or empty: give [low, high] with low < high", key, band[0], band[1])
		return band, false
	}
	return band, true
}

func bandExample(key string) string {
	if key == "coverage" {
		return "[0.925, 0.975]"
	}
	return "[0.9, 1.1]"
}

func (d *decoder) plan(raw map[string]any) *PlanSpec {
	v, ok := raw["plan"]
	if !ok {
		return nil
	}
	m, ok := v.(map[string]any)
	if !ok {
		d.fail("plan", "plan must be a table ([plan]), got %s", typeName(v))
		return nil
	}
	d.unknownKeys("plan", m, []string{"n_min", "n_max", "max_replicates", "batch", "confidence", "window"})
	p := &PlanSpec{}
	good := true
	need := func(key string, lo, hi int64) int {
		if _, given := m[key]; !given {
			d.fail("plan", "[plan] needs %s, a whole number from %d to %d", key, lo, hi)
			good = false
			return 0
		}
		n, ok := d.integer(m, "plan", key, lo, hi)
		good = good && ok
		return int(n)
	}
	p.NMin = need("n_min", 2, MaxSampleSize)
	p.NMax = need("n_max", 2, MaxSampleSize)
	p.MaxReplicates = need("max_replicates", BlockSize, MaxReplicates)
	if p.MaxReplicates%BlockSize != 0 {
		d.fail("plan.max_replicates", "max_replicates = %d must be a multiple of the block size %d, so that every look ends on a block", p.MaxReplicates, BlockSize)
		good = false
	}
	if good && p.NMax <= p.NMin {
		d.fail("plan.n_max", "n_max = %d must be larger than n_min = %d", p.NMax, p.NMin)
		good = false
	}
	if good {
		// Default: about ten looks, whole blocks each.
		p.Batch = max(BlockSize, p.MaxReplicates/10/BlockSize*BlockSize)
	}
	if _, given := m["batch"]; given {
		if b, ok := d.integer(m, "plan", "batch", BlockSize, MaxReplicates); ok {
			if b%BlockSize != 0 {
				d.fail("plan.batch", "batch = %d must be a multiple of the block size %d, so that every look ends on a block", b, BlockSize)
				good = false
			} else if good && int(b) > p.MaxReplicates {
				d.fail("plan.batch", "batch = %d is larger than max_replicates = %d", b, p.MaxReplicates)
				good = false
			} else {
				p.Batch = int(b)
			}
		} else {
			good = false
		}
	}
	if c, ok := d.number(m, "plan", "confidence"); ok {
		if !(c >= 0.5 && c < 1) {
			d.fail("plan.confidence", "confidence = %v is out of range: the confidence of each decision must be at least 0.5 and below 1, e.g. 0.99 (leave it out and each decision's confidence follows from [criteria] confidence)", c)
			good = false
		} else {
			p.Confidence = c
		}
	}
	if _, given := m["window"]; given {
		w, ok := d.integer(m, "plan", "window", 1, 1000)
		p.Window = int(w)
		good = good && ok
	}
	if !good {
		return nil
	}
	return p
}
