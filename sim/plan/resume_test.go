package plan

import (
	"context"
	"encoding/json"
	"errors"
	"path/filepath"
	"testing"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study/studytest"
)

const resumeStudy = `seed = 11
[plan]
n_min = 5
n_max = 80
max_replicates = 6000
batch = 2000
[model]
family = "bernoulli"
p = 0.3
[[transform]]
name = "logit"
expr = "logit(p)"
[[transform]]
name = "p"
expr = "p"
`

// comparable is r as JSON without what differs between sessions: the
// build, the workers and the times.
func comparable(t *testing.T, r *Result) string {
	t.Helper()
	c := *r
	c.Tool, c.Build, c.Workers, c.Elapsed, c.Finished = "", runner.Build{}, 0, 0, ""
	b, err := json.Marshal(&c)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// A plan stopped at any point, saved, loaded and resumed ends as the
// uninterrupted plan does, interrupted again or not.
func TestResumeEndsAsUninterrupted(t *testing.T) {
	ctx := context.Background()
	cases := []struct {
		name   string
		budget int64
		stops  []int // cancel at these progress reports, counted over sessions
		// midGrow: the first stop falls between the blocks of a batch,
		// which one worker runs one after another.
		midGrow bool
	}{
		{"first report", 0, []int{1}, false},
		{"between blocks of a batch", 0, []int{2}, true},
		{"early", 0, []int{4}, false},
		{"middle", 0, []int{15}, false},
		{"twice", 0, []int{6, 20}, false},
		{"late", 0, []int{40}, false},
		{"budget", 30000, []int{9}, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := studytest.Parse(t, resumeStudy)
			whole, err := Run(ctx, s, c.budget, runner.Options{Workers: 2})
			if err != nil {
				t.Fatal(err)
			}
			want := comparable(t, whole)

			reports, interrupted := 0, 0
			var res *Result
			path := filepath.Join(t.TempDir(), File)
			for session := 0; ; session++ {
				cctx, cancel := context.WithCancel(ctx)
				cfg := Config{Budget: c.budget, Options: runner.Options{Workers: 1}, Progress: func(Progress) {
					reports++
					for _, k := range c.stops {
						if reports == k {
							cancel()
						}
					}
				}}
				if session == 0 {
					res, err = RunConfig(cctx, studytest.Parse(t, resumeStudy), cfg)
				} else {
					prev, lerr := Load(path)
					if lerr != nil {
						t.Fatal(lerr)
					}
					rs, serr := ResumeStudy(prev)
					if serr != nil {
						t.Fatal(serr)
					}
					res, err = Resume(cctx, rs, prev, cfg)
				}
				cancel()
				if err == nil {
					break
				}
				if !errors.Is(err, context.Canceled) || !res.Incomplete {
					t.Fatalf("session %d: %v, incomplete %v", session, err, res.Incomplete)
				}
				interrupted++
				if c.midGrow && interrupted == 1 && !partialBatch(res) {
					t.Errorf("the stop did not fall within a batch: %d replicates held", res.Total)
				}
				if err := Save(path, res); err != nil {
					t.Fatal(err)
				}
				if session > len(c.stops) {
					t.Fatal("more interruptions than asked for")
				}
			}
			if interrupted != len(c.stops) {
				t.Fatalf("interrupted %d times, want %d (the plan made %d reports)", interrupted, len(c.stops), reports)
			}
			if res.Incomplete || res.Cache != nil {
				t.Errorf("a finished plan keeps its resume state")
			}
			if got := comparable(t, res); got != want {
				t.Errorf("resumed plan differs from the uninterrupted one:\n got %s\nwant %s", got, want)
			}
		})
	}
}

// Resuming a complete plan returns it unchanged.
func TestResumeCompleteIsUnchanged(t *testing.T) {
	s := studytest.Parse(t, resumeStudy)
	whole, err := Run(context.Background(), s, 0, runner.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	want := comparable(t, whole)
	again, err := Resume(context.Background(), s, whole, Config{Progress: func(Progress) { t.Error("a complete plan simulated again") }})
	if err != nil {
		t.Fatal(err)
	}
	if got := comparable(t, again); got != want {
		t.Errorf("resuming a complete plan changed it")
	}
}

// partialBatch reports whether r holds a cell stopped within a batch.
func partialBatch(r *Result) bool {
	for _, res := range r.Cache {
		if res.Cells[0][0].Replicates%int64(r.Spec.Batch) != 0 {
			return true
		}
	}
	return false
}
