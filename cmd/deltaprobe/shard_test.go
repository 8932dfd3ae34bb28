package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deltaprobe/sim/runner"
)

// shardStudy has several blocks per n so that every shard count splits
// it differently.
var shardStudy = strings.Replace(smallStudy, "replicates = 3000", "replicates = 7500", 1)

func readFile(t *testing.T, path string) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// For every N from 1 to 7 and every K, the merged shards equal the
// unsharded run byte for byte.
func TestShardsMergeToTheUnshardedBytes(t *testing.T) {
	t.Parallel()
	study := writeStudy(t, shardStudy)
	whole := filepath.Join(t.TempDir(), "whole")
	if code, _, stderr := runCLI(t, "run", study, "-o", whole, "-quiet"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	want := readFile(t, filepath.Join(whole, "summary.csv"))
	wantVerdicts := readFile(t, filepath.Join(whole, "verdicts.csv"))
	for n := 1; n <= 7; n++ {
		base := t.TempDir()
		var parts []string
		for k := 0; k < n; k++ {
			dir := filepath.Join(base, fmt.Sprintf("part%d", k))
			code, stdout, stderr := runCLI(t, "run", study, "-shard", fmt.Sprintf("%d/%d", k, n), "-o", dir, "-quiet")
			if code != exitOK || stdout != "" {
				t.Fatalf("shard %d/%d: exit %d, stdout %q: %s", k, n, code, stdout, stderr)
			}
			parts = append(parts, dir)
		}
		merged := filepath.Join(base, "merged")
		if code, _, stderr := runCLI(t, append([]string{"merge", "-o", merged}, parts...)...); code != exitOK {
			t.Fatalf("merge of %d shards: exit %d: %s", n, code, stderr)
		}
		if got := readFile(t, filepath.Join(merged, "summary.csv")); !bytes.Equal(got, want) {
			t.Errorf("%d shards: merged summary.csv differs from the unsharded run", n)
		}
		if got := readFile(t, filepath.Join(merged, "verdicts.csv")); !bytes.Equal(got, wantVerdicts) {
			t.Errorf("%d shards: merged verdicts.csv differs from the unsharded run", n)
		}
	}
}

func TestMergeRefusesBadSets(t *testing.T) {
	t.Parallel()
	study := writeStudy(t, shardStudy)
	base := t.TempDir()
	made := 0
	shard := func(k, n int, studyPath string, extra ...string) string {
		made++
		dir := filepath.Join(base, fmt.Sprintf("part%d", made))
		args := append([]string{"run", studyPath, "-shard", fmt.Sprintf("%d/%d", k, n), "-o", dir, "-quiet"}, extra...)
		if code, _, stderr := runCLI(t, args...); code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		return dir
	}
	a, b, c := shard(0, 3, study), shard(1, 3, study), shard(2, 3, study)
	other := shard(2, 3, writeStudy(t, strings.Replace(shardStudy, "mean = 10.0", "mean = 11.0", 1)))
	reseeded := shard(2, 3, study, "-seed", "7")
	cases := []struct {
		name  string
		parts []string
		want  string
	}{
		{"missing shard", []string{a, b}, "missing shard(s) 2/3"},
		{"duplicate", []string{a, b, c, b}, "is in both"},
		{"other study", []string{a, b, other}, "different or edited study"},
		{"other seed", []string{a, b, reseeded}, "seed 7"},
		{"not a result", []string{a, t.TempDir()}, "reading result"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "m")
			code, _, stderr := runCLI(t, append([]string{"merge", "-o", out}, tc.parts...)...)
			if code != exitUsage || !strings.Contains(stderr, tc.want) {
				t.Errorf("exit %d, stderr %q; want status 2 and %q", code, stderr, tc.want)
			}
			if _, err := os.Stat(out); !os.IsNotExist(err) {
				t.Errorf("a refused merge created its output folder")
			}
		})
	}
	// -partial merges on purpose and says what is missing.
	out := filepath.Join(t.TempDir(), "m")
	code, stdout, stderr := runCLI(t, "merge", "-partial", "-o", out, a, c)
	if code != exitOK || !strings.Contains(stdout, "partial merge") || !strings.Contains(stdout, "1/3") {
		t.Errorf("-partial: exit %d, stdout %q, stderr %q", code, stdout, stderr)
	}
	// A re-run shard (a pre-empted task) gives the same bytes.
	again := filepath.Join(base, "again")
	if code, _, stderr := runCLI(t, "run", study, "-shard", "1/3", "-o", again, "-quiet"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	r1, _ := runner.LoadResult(filepath.Join(b, "result.json"))
	r2, _ := runner.LoadResult(filepath.Join(again, "result.json"))
	if fmt.Sprint(r1.Cells[0][2].Nodes) != fmt.Sprint(r2.Cells[0][2].Nodes) {
		t.Errorf("a re-run shard differs from the first run")
	}
}

func TestParseShard(t *testing.T) {
	env := func(kv ...string) func(string) string {
		m := map[string]string{}
		for i := 0; i+1 < len(kv); i += 2 {
			m[kv[i]] = kv[i+1]
		}
		return func(k string) string { return m[k] }
	}
	cases := []struct {
		spec   string
		shards int
		env    func(string) string
		want   string // "K/N" or an error substring
	}{
		{"0/4", 0, env(), "0/4"},
		{"3/4", 0, env(), "3/4"},
		{"4/4", 0, env(), "need 0 ≤ K < N"},
		{"1/0", 0, env(), "need 0 ≤ K < N"},
		{"a/b", 0, env(), "give K/N"},
		{"auto", 0, env("SLURM_ARRAY_TASK_ID", "2", "SLURM_ARRAY_TASK_COUNT", "4", "SLURM_ARRAY_TASK_MIN", "0"), "2/4"},
		// Arrays that start at 1: the index is relative to the minimum.
		{"auto", 0, env("SLURM_ARRAY_TASK_ID", "1", "SLURM_ARRAY_TASK_COUNT", "4", "SLURM_ARRAY_TASK_MIN", "1"), "0/4"},
		{"auto", 0, env("SLURM_ARRAY_TASK_ID", "4", "SLURM_ARRAY_TASK_COUNT", "4", "SLURM_ARRAY_TASK_MIN", "1"), "3/4"},
		{"auto", 0, env("SLURM_ARRAY_TASK_ID", "9", "SLURM_ARRAY_TASK_COUNT", "4", "SLURM_ARRAY_TASK_MIN", "0"), "contiguous array"},
		{"auto", 0, env("SLURM_ARRAY_TASK_ID", "1"), "SLURM_ARRAY_TASK_COUNT is not"},
		{"auto", 3, env("JOB_COMPLETION_INDEX", "2"), "2/3"},
		{"auto", 0, env("JOB_COMPLETION_INDEX", "2"), "needs -shards N"},
		{"auto", 2, env("JOB_COMPLETION_INDEX", "2"), "outside 0..1"},
		{"auto", 0, env(), "neither SLURM_ARRAY_TASK_ID nor JOB_COMPLETION_INDEX"},
	}
	for _, c := range cases {
		sh, err := parseShard(c.spec, c.shards, c.env)
		got := sh.String()
		if err != nil {
			got = err.Error()
		}
		if !strings.Contains(got, c.want) {
			t.Errorf("parseShard(%q, %d) = %q, want %q", c.spec, c.shards, got, c.want)
		}
	}
}

// Indexed-job semantics: separate processes with JOB_COMPLETION_INDEX
// set, merged, equal one run.
func TestIndexedJobProcesses(t *testing.T) {
	t.Parallel()
	if testing.Short() {
		t.Skip("runs child processes")
	}
	study := writeStudy(t, shardStudy)
	base := t.TempDir()
	var parts []string
	for k := 0; k < 3; k++ {
		dir := filepath.Join(base, fmt.Sprint("idx", k))
		cmd := command("run", study, "-shard", "auto", "-shards", "3", "-o", dir, "-quiet")
		cmd.Env = append(cmd.Env, fmt.Sprintf("JOB_COMPLETION_INDEX=%d", k))
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("index %d: %v\n%s", k, err, out)
		}
		parts = append(parts, dir)
	}
	merged := filepath.Join(base, "merged")
	if code, _, stderr := runCLI(t, append([]string{"merge", "-o", merged}, parts...)...); code != exitOK {
		t.Fatalf("merge: exit %d: %s", code, stderr)
	}
	whole := filepath.Join(base, "whole")
	if code, _, stderr := runCLI(t, "run", study, "-o", whole, "-quiet"); code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !bytes.Equal(readFile(t, filepath.Join(merged, "summary.csv")), readFile(t, filepath.Join(whole, "summary.csv"))) {
		t.Errorf("indexed-job shards merged differ from one run")
	}
}
