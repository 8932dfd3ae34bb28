package runner

import (
	"context"
	"slices"
	"testing"

	"deltaprobe/sim/study/studytest"
)

// Overridden seeds and replicates are recorded, and survive a resume and
// a merge; the merge lists the builds of its parts.
func TestOverridesSurviveResumeAndMerge(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy) // seed = 9, replicates = 2500
	s.Seed, s.Replicates = 11, 200
	info := s.Info()
	if want := []string{"seed", "replicates"}; !slices.Equal(info.Overrides, want) || info.FileSeed != 9 || info.FileReplicates != 2500 {
		t.Fatalf("Info: overrides %q, file's seed %d and replicates %d; want %q, 9 and 2500", info.Overrides, info.FileSeed, info.FileReplicates, want)
	}

	var parts []Part
	for i, commit := range []string{"abc", "def"} {
		res := NewResult(s)
		res.Shard = &Shard{Index: i, Count: 2}
		if err := RunBlocks(context.Background(), s, res, nil, Options{Workers: 1}); err != nil {
			t.Fatal(err)
		}
		res.Build.Commit = commit
		parts = append(parts, Part{Name: commit, Result: res})
	}
	resumed, err := ResumeStudy(parts[0].Result)
	if err != nil {
		t.Fatal(err)
	}
	if got := resumed.Info(); !slices.Equal(got.Overrides, info.Overrides) || got.Seed != 11 || got.Replicates != 200 {
		t.Errorf("resumed study: overrides %q, seed %d, replicates %d; want %q, 11, 200", got.Overrides, got.Seed, got.Replicates, info.Overrides)
	}
	merged, err := Merge(parts, false)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(merged.Study.Overrides, info.Overrides) {
		t.Errorf("merged overrides %q, want %q", merged.Study.Overrides, info.Overrides)
	}
	if merged.Build.Commit != "abc; def" || merged.Build.Generator != Generator {
		t.Errorf("merged build %+v; want commits abc; def and the generator", merged.Build)
	}
}
