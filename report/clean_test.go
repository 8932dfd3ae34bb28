package report

import (
	"os"
	"path/filepath"
	"slices"
	"testing"
)

func TestIsOutput(t *testing.T) {
	cases := []struct {
		name string
		want bool
	}{
		{"summary.csv", true},
		{"verdicts.csv", true},
		{"plan.csv", true},
		{"result.json", true},
		{"plan.json", true},
		{"index.html", true},
		{"log_mean-trends.png", true},
		{"log_mean-shapes.svg", true},
		{"ratio-plan.pdf", true},
		{"ratio-2-trends.pdf", true},
		{".result.json.tmp12345", true},
		{".index.html.tmp9", true},
		{"-trends.png", false},      // no transform
		{"ratio-trends.jpg", false}, // not a format deltaprobe writes
		{"ratio-notes.png", false},
		{"summary.csv.bak", false},
		{"notes.txt", false},
		{"study.toml", false},
		{".hidden", false},
		{".notes.txt.tmp1", false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := IsOutput(c.name); got != c.want {
				t.Errorf("IsOutput(%q) = %v, want %v", c.name, got, c.want)
			}
		})
	}
}

func TestRemoveOutputs(t *testing.T) {
	dir := t.TempDir()
	ours := []string{"old-shapes.png", "old-trends.svg", "result.json", "summary.csv"}
	theirs := []string{"notes.txt", "study.toml", "figure.png"}
	for _, name := range append(slices.Clone(ours), theirs...) {
		if err := os.WriteFile(filepath.Join(dir, name), []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	if err := os.Mkdir(filepath.Join(dir, "x-plan.png"), 0o755); err != nil { // a folder, however named, stays
		t.Fatal(err)
	}
	removed, err := RemoveOutputs(dir)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(removed, ours) {
		t.Errorf("removed %q, want %q", removed, ours)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var left []string
	for _, e := range entries {
		left = append(left, e.Name())
	}
	if want := []string{"figure.png", "notes.txt", "study.toml", "x-plan.png"}; !slices.Equal(left, want) {
		t.Errorf("left %q, want %q", left, want)
	}
	if removed, err := RemoveOutputs(filepath.Join(dir, "missing")); err != nil || removed != nil {
		t.Errorf("a missing folder: removed %q, error %v; want nothing", removed, err)
	}
}
