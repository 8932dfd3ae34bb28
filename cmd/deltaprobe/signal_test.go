package main

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"deltaprobe/sim/plan"
	"deltaprobe/sim/runner"
	studypkg "deltaprobe/sim/study"
)

// TestMain lets the test binary act as the command, so the tests can
// signal a real child process without building anything.
func TestMain(m *testing.M) {
	if os.Getenv("DELTAPROBE_AS_COMMAND") == "1" {
		if k, err := strconv.Atoi(os.Getenv("DELTAPROBE_PLAN_SIGINT_AT")); err == nil {
			planHook = sigintAt(k)
		}
		os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// sigintAt returns a plan hook that, at the k-th progress report, sends
// the process SIGINT and waits until the command has seen it, so a plan
// is interrupted at the same point every time.
func sigintAt(k int) func(context.Context, plan.Progress) {
	reports := 0
	return func(ctx context.Context, _ plan.Progress) {
		reports++
		if reports == k {
			syscall.Kill(os.Getpid(), syscall.SIGINT)
			<-ctx.Done()
		}
	}
}

func command(args ...string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], args...)
	cmd.Env = append(os.Environ(), "DELTAPROBE_AS_COMMAND=1")
	return cmd
}

// A study long enough to interrupt: a few seconds on two cores.
const longStudy = `title = "Long enough to interrupt"
seed = 99
replicates = 300000
sample_sizes = [50, 200, 800]

[model]
family = "normal"
mean = 4.0
sd = 1.0

[[transform]]
name = "inverse"
expr = "1 / mean"
`

// waitForBlocks waits until result.json holds at least one finished block.
func waitForBlocks(t *testing.T, path string, deadline time.Duration) {
	t.Helper()
	stop := time.Now().Add(deadline)
	for time.Now().Before(stop) {
		b, err := os.ReadFile(path)
		if err == nil && bytes.Contains(b, []byte(`"nodes": [`)) && !bytes.Contains(b, []byte(`"nodes": null`)) {
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("no block saved in %s within %s", path, deadline)
}

// SIGINT saves every finished block and exits 130; -resume continues and
// the final CSV equals an uninterrupted run's byte for byte.
func TestInterruptAndResume(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs child processes")
	}
	study := writeStudy(t, longStudy)
	whole := filepath.Join(t.TempDir(), "whole")
	if code, _, stderr := runCLI(t, "run", study, "-o", whole, "-quiet"); code != exitOK {
		t.Fatalf("uninterrupted run: exit %d: %s", code, stderr)
	}

	part := filepath.Join(t.TempDir(), "part")
	cmd := command("run", study, "-o", part, "-quiet", "-checkpoint", "50ms")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitForBlocks(t, filepath.Join(part, "result.json"), 20*time.Second)
	cmd.Process.Signal(syscall.SIGINT)
	err := cmd.Wait()
	code := cmd.ProcessState.ExitCode()
	if code == exitOK {
		t.Skip("the run finished before the signal arrived; nothing to resume")
	}
	if code != exitInterrupted {
		t.Fatalf("interrupted run: exit %d (%v), want %d; stderr:\n%s", code, err, exitInterrupted, stderr.String())
	}
	res := readResult(t, filepath.Join(part, "result.json"))
	if res["complete"] != false {
		t.Fatalf("an interrupted result must be marked incomplete")
	}
	if _, err := os.Stat(filepath.Join(part, "summary.csv")); err == nil {
		t.Errorf("an interrupted run wrote summary.csv from partial data")
	}
	if code, _, stderr := runCLI(t, "run", "-resume", part, "-quiet"); code != exitOK {
		t.Fatalf("resume: exit %d: %s", code, stderr)
	}
	for _, name := range []string{"summary.csv", "verdicts.csv"} {
		a, _ := os.ReadFile(filepath.Join(whole, name))
		b, err := os.ReadFile(filepath.Join(part, name))
		if err != nil || !bytes.Equal(a, b) {
			t.Errorf("%s after resume differs from the uninterrupted run (%v)", name, err)
		}
	}
}

func readResult(t *testing.T, path string) map[string]any {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatalf("%s does not parse: %v", path, err)
	}
	return m
}

// After kill -9, every file present parses (writes are atomic), and the
// run resumes from the last saved state to the uninterrupted answer.
func TestHardKillLeavesOnlyWholeFiles(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs child processes")
	}
	study := writeStudy(t, longStudy)
	part := filepath.Join(t.TempDir(), "part")
	cmd := command("run", study, "-o", part, "-quiet", "-checkpoint", "20ms")
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	waitForBlocks(t, filepath.Join(part, "result.json"), 20*time.Second)
	time.Sleep(100 * time.Millisecond)
	cmd.Process.Kill()
	cmd.Wait()
	entries, err := os.ReadDir(part)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		name := e.Name()
		if strings.HasPrefix(name, ".") && strings.Contains(name, ".tmp") {
			continue // an unfinished temporary file; never read, removed on resume
		}
		switch filepath.Ext(name) {
		case ".json":
			readResult(t, filepath.Join(part, name))
		case ".csv":
			b, _ := os.ReadFile(filepath.Join(part, name))
			if len(b) == 0 || b[len(b)-1] != '\n' {
				t.Errorf("%s is truncated", name)
			}
		}
	}
	if code, _, stderr := runCLI(t, "run", "-resume", part, "-quiet"); code != exitOK {
		t.Fatalf("resume after kill -9: exit %d: %s", code, stderr)
	}
	whole := filepath.Join(t.TempDir(), "whole")
	if code, _, stderr := runCLI(t, "run", study, "-o", whole, "-quiet"); code != exitOK {
		t.Fatalf("uninterrupted run: exit %d: %s", code, stderr)
	}
	a, _ := os.ReadFile(filepath.Join(whole, "summary.csv"))
	b, _ := os.ReadFile(filepath.Join(part, "summary.csv"))
	if !bytes.Equal(a, b) {
		t.Errorf("summary.csv after kill -9 and resume differs from the uninterrupted run")
	}
	if matches, _ := filepath.Glob(filepath.Join(part, ".*.tmp*")); len(matches) > 0 {
		t.Errorf("temporary files left after resume: %v", matches)
	}
}

func TestResumeRefusesAnEditedStudy(t *testing.T) {
	study := writeStudy(t, smallStudy)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runCLI(t, "run", study, "-o", out, "-quiet", "-replicates", "200"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	edited := writeStudy(t, strings.Replace(smallStudy, "seed = 42", "seed = 43", 1))
	saved, err := runner.LoadResult(filepath.Join(out, "result.json"))
	if err != nil {
		t.Fatal(err)
	}
	given, err := studypkg.Load(edited)
	if err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCLI(t, "run", edited, "-resume", out, "-quiet")
	// It names the study the folder holds and the one given, each with
	// its digest's first 12 digits.
	for _, want := range []string{"it holds a run of " + study + " (SHA-256 " + saved.Study.SHA256[:12] + "…)", edited + " (SHA-256 " + given.SHA256[:12] + "…) differs", "has changed"} {
		if code != exitUsage || !strings.Contains(stderr, want) {
			t.Errorf("exit %d, stderr %q; want a refusal saying %q", code, stderr, want)
		}
	}
	// A resumed run's estimate is of what is left: here nothing.
	code, _, stderr = runCLI(t, "run", "-resume", out, "-dry-run")
	if code != exitOK || !strings.Contains(stderr, "work left: 0 replicates") {
		t.Errorf("exit %d, stderr %q; want the work left, none", code, stderr)
	}
	os.WriteFile(filepath.Join(out, "result.json"), []byte(`{"layout": 1, "cells": [`), 0o644)
	code, _, stderr = runCLI(t, "run", "-resume", out, "-quiet")
	if code != exitUsage || !strings.Contains(stderr, "not a valid result file") {
		t.Errorf("exit %d, stderr %q; want a refusal of the broken file", code, stderr)
	}
}

func TestDryRunWritesNothing(t *testing.T) {
	t.Parallel()
	study := writeStudy(t, smallStudy)
	out := filepath.Join(t.TempDir(), "out")
	code, stdout, stderr := runCLI(t, "run", study, "-o", out, "-dry-run")
	if code != exitOK || !strings.Contains(stderr, "draws") || stdout != "" {
		t.Fatalf("exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("-dry-run created the output folder")
	}
	// Drawn observation by observation: the exact statistics draws would
	// make even this a matter of minutes.
	huge := strings.Replace(strings.Replace(smallStudy, "replicates = 3000", "replicates = 100000000", 1), "[5, 20, 80]", "[5, 20, 80, 10000000]", 1)
	huge = writeStudy(t, strings.Replace(huge, `family = "normal"`, "family = \"normal\"\ndraws = \"each\"", 1))
	code, _, stderr = runCLI(t, "run", huge, "-o", out, "-quiet")
	if code != exitUsage || !strings.Contains(stderr, "exceeds the limits") {
		t.Errorf("a study of about 1e15 draws: exit %d, stderr %q; want a refusal", code, stderr)
	}
}
