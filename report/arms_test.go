package report

import (
	"strings"
	"testing"

	"deltaprobe/sim/study"
)

// What each view says of n: a one-sample study n alone, a study with
// several arms or an allocation the arm sizes and the total as well.
func TestArmSizeTexts(t *testing.T) {
	twoArms := study.Info{SampleSizes: []int{5, 40}, Arms: []study.ArmInfo{
		{Name: "control", Family: "normal", Allocation: 1},
		{Name: "treated", Family: "normal", Allocation: 1.5},
	}}
	oneAllocated := study.Info{SampleSizes: []int{15}, Arms: []study.ArmInfo{{Family: "normal", Allocation: 0.5}}}
	oneSample := study.Info{SampleSizes: []int{5, 40}, Arms: []study.ArmInfo{{Family: "normal", Allocation: 1}}}
	cases := []struct {
		name      string
		st        study.Info
		n         int
		note      string // the terminal's and the trends subtitle's
		shape     string // a shapes panel's title
		label     string // the trends x axis
		glanceHas string // in the page's study at a glance; "" for no line
	}{
		{
			// 5 × 1.5 = 7.5, rounded up to 8; 5 + 8 = 13. 40 + 60 = 100.
			name: "two arms", st: twoArms, n: 5,
			note:      "n is the base size of each arm: at n = 5, control 5, treated 8, total 13.",
			shape:     "n = 5 (N = 13)",
			label:     "base sample size n per arm (log scale)",
			glanceHas: "at n = 5, control 5, treated 8, total 13; at n = 40, control 40, treated 60, total 100.",
		},
		{
			// 15 × 0.5 = 7.5, rounded up to 8.
			name: "one allocated sample", st: oneAllocated, n: 15,
			note:      "n is the base size of each arm: at n = 15, sample 8, total 8.",
			shape:     "n = 15 (N = 8)",
			label:     "base sample size n per arm (log scale)",
			glanceHas: "at n = 15, sample 8, total 8.",
		},
		{
			name: "one sample", st: oneSample, n: 40,
			shape: "n = 40",
			label: "sample size n (log scale)",
		},
	}
	for _, c := range cases {
		if got := armSizesNote(c.st, c.n); got != c.note {
			t.Errorf("%s: note %q, want %q", c.name, got, c.note)
		}
		if got := shapeTitle(c.st, c.n); got != c.shape {
			t.Errorf("%s: shapes title %q, want %q", c.name, got, c.shape)
		}
		if got := sampleSizeLabel(c.st); got != c.label {
			t.Errorf("%s: x label %q, want %q", c.name, got, c.label)
		}
		glance := armSizesGlance(c.st, c.st.SampleSizes)
		switch {
		case c.glanceHas == "" && glance != nil:
			t.Errorf("%s: a glance line %q for a one-sample study", c.name, glance)
		case c.glanceHas != "" && (len(glance) != 1 || !strings.HasSuffix(glance[0].Value, c.glanceHas)):
			t.Errorf("%s: glance %q, want one line ending %q", c.name, glance, c.glanceHas)
		}
	}
}

// The note on the arm sizes shows the smallest adequate n when there is
// one, else the largest n of the grid.
func TestExampleN(t *testing.T) {
	st := study.Info{SampleSizes: []int{5, 20, 80}}
	for _, c := range []struct{ smallest, want int }{{20, 20}, {0, 80}} {
		if got := exampleN(st, c.smallest); got != c.want {
			t.Errorf("exampleN(smallest %d) = %d, want %d", c.smallest, got, c.want)
		}
	}
}
