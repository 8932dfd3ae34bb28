package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// interruptPlan runs plan in a child process that sends itself SIGINT at
// its k-th progress report (see sigintAt), and returns its exit status
// and stderr.
func interruptPlan(t *testing.T, k int, args ...string) (int, string) {
	t.Helper()
	cmd := command(args...)
	cmd.Env = append(cmd.Env, fmt.Sprintf("DELTAPROBE_PLAN_SIGINT_AT=%d", k))
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	cmd.Run()
	return cmd.ProcessState.ExitCode(), stderr.String()
}

// SIGINT at any point of a plan saves it and exits 130; plan -resume, once
// or after another interruption, ends with the tables of an uninterrupted
// plan byte for byte.
func TestPlanInterruptAndResume(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs child processes")
	}
	// Batches of two blocks, which one worker runs one after the other,
	// so the second report falls between the blocks of a batch.
	twoBlocks := strings.Replace(planStudy, "max_replicates = 2000\nbatch = 1000", "max_replicates = 4000\nbatch = 2000", 1)
	if twoBlocks == planStudy {
		t.Fatal("the study of two-block batches is the same study")
	}
	cases := []struct {
		name  string
		src   string
		first int   // the report of the first session to interrupt at
		again []int // reports of resumed sessions to interrupt at
	}{
		{"at the first report", planStudy, 1, nil},
		{"between evaluations", planStudy, 3, nil},
		{"later", planStudy, 12, nil},
		{"twice", planStudy, 5, []int{4}},
		{"within a batch", twoBlocks, 2, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			study := writeStudy(t, c.src)
			whole := filepath.Join(t.TempDir(), "whole")
			if code, _, stderr := runCLI(t, "plan", study, "-o", whole, "-quiet"); code != exitOK {
				t.Fatalf("uninterrupted plan: exit %d: %s", code, stderr)
			}
			part := filepath.Join(t.TempDir(), "part")
			code, stderr := interruptPlan(t, c.first, "plan", study, "-o", part, "-quiet", "-workers", "1")
			if code != exitInterrupted {
				t.Fatalf("interrupted plan: exit %d, want %d; stderr:\n%s", code, exitInterrupted, stderr)
			}
			if !strings.Contains(stderr, "plan -resume "+part) {
				t.Errorf("the interrupted plan does not say how to continue:\n%s", stderr)
			}
			if _, err := os.Stat(filepath.Join(part, "plan.csv")); err == nil {
				t.Errorf("an interrupted plan wrote plan.csv")
			}
			if code, _, stderr := runCLI(t, "report", part); code != exitUsage || !strings.Contains(stderr, "plan -resume") {
				t.Errorf("report of an interrupted plan: exit %d, stderr %q; want it refused, pointing to -resume", code, stderr)
			}
			for _, k := range c.again {
				if code, stderr := interruptPlan(t, k, "plan", "-resume", part, "-quiet", "-workers", "1"); code != exitInterrupted {
					t.Fatalf("interrupted resume: exit %d, want %d; stderr:\n%s", code, exitInterrupted, stderr)
				}
			}
			if code, _, stderr := runCLI(t, "plan", "-resume", part, "-quiet"); code != exitOK {
				t.Fatalf("resume: exit %d: %s", code, stderr)
			}
			for _, name := range []string{"plan.csv", "verdicts.csv"} {
				a := readFile(t, filepath.Join(whole, name))
				b := readFile(t, filepath.Join(part, name))
				if !bytes.Equal(a, b) {
					t.Errorf("%s after resume differs from the uninterrupted plan's", name)
				}
			}
		})
	}
}

// plan -resume refuses a study file other than the one the plan holds,
// naming both, and another flag of how the plan started.
func TestPlanResumeRefuses(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs child processes")
	}
	study := writeStudy(t, planStudy)
	part := filepath.Join(t.TempDir(), "part")
	if code, stderr := interruptPlan(t, 2, "plan", study, "-o", part, "-quiet"); code != exitInterrupted {
		t.Fatalf("interrupted plan: exit %d; stderr:\n%s", code, stderr)
	}
	other := filepath.Join(t.TempDir(), "other.toml")
	if err := os.WriteFile(other, []byte(strings.Replace(planStudy, "seed = 2027", "seed = 2028", 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name string
		args []string
		want []string
	}{
		{"another study", []string{"plan", "-resume", part, other}, []string{"cannot resume", study, other}},
		{"a new budget", []string{"plan", "-resume", part, "-budget", "100"}, []string{"takes no -o, -budget"}},
		{"a new seed", []string{"plan", "-resume", part, "-seed", "3"}, []string{"takes no -o, -budget"}},
		{"no plan", []string{"plan", "-resume", t.TempDir()}, []string{"cannot resume"}},
	}
	for _, c := range cases {
		code, _, stderr := runCLI(t, c.args...)
		if code != exitUsage {
			t.Errorf("%s: exit %d, want %d", c.name, code, exitUsage)
		}
		for _, w := range c.want {
			if !strings.Contains(stderr, w) {
				t.Errorf("%s: stderr %q does not name %q", c.name, stderr, w)
			}
		}
	}
	// The same study named beside -resume is accepted.
	if code, _, stderr := runCLI(t, "plan", "-resume", part, study, "-quiet"); code != exitOK {
		t.Errorf("resume naming its own study: exit %d: %s", code, stderr)
	}
}

// plan -resume of a complete plan simulates nothing, says so and leaves
// its tables as they were.
func TestPlanResumeComplete(t *testing.T) {
	t.Parallel()
	study := writeStudy(t, planStudy)
	dir := filepath.Join(t.TempDir(), "plan")
	if code, _, stderr := runCLI(t, "plan", study, "-o", dir, "-quiet"); code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	before := readDir(t, dir)
	code, stdout, stderr := runCLI(t, "plan", "-resume", dir)
	if code != exitOK || !strings.Contains(stderr, "already complete") || stdout == "" {
		t.Fatalf("resume of a complete plan: exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
	after := readDir(t, dir)
	for _, name := range []string{"plan.json", "plan.csv", "verdicts.csv"} {
		if !bytes.Equal(before[name], after[name]) {
			t.Errorf("%s changed on resuming a complete plan", name)
		}
	}
}

// plan shows where it is on one line of stderr, rewritten in place, and
// nothing of it with -quiet.
func TestPlanProgress(t *testing.T) {
	t.Parallel()
	study := writeStudy(t, planStudy)
	cases := []struct {
		quiet bool
		want  bool
	}{{false, true}, {true, false}}
	for _, c := range cases {
		args := []string{"plan", study, "-o", filepath.Join(t.TempDir(), "plan")}
		if c.quiet {
			args = append(args, "-quiet")
		}
		code, _, stderr := runCLI(t, args...)
		if code != exitOK {
			t.Fatalf("plan %v: exit %d: %s", args, code, stderr)
		}
		first := "\rplan: rate at n=5, 0 of at most 2000 replicates; 0 spent in all"
		if got := strings.Contains(stderr, first); got != c.want {
			t.Errorf("quiet %v: progress line shown %v, want %v; stderr:\n%q", c.quiet, got, c.want, stderr)
		}
	}
}
