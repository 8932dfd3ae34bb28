package main

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// The answer is what the replicates decided, and nothing more: for the
// fuel example, verdicts.csv's bounds and status are recomputed here from
// summary.csv's own per-n verdicts by the rule the README states (n_low is
// the smallest n above the largest n that fails, n_high the smallest n
// from which every larger n passes; adequate only where they meet). At
// 3000 replicates they do not meet; at 100000 they do.
func TestBoundsFollowTheDecidedVerdicts(t *testing.T) {
	t.Parallel()
	for _, c := range []struct {
		replicates string
		adequate   bool
	}{
		{"3000", false},
		{"100000", true},
	} {
		out := filepath.Join(t.TempDir(), "fuel")
		if code, _, stderr := runCLI(t, "run", "../../studies/fuel.toml", "-o", out, "-quiet", "-replicates", c.replicates); code != exitOK {
			t.Fatalf("run: exit %d: %s", code, stderr)
		}
		summary := readCSV(t, filepath.Join(out, "summary.csv"))
		verdicts := readCSV(t, filepath.Join(out, "verdicts.csv"))
		col := func(rows [][]string, name string) int {
			for i, h := range rows[0] {
				if h == name {
					return i
				}
			}
			t.Fatalf("no column %q", name)
			return -1
		}
		type point struct {
			n       int
			verdict string
		}
		byTransform := map[string][]point{}
		for _, r := range summary[1:] {
			n, _ := strconv.Atoi(r[col(summary, "n")])
			tr := r[col(summary, "transform")]
			byTransform[tr] = append(byTransform[tr], point{n, r[col(summary, "verdict")]})
		}
		for _, v := range verdicts[1:] {
			pts := byTransform[v[col(verdicts, "transform")]]
			low, high := "", ""
			lastFail := -1
			for i, p := range pts {
				if p.verdict == "fail" {
					lastFail = i
				}
			}
			if lastFail+1 < len(pts) {
				low = strconv.Itoa(pts[lastFail+1].n)
			}
			for i := len(pts) - 1; i >= 0 && pts[i].verdict == "pass"; i-- {
				high = strconv.Itoa(pts[i].n)
			}
			status := "unclear"
			switch {
			case low != "" && low == high:
				status = "adequate"
			case pts[len(pts)-1].verdict == "fail":
				status = "not_reached"
			}
			smallest := ""
			if status == "adequate" {
				smallest = low
			}
			got := [4]string{v[col(verdicts, "n_low")], v[col(verdicts, "n_high")], v[col(verdicts, "status")], v[col(verdicts, "smallest_n")]}
			if want := [4]string{low, high, status, smallest}; got != want {
				t.Errorf("replicates %s, %s: n_low, n_high, status, smallest_n = %q, recomputed %q", c.replicates, v[0], got, want)
			}
			if (status == "adequate") != c.adequate {
				t.Errorf("replicates %s, %s: status %s, want adequate %v", c.replicates, v[0], status, c.adequate)
			}
		}
	}
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}
