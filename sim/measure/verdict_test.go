package measure

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"deltaprobe/sim/study"
)

// verdictRows builds rows at ns whose overall verdict, and every check's,
// is the given one.
func verdictRows(ns []int, vs string) []Row {
	var rows []Row
	for i, n := range ns {
		r := NewRow("t", n)
		v := map[byte]Verdict{'p': Pass, 'f': Fail, 'u': Unclear}[vs[i]]
		r.Verdict = v
		for c := range r.Checks {
			r.Checks[c].Verdict = v
		}
		rows = append(rows, r)
	}
	return rows
}

// The bounds follow only decided verdicts (the rule stated in README and
// on TransformVerdict); cases worked by hand.
func TestConcludeBounds(t *testing.T) {
	ns := []int{5, 10, 20, 40, 80}
	cases := []struct {
		verdicts  string
		low, high int
		status    Status
	}{
		{"ppppp", 5, 5, Adequate},
		{"ffppp", 20, 20, Adequate},
		{"fupup", 10, 80, StatusUnclear},
		{"fufpu", 40, 0, StatusUnclear},
		{"ffpuf", 0, 0, NotReached},
		{"uuuuu", 5, 0, StatusUnclear},
		{"pfppp", 20, 20, Adequate},
	}
	for _, c := range cases {
		tv := Conclude(verdictRows(ns, c.verdicts), Answer{Lowest: ns[0]})
		if tv.Low != c.low || tv.High != c.high || tv.Status != c.status {
			t.Errorf("%s: bounds %d–%d %s, want %d–%d %s", c.verdicts, tv.Low, tv.High, tv.Status, c.low, c.high, c.status)
		}
		if want := 0; c.status == Adequate && tv.SmallestN != c.low || c.status != Adequate && tv.SmallestN != want {
			t.Errorf("%s: smallest_n %d", c.verdicts, tv.SmallestN)
		}
		if c.status == StatusUnclear && len(tv.Undecided) == 0 {
			t.Errorf("%s: unclear without the undecided n", c.verdicts)
		}
	}
}

// Bonferroni over sample sizes × criteria: each decision's interval is at
// quantile Φ⁻¹(1 − α/(2K)), checked against gonum's normal quantile.
func TestGridDecisions(t *testing.T) {
	for _, c := range []struct {
		conf float64
		ns   int
	}{{0.95, 6}, {0.99, 1}, {0.5, 12}} {
		info := study.Info{SampleSizes: make([]int, c.ns), Criteria: study.Criteria{Confidence: c.conf}}
		d := GridDecisions(info)
		k := c.ns * 3 // the default decide: coverage, var_ratio, std_bias
		want := distuv.UnitNormal.Quantile(1 - (1-c.conf)/float64(2*k))
		if d.Count != k || math.Abs(d.Z-want) > 1e-9 {
			t.Errorf("confidence %v, %d sizes: K = %d, z = %v; want %d, %v", c.conf, c.ns, d.Count, d.Z, k, want)
		}
	}
	// A result saved before the key existed decides at the default.
	if d := GridDecisions(study.Info{SampleSizes: []int{5}}); d.Confidence != study.DefaultConfidence {
		t.Errorf("default confidence %v", d.Confidence)
	}
}
