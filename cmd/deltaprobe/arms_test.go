package main

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

const twoArmStudy = `title = "Difference of two normal means"
seed = 7
replicates = 200
sample_sizes = [5, 40]

[[arm]]
name = "control"
family = "normal"
mean = 10.0
sd = 3.0

[[arm]]
name = "treated"
family = "normal"
mean = 12.0
sd = 3.0
allocation = 1.5

[[transform]]
name = "difference"
expr = "treated.mean - control.mean"
`

// n_total in summary.csv is the sum of the arm sizes, each ceil(n ×
// allocation), and with several arms the terminal and predict say so; a
// one-sample study has n_total = n and no note.
func TestArmSizesAndTotal(t *testing.T) {
	cases := []struct {
		name  string
		study string
		total map[int]int // n → n_total, by hand
		notes []string    // what the terminal and predict show of the arm sizes, by hand
	}{
		{
			name:  "two arms, allocations 1 and 1.5",
			study: twoArmStudy,
			// n = 5: control ceil(5 × 1) = 5, treated ceil(5 × 1.5) = ceil(7.5) = 8, total 13.
			// n = 40: control 40, treated ceil(40 × 1.5) = 60, total 100.
			total: map[int]int{5: 13, 40: 100},
			notes: []string{
				"at n = 5, control 5, treated 8, total 13.",
				"at n = 40, control 40, treated 60, total 100.",
			},
		},
		{
			name:  "one sample",
			study: smallStudy,
			// One arm of allocation 1: n_total = n.
			total: map[int]int{5: 5, 20: 20, 80: 80},
		},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			study := writeStudy(t, c.study)
			out := filepath.Join(t.TempDir(), "out")
			code, stdout, stderr := runCLI(t, "run", study, "-o", out, "-quiet", "-replicates", "200")
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, stderr)
			}
			checkNTotal(t, filepath.Join(out, "summary.csv"), c.total)

			// Wrapped lines are read as one text.
			text := strings.Join(strings.Fields(stdout), " ")
			const lead = "n is the base size of each arm: "
			if len(c.notes) == 0 {
				if strings.Contains(text, lead) {
					t.Errorf("a one-sample study's terminal speaks of arms:\n%s", stdout)
				}
			} else if !containsAny(text, lead, c.notes) {
				t.Errorf("terminal lacks the arm sizes (one of %q):\n%s", c.notes, stdout)
			}

			code, stdout, stderr = runCLI(t, "predict", study)
			if code != exitOK {
				t.Fatalf("predict: exit %d: %s", code, stderr)
			}
			lines := strings.Split(stdout, "\n")
			header := strings.Fields(lines[0])
			hasN := len(header) > 2 && header[2] == "N"
			if hasN != (len(c.notes) > 0) {
				t.Errorf("predict header %q: N column %v, want %v", header, hasN, len(c.notes) > 0)
			}
			if hasN {
				for _, line := range lines[1:] {
					f := strings.Fields(line)
					if len(f) < 3 || f[0] != "difference" {
						continue
					}
					n, _ := strconv.Atoi(f[1])
					if want := strconv.Itoa(c.total[n]); f[2] != want {
						t.Errorf("predict at n = %s: N = %s, want %s", f[1], f[2], want)
					}
				}
				// predict's note is at the largest n of the grid.
				last := lead + c.notes[len(c.notes)-1]
				if text := strings.Join(strings.Fields(stdout), " "); !strings.Contains(text, last) {
					t.Errorf("predict lacks %q:\n%s", last, stdout)
				}
			}
		})
	}
}

// containsAny says whether text holds lead followed by one of notes.
func containsAny(text, lead string, notes []string) bool {
	for _, n := range notes {
		if strings.Contains(text, lead+n) {
			return true
		}
	}
	return false
}

// checkNTotal holds summary.csv's n_total, right after n, to want by n.
func checkNTotal(t *testing.T, path string, want map[int]int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) < 2 || len(recs[0]) < 3 || recs[0][1] != "n" || recs[0][2] != "n_total" {
		t.Fatalf("summary.csv header %q: want n_total right after n", recs[0])
	}
	seen := 0
	for _, r := range recs[1:] {
		n, err := strconv.Atoi(r[1])
		if err != nil {
			t.Fatalf("n %q: %v", r[1], err)
		}
		w, ok := want[n]
		if !ok {
			t.Errorf("summary.csv has n = %d, not in the grid", n)
			continue
		}
		seen++
		if r[2] != strconv.Itoa(w) {
			t.Errorf("%s at n = %d: n_total = %s, want %d", r[0], n, r[2], w)
		}
	}
	if seen == 0 {
		t.Error("summary.csv has no rows")
	}
}
