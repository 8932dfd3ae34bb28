package report

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"testing"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// The report's tests do not simulate: they read results that sim made
// of small studies and that are stored in testdata, one folder each, the
// study as study.toml beside its result.json or plan.json. What they
// check is the report made from that stored data; whether the stored data
// is still what sim makes is TestStoredResultsAreCurrent's business.

var update = flag.Bool("update", false, "re-run the stored studies in testdata and rewrite their result.json and plan.json")

// storedRuns are the folders in testdata holding a run's result.json.
var storedRuns = []string{
	"run-small",    // three transforms, three n: names that meet once made safe, undefined replicates, one adequate at no n
	"run-heavy",    // heavy tails over more n than the shapes figure shows
	"run-one-n",    // a single sample size
	"run-tested",   // a t interval, the analyst's se and a null, decided by coverage and power
	"run-censored", // two arms of censored lifetimes, one with entry and dropout
}

// storedPlans are the folders in testdata holding a plan's plan.json, and
// the budget each was planned with (0: none), which no study file holds.
var storedPlans = []struct {
	dir    string
	budget int64
}{
	{"plan-small", 0},
	{"plan-not-reached", 0},
	{"plan-binary-arms", 0},
	{"plan-budget", 15000},
	{"plan-adequate", 0},
	{"plan-power", 0},
}

// maxStoredSize bounds each stored file: they are test data, and fewer
// replicates or sample sizes serve the tests as well.
const maxStoredSize = 1 << 20

// storedStudy parses testdata/dir/study.toml.
func storedStudy(t testing.TB, dir string) *study.Study {
	t.Helper()
	s, err := study.Load(filepath.Join("testdata", dir, "study.toml"))
	if err != nil {
		t.Fatalf("stored study: %v", err)
	}
	return s
}

var runs once[string, *runner.Result]

// storedRun returns the result stored in testdata/dir, loaded once per
// test binary; callers must not change it.
func storedRun(t testing.TB, dir string) *runner.Result {
	t.Helper()
	return runs.get(dir, func() *runner.Result {
		r, err := runner.LoadResult(filepath.Join("testdata", dir, "result.json"))
		if err != nil {
			t.Fatalf("stored result: %v (regenerate with go test ./report/ -run TestStoredResultsAreCurrent -update)", err)
		}
		if s := storedStudy(t, dir); r.Study.Source != string(s.Source) {
			t.Fatalf("testdata/%s/result.json was not made from the study.toml beside it; regenerate with go test ./report/ -run TestStoredResultsAreCurrent -update", dir)
		}
		return r
	})
}

type storedPlanned struct {
	s *study.Study
	p *plan.Result
}

var plans once[string, storedPlanned]

// storedPlan returns the study in testdata/dir and the plan stored beside
// it, loaded once per test binary; callers must not change them.
func storedPlan(t testing.TB, dir string) (*study.Study, *plan.Result) {
	t.Helper()
	sp := plans.get(dir, func() storedPlanned {
		p, err := plan.Load(filepath.Join("testdata", dir, plan.File))
		if err != nil {
			t.Fatalf("stored plan: %v (regenerate with go test ./report/ -run TestStoredResultsAreCurrent -update)", err)
		}
		s := storedStudy(t, dir)
		if p.Study.Source != string(s.Source) {
			t.Fatalf("testdata/%s/%s was not made from the study.toml beside it; regenerate with go test ./report/ -run TestStoredResultsAreCurrent -update", dir, plan.File)
		}
		return storedPlanned{s, p}
	})
	return sp.s, sp.p
}

// TestStoredResultsAreCurrent keeps the stored results honest: each must
// be what sim makes of its study.toml today. With -update it re-runs every
// stored study and rewrites its result.json or plan.json:
//
//	go test ./report/ -run TestStoredResultsAreCurrent -update
//
// Without it, it checks that each stored file loads (runner.LoadResult,
// plan.Load), stays small, and that re-running its study gives the same
// summary rows and the same saved state, apart from the version, build, workers,
// time and date of the run. The studies are small, so this is cheap.
func TestStoredResultsAreCurrent(t *testing.T) {
	ctx := context.Background()
	opt := runner.Options{Workers: 2}
	for _, dir := range storedRuns {
		t.Run(dir, func(t *testing.T) {
			fresh, err := runner.Run(ctx, storedStudy(t, dir), opt)
			if err != nil {
				t.Fatal(err)
			}
			path := filepath.Join("testdata", dir, "result.json")
			if *update {
				if err := runner.SaveResult(path, fresh); err != nil {
					t.Fatal(err)
				}
				checkStoredSize(t, path)
				return
			}
			checkStoredSize(t, path)
			stored, err := runner.LoadResult(path)
			if err != nil {
				t.Fatal(err)
			}
			sameRows(t, measure.Summarize(stored), measure.Summarize(fresh))
			fresh.Tool, fresh.Build, fresh.Workers, fresh.Elapsed, fresh.Finished = stored.Tool, stored.Build, stored.Workers, stored.Elapsed, stored.Finished
			sameState(t, path, stored, fresh)
		})
	}
	for _, c := range storedPlans {
		t.Run(c.dir, func(t *testing.T) {
			fresh, err := plan.Run(ctx, storedStudy(t, c.dir), c.budget, opt)
			if err != nil {
				t.Fatal(err)
			}
			path := filepath.Join("testdata", c.dir, plan.File)
			if *update {
				if err := plan.Save(path, fresh); err != nil {
					t.Fatal(err)
				}
				checkStoredSize(t, path)
				return
			}
			checkStoredSize(t, path)
			stored, err := plan.Load(path)
			if err != nil {
				t.Fatal(err)
			}
			sameRows(t, stepRows(stored.Steps), stepRows(fresh.Steps))
			fresh.Tool, fresh.Build, fresh.Workers, fresh.Elapsed, fresh.Finished = stored.Tool, stored.Build, stored.Workers, stored.Elapsed, stored.Finished
			sameState(t, path, stored, fresh)
		})
	}
}

func checkStoredSize(t *testing.T, path string) {
	t.Helper()
	st, err := os.Stat(path)
	if err != nil {
		t.Fatalf("%v (regenerate with -update)", err)
	}
	t.Logf("%s: %d bytes", path, st.Size())
	if st.Size() > maxStoredSize {
		t.Errorf("%s is %d bytes, more than the %d a stored result may take; use fewer replicates or sample sizes", path, st.Size(), maxStoredSize)
	}
}

// stepRows are the rows of a plan's evaluations, in order.
func stepRows(steps []plan.Step) []measure.Row {
	rows := make([]measure.Row, len(steps))
	for i, st := range steps {
		rows[i] = st.Row
	}
	return rows
}

// sameRows compares summary rows bit for bit, through their saved form,
// which keeps every value (NaN and infinities included).
func sameRows(t *testing.T, stored, fresh []measure.Row) {
	t.Helper()
	if len(stored) != len(fresh) {
		t.Fatalf("stored data has %d summary rows, a re-run %d; regenerate with -update", len(stored), len(fresh))
	}
	for i := range stored {
		a, b := mustJSON(t, stored[i]), mustJSON(t, fresh[i])
		if !bytes.Equal(a, b) {
			t.Errorf("%s at n = %d: stored row differs from a re-run; regenerate with -update\nstored:  %s\nre-run:  %s", stored[i].Transform, stored[i].N, a, b)
		}
	}
}

// sameState compares two saved states through their JSON.
func sameState(t *testing.T, path string, stored, fresh any) {
	t.Helper()
	if !bytes.Equal(mustJSON(t, stored), mustJSON(t, fresh)) {
		t.Errorf("%s differs from a re-run of its study; regenerate with -update", path)
	}
}

func mustJSON(t *testing.T, v any) []byte {
	t.Helper()
	b, err := json.Marshal(v)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// The stored runs must be what storedRuns says of them, or the tests that
// read them do not test what they claim to.
func TestStoredRunsAreWhatTheySay(t *testing.T) {
	t.Run("run-small", func(t *testing.T) {
		r := storedRun(t, "run-small")
		names := make([]string, len(r.Study.Transforms))
		for i, tr := range r.Study.Transforms {
			names[i] = tr.Name
		}
		if stems := SafeNames(names); len(stems) < 2 || stems[1] != stems[0]+"-2" {
			t.Errorf("names %q made safe are %q: want the first two to meet", names, stems)
		}
		rows := measure.Summarize(r)
		vs := measure.Verdicts(rows)
		ns := r.Study.SampleSizes
		// The smallest n fails for sure, so the answer's lower bound lies
		// above it, whether or not the replicates decide the answer.
		if v := vs[0]; v.Low <= ns[0] || v.Status == measure.NotReached {
			t.Errorf("%s: %s, bounds %d–%d, want an answer bounded above %d", v.Transform, v.Status, v.Low, v.High, ns[0])
		}
		last := len(vs) - 1
		if v := vs[last]; v.Status != measure.NotReached {
			t.Errorf("%s: %s, want adequate at no n", v.Transform, v.Status)
		}
		for ni, n := range ns {
			if c := r.Cells[last][ni]; c.Undefined == 0 {
				t.Errorf("%s at n = %d: no undefined replicates", vs[last].Transform, n)
			}
		}
	})
	t.Run("run-heavy", func(t *testing.T) {
		r := storedRun(t, "run-heavy")
		if len(r.Study.SampleSizes) <= maxShapes {
			t.Errorf("%d sample sizes, want more than the %d the shapes figure shows", len(r.Study.SampleSizes), maxShapes)
		}
		var outside int64
		for _, c := range r.Cells[0] {
			outside += c.Delta.Below + c.Delta.Above
		}
		if outside == 0 {
			t.Error("no pivot beyond the histogram's range")
		}
		// The delta-method variance falls far short of the simulated one.
		worst := 1.0
		for _, row := range measure.Summarize(r) {
			worst = min(worst, row.Get(measure.VarRatio))
		}
		if worst > 0.1 {
			t.Errorf("smallest %s %g, want one far below 1 (under 0.1)", measure.VarRatio.Name, worst)
		}
	})
	t.Run("run-one-n", func(t *testing.T) {
		if r := storedRun(t, "run-one-n"); len(r.Study.SampleSizes) != 1 {
			t.Errorf("%d sample sizes, want 1", len(r.Study.SampleSizes))
		}
	})
}
