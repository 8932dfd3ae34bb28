package study

import (
	"slices"
	"testing"
)

func TestPlanGrid(t *testing.T) {
	cases := []struct {
		min, max int
		want     []int
	}{
		{5, 60, []int{5, 10, 20, 40, 60}},
		{5, 40, []int{5, 10, 20, 40}},
		{2, 3, []int{2, 3}},
		{10, 11, []int{10, 11}},
	}
	for _, c := range cases {
		p := PlanSpec{NMin: c.min, NMax: c.max}
		if got := p.Grid(); !slices.Equal(got, c.want) {
			t.Errorf("n_min %d, n_max %d: grid %v, want %v", c.min, c.max, got, c.want)
		}
	}
}
