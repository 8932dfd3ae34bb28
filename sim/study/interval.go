package study

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"deltaprobe/sim/expr"
	"deltaprobe/sim/family"
)

// Interval is the [interval] table: how the interval the analyst reports
// is built from τ̂ and its standard error.
type Interval struct {
	Quantile  string `json:"quantile"`             // QuantileNormal or QuantileT
	DF        string `json:"df,omitempty"`         // with QuantileT: an expression of the sizes
	ZeroCells string `json:"zero_cells,omitempty"` // ZeroCellsNone or ZeroCellsAddHalf
}

// The accepted values of the [interval] keys.
const (
	QuantileNormal   = "normal"
	QuantileT        = "t"
	ZeroCellsNone    = "none"
	ZeroCellsAddHalf = "add_half"
)

// AddHalf reports whether zero cells are corrected (Haldane 1956; Anscombe 1956).
func (iv *Interval) AddHalf() bool { return iv != nil && iv.ZeroCells == ZeroCellsAddHalf }

// SizeNames are the names a `se` or `df` expression may use beside the
// parameters: n, the base size, and ARM.n, each arm's size, for a study
// with named arms.
func SizeNames(arms []string) []string {
	names := []string{"n"}
	for _, a := range arms {
		if a != "" {
			names = append(names, a+".n")
		}
	}
	return names
}

// SetSizes writes the values of SizeNames at base size n into dst: n,
// then each named arm's size.
func SetSizes(dst []float64, n int, armSizes []int, named bool) {
	dst[0] = float64(n)
	if named {
		for a, size := range armSizes {
			dst[1+a] = float64(size)
		}
	}
}

// quantileAt is the quantile q of the two-sided interval at level: the
// normal's Φ⁻¹(1 − α/2), or Student's t with df degrees of freedom, df
// the value of prog at the sizes. A df that is not finite and positive
// gives NaN.
func quantileAt(level float64, iv *Interval, prog *expr.Program, n int, armSizes []int, named bool) float64 {
	if iv == nil || iv.Quantile != QuantileT {
		return math.Sqrt2 * math.Erfinv(level)
	}
	x := make([]float64, prog.Dim())
	SetSizes(x, n, armSizes, named)
	df := prog.NewEvaluator().Value(x)
	if !(df > 0 && df <= math.MaxFloat64) {
		return math.NaN()
	}
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(1 - (1-level)/2)
}

// Quantile is the interval's quantile at base size n (see quantileAt);
// the runner calls it once per block, never per replicate.
func (s *Study) Quantile(n int) float64 {
	sizes := make([]int, len(s.Arms))
	for a := range s.Arms {
		sizes[a] = s.ArmSize(a, n)
	}
	return quantileAt(s.Level, s.Interval, s.dfProgram, n, sizes, s.namedArms())
}

// Quantile is the interval's quantile at base size n for a saved study;
// it compiles the df expression again, which was valid when the study ran.
func (i Info) Quantile(n int) float64 {
	if i.Interval == nil || i.Interval.Quantile != QuantileT {
		return quantileAt(i.Level, nil, nil, n, nil, false)
	}
	var arms []string
	for _, a := range i.Arms {
		arms = append(arms, a.Name)
	}
	prog, err := expr.Compile(i.Interval.DF, SizeNames(arms))
	if err != nil {
		return math.NaN()
	}
	named := len(arms) > 0 && arms[0] != ""
	return quantileAt(i.Level, i.Interval, prog, n, i.ArmSizes(n), named)
}

func (s *Study) namedArms() bool { return len(s.Arms) > 0 && s.Arms[0].Name != "" }

func (s *Study) armNames() []string {
	var names []string
	for _, a := range s.Arms {
		names = append(names, a.Name)
	}
	return names
}

// SizeNames are the size names of s (see SizeNames).
func (s *Study) SizeNames() []string { return SizeNames(s.armNames()) }

// checkSizes lists the sample sizes a size expression is checked at: the
// grid, and a plan's n_min, n_max and the doubling grid between them.
func (s *Study) checkSizes() []int {
	ns := append([]int(nil), s.SampleSizes...)
	if s.Plan != nil {
		ns = append(ns, s.Plan.Grid()...)
	}
	return ns
}

func (d *decoder) interval(raw map[string]any, s *Study) {
	v, ok := raw["interval"]
	if !ok {
		return
	}
	m, ok := v.(map[string]any)
	if !ok {
		d.fail("interval", "interval must be a table ([interval]), got %s", typeName(v))
		return
	}
	d.unknownKeys("interval", m, []string{"quantile", "df", "zero_cells"})
	iv := &Interval{Quantile: QuantileNormal, ZeroCells: ZeroCellsNone}
	good := true
	switch q := d.str(m, "interval", "quantile", QuantileNormal); q {
	case QuantileNormal, QuantileT:
		iv.Quantile = q
	default:
		d.fail("interval.quantile", "quantile = %q is not accepted: use \"normal\" (the default) or \"t\" (Student's t, with df)", q)
		good = false
	}
	_, hasDF := m["df"]
	switch {
	case iv.Quantile == QuantileT && !hasDF && good:
		d.fail("interval", "quantile = \"t\" needs df, the degrees of freedom as an expression of n, e.g. df = \"n - 1\"")
		good = false
	case iv.Quantile == QuantileNormal && hasDF && good:
		d.fail("interval.df", "df applies only to quantile = \"t\"; remove it, or set quantile = \"t\"")
		good = false
	case hasDF:
		iv.DF = d.str(m, "interval", "df", "")
		if _, isStr := m["df"].(string); !isStr {
			good = false // d.str said so
		} else if iv.DF == "" {
			d.fail("interval.df", "df is empty: give the degrees of freedom as an expression of n, e.g. df = \"n - 1\"")
			good = false
		}
	}
	switch z := d.str(m, "interval", "zero_cells", ZeroCellsNone); z {
	case ZeroCellsNone, ZeroCellsAddHalf:
		iv.ZeroCells = z
	default:
		d.fail("interval.zero_cells", "zero_cells = %q is not accepted: use \"none\" (the default) or \"add_half\" (add 0.5 to every cell when a count is 0 or equals its trials)", z)
		good = false
	}
	if !good {
		return
	}
	s.Interval = iv
	if len(s.Arms) == 0 {
		return
	}
	if iv.AddHalf() {
		found := false
		for _, a := range s.Arms {
			if _, ok := a.Model.Estimator.(family.HalfCorrector); ok {
				found = true
			}
		}
		if !found {
			d.fail("interval.zero_cells", "zero_cells = \"add_half\" corrects counts of bernoulli, binomial and poisson arms; this study has none")
		}
	}
	if iv.Quantile == QuantileT {
		prog, err := expr.Compile(iv.DF, s.SizeNames())
		if err != nil {
			d.fail("interval.df", "df, an expression of the sample sizes only: %v", err)
			return
		}
		s.dfProgram = prog
		for _, n := range s.checkSizes() {
			sizes := make([]int, len(s.Arms))
			for a := range s.Arms {
				sizes[a] = s.ArmSize(a, n)
			}
			x := make([]float64, prog.Dim())
			SetSizes(x, n, sizes, s.namedArms())
			if df := prog.NewEvaluator().Value(x); !(df > 0 && df <= math.MaxFloat64) {
				d.fail("interval.df", "df = %q is %v at n = %d: the degrees of freedom must be finite and positive at every n studied", iv.DF, df, n)
				return
			}
		}
	}
}

// transformTest decodes a transform's se and null keys into t.
func (d *decoder) transformTest(table string, m map[string]any, s *Study, t *Transform) bool {
	ok := true
	if v, given := d.number(m, table, "null"); given {
		t.Null = &v
	} else if _, present := m["null"]; present {
		ok = false
	}
	if _, given := m["se"]; !given {
		return ok
	}
	src := d.str(m, table, "se", "")
	if _, isStr := m["se"].(string); !isStr {
		return false // d.str said so
	}
	if src == "" {
		d.fail(join(table, "se"), "transform %q: se is empty: give the analyst's standard error as an expression of the parameters and n, e.g. se = \"1 / sqrt(n - 3)\"", t.Name)
		return false
	}
	names := append(s.ParamNames(), s.SizeNames()...)
	prog, err := expr.Compile(src, names)
	if err != nil {
		d.fail(join(table, "se"), "transform %q: se: %v", t.Name, err)
		return false
	}
	t.SE, t.SEProgram = src, prog
	x := make([]float64, prog.Dim())
	theta := s.Truth()
	copy(x, theta)
	for _, n := range s.checkSizes() {
		sizes := make([]int, len(s.Arms))
		for a := range s.Arms {
			sizes[a] = s.ArmSize(a, n)
		}
		SetSizes(x[len(theta):], n, sizes, s.namedArms())
		if se := prog.NewEvaluator().Value(x); !(se > 0 && se <= math.MaxFloat64) {
			d.fail(join(table, "se"), "transform %q: se = %q is %v at the true parameters (%s) and n = %d: the standard error must be finite and positive there", t.Name, src, se, truthText(s, theta), n)
			return false
		}
	}
	return ok
}

// sizeInExpr refuses an expr that names a size: τ must not depend on n.
func sizeInExpr(s *Study, src string) error {
	names := s.ParamNames()
	prog, err := expr.Compile(src, append(names, s.SizeNames()...))
	if err != nil {
		return nil // the ordinary compile reports it
	}
	var used []string
	for i, name := range s.SizeNames() {
		if prog.Uses(len(names) + i) {
			used = append(used, name)
		}
	}
	if len(used) == 0 {
		return nil
	}
	return fmt.Errorf("expr uses %s, a sample size; the estimand must not depend on n (se and df may use it)", strings.Join(used, ", "))
}
