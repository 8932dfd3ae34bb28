package study_test

import (
	"slices"
	"testing"

	"deltaprobe/sim/study"
)

// n_total is the sum of the arm sizes, each ceil(n × allocation) by the
// runner's rule, worked out here by hand.
func TestInfoArmSizesAndTotal(t *testing.T) {
	arm := func(alloc float64) study.ArmInfo { return study.ArmInfo{Family: "normal", Allocation: alloc} }
	cases := []struct {
		name   string
		arms   []study.ArmInfo
		n      int
		sizes  []int
		total  int
		perArm bool
	}{
		{"one sample", []study.ArmInfo{arm(1)}, 40, []int{40}, 40, false},
		{"one allocated arm", []study.ArmInfo{arm(0.5)}, 15, []int{8}, 8, true}, // ceil(7.5) = 8
		{"1 and 1.5", []study.ArmInfo{arm(1), arm(1.5)}, 40, []int{40, 60}, 100, true},
		{"1 and 1.5, odd n", []study.ArmInfo{arm(1), arm(1.5)}, 5, []int{5, 8}, 13, true}, // ceil(7.5) = 8
		{"1.1 is exact", []study.ArmInfo{arm(1), arm(1.1)}, 100, []int{100, 110}, 210, true},
		{"two equal arms", []study.ArmInfo{arm(1), arm(1)}, 20, []int{20, 20}, 40, true},
	}
	for _, c := range cases {
		info := study.Info{Arms: c.arms}
		if got := info.ArmSizes(c.n); !slices.Equal(got, c.sizes) {
			t.Errorf("%s: ArmSizes(%d) = %v, want %v", c.name, c.n, got, c.sizes)
		}
		if got := info.Total(c.n); got != c.total {
			t.Errorf("%s: Total(%d) = %d, want %d", c.name, c.n, got, c.total)
		}
		if got := info.PerArm(); got != c.perArm {
			t.Errorf("%s: PerArm() = %v, want %v", c.name, got, c.perArm)
		}
	}
}
