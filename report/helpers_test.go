package report

import (
	"bytes"
	"os"
	"path/filepath"
	"sync"
	"testing"
)

// The tests read stored results (see stored_test.go): these are the
// cases they go over.

// runCase names a stored run by what the tests need of it.
type runCase struct {
	name string
	dir  string // in testdata; see storedRuns
}

// runCases are the runs every figure and page test goes over.
var runCases = []runCase{
	{"three transforms", "run-small"},
	{"heavy tails, many n", "run-heavy"},
	{"one n", "run-one-n"},
	{"stated interval and test", "run-tested"},
}

// planCase names a stored plan by what the tests need of it.
type planCase struct {
	name string
	dir  string // in testdata; see storedPlans
}

// planCases are the plans every figure and page test goes over. The
// budget of the last was far below what its search needs, so the cap was
// hit.
var planCases = []planCase{
	{"two transforms, bracketed", "plan-small"},
	{"not reached", "plan-not-reached"},
	{"binary arms", "plan-binary-arms"},
	{"budget exhausted", "plan-budget"},
	{"bracket closes", "plan-adequate"},
	{"power decides", "plan-power"},
}

// once holds what a test binary computes once per key.
type once[K comparable, V any] struct {
	mu   sync.Mutex
	done map[K]V
}

// get returns what compute gave for key, calling it the first time only.
func (o *once[K, V]) get(key K, compute func() V) V {
	o.mu.Lock()
	defer o.mu.Unlock()
	if v, ok := o.done[key]; ok {
		return v
	}
	if o.done == nil {
		o.done = map[K]V{}
	}
	v := compute()
	o.done[key] = v
	return v
}

var runFigures, planFigures once[string, []Figure]

// storedFigures returns the figures of the run stored in testdata/dir,
// rendered once per test binary: rendering, not loading, is what the
// report's tests spend their time on, so a test that needs figures only as
// input takes these.
func storedFigures(t testing.TB, dir string) []Figure {
	t.Helper()
	return runFigures.get(dir, func() []Figure {
		figs, err := Figures(storedRun(t, dir))
		if err != nil {
			t.Fatalf("%s: %v", dir, err)
		}
		return figs
	})
}

// storedPlanFigures returns the figures of the plan stored in
// testdata/dir, rendered once per test binary.
func storedPlanFigures(t testing.TB, dir string) []Figure {
	t.Helper()
	return planFigures.get(dir, func() []Figure {
		_, p := storedPlan(t, dir)
		figs, err := PlanFigures(p)
		if err != nil {
			t.Fatalf("%s: %v", dir, err)
		}
		return figs
	})
}

// sameFiles checks that each figure was written into dir with the same
// bytes as figs holds: a second rendering of the same input.
func sameFiles(t *testing.T, dir string, figs []Figure) {
	t.Helper()
	for _, fig := range figs {
		for _, f := range fig.Files {
			b, err := os.ReadFile(filepath.Join(dir, f.Name))
			if err != nil {
				t.Error(err)
				continue
			}
			if !bytes.Equal(b, f.Data) {
				t.Errorf("%s as written differs from another rendering of the same input", f.Name)
			}
		}
	}
}

// renderTwice renders the same thing twice, failing the test on an error.
func renderTwice[T any](t *testing.T, render func() (T, error)) (T, T) {
	t.Helper()
	a, err := render()
	if err != nil {
		t.Fatal(err)
	}
	b, err := render()
	if err != nil {
		t.Fatal(err)
	}
	return a, b
}
