package study_test

import (
	"encoding/json"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"deltaprobe/sim/study"
	"deltaprobe/sim/study/studytest"
)

// The quantile at n: Student's t with the df expression evaluated at the
// arm sizes (gonum's distuv.StudentsT), the same from the study and from
// its saved description after a JSON round trip, and the normal quantile
// without [interval] (gonum's distuv.UnitNormal).
func TestQuantileAtN(t *testing.T) {
	s := studytest.Parse(t, `seed = 1
sample_sizes = [4, 10]
[[arm]]
name = "a"
family = "normal"
mean = 1
sd = 1
[[arm]]
name = "b"
family = "normal"
mean = 2
sd = 1
allocation = 1.5
[interval]
quantile = "t"
df = "a.n + b.n - 2"
[[transform]]
name = "d"
expr = "b.mean - a.mean"
se = "sqrt(a.sd^2 / (a.n - 1) + b.sd^2 / (b.n - 1))"
null = 0.5
`)
	raw, err := json.Marshal(s.Info())
	if err != nil {
		t.Fatal(err)
	}
	var info study.Info
	if err := json.Unmarshal(raw, &info); err != nil {
		t.Fatal(err)
	}
	for _, n := range []int{4, 10} {
		// Arm sizes ceil(n × allocation): 4 and 6 at n = 4, 10 and 15 at n = 10.
		df := float64(n + int(math.Ceil(1.5*float64(n))) - 2)
		want := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(0.975)
		if got := s.Quantile(n); math.Abs(got-want) > 1e-12 {
			t.Errorf("n = %d: quantile %v, want t(%v) %v", n, got, df, want)
		}
		if got := info.Quantile(n); math.Abs(got-want) > 1e-12 {
			t.Errorf("n = %d: saved study's quantile %v, want %v", n, got, want)
		}
	}
	if info.Transforms[0].Null == nil || *info.Transforms[0].Null != 0.5 || info.Transforms[0].SE == "" {
		t.Errorf("saved transform %+v lost its se or null", info.Transforms[0])
	}
	plain := studytest.Parse(t, `seed = 1
sample_sizes = [4]
[model]
family = "normal"
mean = 1
sd = 1
[[transform]]
name = "m"
expr = "mean"
`)
	if got, want := plain.Quantile(4), distuv.UnitNormal.Quantile(0.975); math.Abs(got-want) > 1e-12 {
		t.Errorf("normal quantile %v, want %v", got, want)
	}
	if plain.Info().Interval != nil {
		t.Error("a study without [interval] records one")
	}
}
