package main

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// planStudy is a small plan: a search over a short range of n with few
// replicates, a second or so.
const planStudy = `# An inspection line counts surface defects on painted panels; counts
# are Poisson with 2.5 defects a panel. The line quotes the defect rate
# and its log, each with a delta-method Wald interval, and plans how many
# panels to inspect.
title = "Defects per panel"
seed = 2027

[plan]
n_min = 5
n_max = 60
max_replicates = 2000
batch = 1000

[model]
family = "poisson"
mean = 2.5

[[transform]]
name = "rate"
expr = "mean"

[[transform]]
name = "log rate"
expr = "log(mean)"
`

// planFiles are what plan writes for planStudy: its saved state, the two
// tables, the page and one figure per transform.
var planFiles = []string{"index.html", "log_rate-plan.png", "plan.csv", "plan.json", "rate-plan.png", "verdicts.csv"}

func readDir(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	files := map[string][]byte{}
	for _, e := range entries {
		files[e.Name()] = readFile(t, filepath.Join(dir, e.Name()))
	}
	return files
}

func names(files map[string][]byte) []string {
	var out []string
	for name := range files {
		out = append(out, name)
	}
	slices.Sort(out)
	return out
}

// plan writes its folder and prints its table (golden files); report DIR
// then rebuilds the tables, figures and page from plan.json alone, byte
// for byte, and prints the same table.
func TestPlanThenReport(t *testing.T) {
	study := writeStudy(t, planStudy)
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runCLI(t, "plan", study, "-o", out, "-quiet", "-workers", "2")
	if code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	golden(t, "testdata/plan.stdout", []byte(stdout))
	before := readDir(t, out)
	if got := names(before); !slices.Equal(got, planFiles) {
		t.Fatalf("plan wrote %q, want %q", got, planFiles)
	}
	for _, name := range []string{"plan.csv", "verdicts.csv"} {
		golden(t, filepath.Join("testdata", "plan."+name), before[name])
	}

	for _, name := range planFiles {
		if name != "plan.json" {
			if err := os.Remove(filepath.Join(out, name)); err != nil {
				t.Fatal(err)
			}
		}
	}
	code, again, stderr := runCLI(t, "report", out)
	if code != exitOK {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	if again != stdout {
		t.Errorf("report printed\n%s\nplan printed\n%s", again, stdout)
	}
	after := readDir(t, out)
	if got := names(after); !slices.Equal(got, planFiles) {
		t.Fatalf("report left %q, want %q", got, planFiles)
	}
	for _, name := range planFiles {
		if !bytes.Equal(after[name], before[name]) {
			t.Errorf("%s from plan.json differs from the plan's", name)
		}
	}
}

// report refuses, with status 2 and a message naming the problem, a
// folder with nothing to report from and a plan.json that is not as plan
// saved it; it writes nothing there.
func TestReportRefuses(t *testing.T) {
	study := writeStudy(t, planStudy)
	planned := filepath.Join(t.TempDir(), "planned")
	if code, _, stderr := runCLI(t, "plan", study, "-o", planned, "-quiet", "-workers", "2"); code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	saved := readFile(t, filepath.Join(planned, "plan.json"))
	edit := func(from, to string) []byte {
		if !bytes.Contains(saved, []byte(from)) {
			t.Fatalf("plan.json does not hold %q", from)
		}
		return bytes.Replace(saved, []byte(from), []byte(to), 1)
	}
	tests := []struct {
		name     string
		planJSON []byte // nil: no plan.json
		want     []string
	}{
		{"neither result.json nor plan.json", nil, []string{"holds neither result.json", "nor plan.json"}},
		{"study text edited", edit("seed = 2027", "seed = 2028"), []string{"plan.json has been edited", "does not match its SHA-256"}},
		{"another layout", edit(`"layout": 2,`, `"layout": 1,`), []string{"plan.json has plan layout 1", "reads layout 2 only"}},
		{"cut short", saved[:len(saved)/2], []string{"plan.json is not a valid plan file"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			if tc.planJSON != nil {
				if err := os.WriteFile(filepath.Join(dir, "plan.json"), tc.planJSON, 0o644); err != nil {
					t.Fatal(err)
				}
			}
			code, stdout, stderr := runCLI(t, "report", dir)
			if code != exitUsage {
				t.Errorf("exit %d, want %d; stderr: %s", code, exitUsage, stderr)
			}
			if stdout != "" {
				t.Errorf("stdout not empty: %q", stdout)
			}
			for _, w := range tc.want {
				if !strings.Contains(stderr, w) {
					t.Errorf("stderr %q does not say %q", stderr, w)
				}
			}
			if got := names(readDir(t, dir)); len(got) > 1 || len(got) == 1 && got[0] != "plan.json" {
				t.Errorf("report wrote %q into a folder it refused", got)
			}
		})
	}
}

// plan checks -seed as run does, after parsing.
func TestPlanSeedOutOfRange(t *testing.T) {
	study := writeStudy(t, planStudy)
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runCLI(t, "plan", study, "-seed", "-3", "-o", out, "-quiet")
	if code != exitUsage || stdout != "" {
		t.Errorf("exit %d, stdout %q; want %d and nothing", code, stdout, exitUsage)
	}
	if want := "deltaprobe plan: -seed -3 is out of range: accepted are whole numbers ≥ 0\n"; stderr != want {
		t.Errorf("stderr %q, want %q", stderr, want)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("plan created its output folder after refusing -seed")
	}
}
