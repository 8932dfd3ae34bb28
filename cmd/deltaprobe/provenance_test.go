package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"deltaprobe/sim/runner"
)

// The record of a run is the run: result.json and the page give the seed
// and replicates used, say which a flag set, keep the file's, and name the
// generator and the build.
func TestOverridesAreRecorded(t *testing.T) {
	study := writeStudy(t, smallStudy) // seed = 42, replicates = 3000
	cases := []struct {
		name          string
		args          []string
		seed          uint64
		replicates    int
		overrides     []string
		page, notPage []string
	}{
		{"none", nil, 42, 3000, nil,
			[]string{"<dd>42</dd>", "<dd>3000 per sample size</dd>"}, []string{"(from -"}},
		{"seed", []string{"-seed", "99"}, 99, 3000, []string{"seed"},
			[]string{"99 (from -seed; the file says 42)"}, []string{"(from -replicates"}},
		{"both", []string{"-seed", "99", "-replicates", "200"}, 99, 200, []string{"seed", "replicates"},
			[]string{"99 (from -seed; the file says 42)", "200 per sample size (from -replicates; the file says 3000)"}, nil},
		{"same as the file", []string{"-seed", "42", "-replicates", "3000"}, 42, 3000, nil,
			[]string{"<dd>42</dd>"}, []string{"(from -"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			args := append([]string{"run", study, "-quiet", "-o", out, "-figures", "svg"}, c.args...)
			if code, _, stderr := runCLI(t, args...); code != 0 {
				t.Fatalf("exit %d: %s", code, stderr)
			}
			var res struct {
				Build runner.Build `json:"build"`
				Study struct {
					Seed           uint64   `json:"seed"`
					Replicates     int      `json:"replicates"`
					Overrides      []string `json:"overrides"`
					FileSeed       uint64   `json:"file_seed"`
					FileReplicates int      `json:"file_replicates"`
				} `json:"study"`
			}
			if err := json.Unmarshal(readFile(t, filepath.Join(out, "result.json")), &res); err != nil {
				t.Fatal(err)
			}
			st := res.Study
			if st.Seed != c.seed || st.Replicates != c.replicates || !slices.Equal(st.Overrides, c.overrides) || st.FileSeed != 42 || st.FileReplicates != 3000 {
				t.Errorf("result.json study: seed %d, replicates %d, overrides %q, file's %d and %d; want %d, %d, %q, 42 and 3000",
					st.Seed, st.Replicates, st.Overrides, st.FileSeed, st.FileReplicates, c.seed, c.replicates, c.overrides)
			}
			if want := runner.CurrentBuild(); res.Build != want {
				t.Errorf("result.json build %+v, want %+v", res.Build, want)
			}
			page := string(readFile(t, filepath.Join(out, "index.html")))
			for _, s := range append(c.page, runner.Generator, "<dt>Go version</dt>", "<dt>Platform</dt>", "<dt>Build commit</dt>") {
				if !strings.Contains(page, s) {
					t.Errorf("index.html lacks %q", s)
				}
			}
			for _, s := range c.notPage {
				if strings.Contains(page, s) {
					t.Errorf("index.html has %q", s)
				}
			}
		})
	}
}

// A plan's record names its seed, the generator and the build too.
func TestPlanRecordsSeedAndBuild(t *testing.T) {
	study := writeStudy(t, planStudy)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runCLI(t, "plan", study, "-quiet", "-o", out, "-seed", "5", "-figures", "svg"); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	page, err := os.ReadFile(filepath.Join(out, "index.html"))
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range []string{"5 (from -seed; the file says 2027)", runner.Generator, "<dt>Platform</dt>"} {
		if !strings.Contains(string(page), s) {
			t.Errorf("the plan's index.html lacks %q", s)
		}
	}
}

// -force removes what an earlier run or plan left, and nothing else.
func TestForceRemovesStaleOutputs(t *testing.T) {
	cases := []struct {
		cmd, study string
		args       []string
		fresh      string // a file the command writes
	}{
		{"run", smallStudy, []string{"-replicates", "100"}, "summary.csv"},
		{"plan", planStudy, nil, "plan.csv"},
	}
	for _, c := range cases {
		t.Run(c.cmd, func(t *testing.T) {
			study := writeStudy(t, c.study)
			out := t.TempDir()
			stale := []string{"another_transform-trends.png", "another_transform-shapes.pdf", "gone-plan.svg", "plan.json", "result.json"}
			kept := []string{"notes.txt", "my-figure.png"}
			for _, name := range append(slices.Clone(stale), kept...) {
				if err := os.WriteFile(filepath.Join(out, name), []byte("stale"), 0o644); err != nil {
					t.Fatal(err)
				}
			}
			args := append([]string{c.cmd, study, "-o", out, "-force", "-figures", "svg"}, c.args...)
			code, _, stderr := runCLI(t, args...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, stderr)
			}
			if !strings.Contains(stderr, "-force: removed ") {
				t.Errorf("stderr does not say what -force removed:\n%s", stderr)
			}
			for _, name := range stale {
				if b, err := os.ReadFile(filepath.Join(out, name)); err == nil && string(b) == "stale" {
					t.Errorf("%s from the earlier output is still there", name)
				}
			}
			for _, name := range append(kept, c.fresh) {
				if _, err := os.Stat(filepath.Join(out, name)); err != nil {
					t.Errorf("%s: %v", name, err)
				}
			}
		})
	}
}

// predict on a study with only a [plan] predicts over the plan's range.
func TestPredictOverThePlanRange(t *testing.T) {
	study := writeStudy(t, planStudy) // n_min = 5, n_max = 60
	code, stdout, stderr := runCLI(t, "predict", study)
	if code != 0 || !strings.Contains(stderr, "[plan] range") {
		t.Fatalf("exit %d, stderr %q", code, stderr)
	}
	var got []string
	for _, line := range strings.Split(strings.TrimSpace(stdout), "\n")[1:] {
		f := strings.Fields(line)
		if len(f) > 2 && f[0] == "rate" {
			got = append(got, f[1])
		}
	}
	if want := []string{"5", "10", "20", "40", "60"}; !slices.Equal(got, want) {
		t.Errorf("predictions at n = %q, want %q:\n%s", got, want, stdout)
	}
}
