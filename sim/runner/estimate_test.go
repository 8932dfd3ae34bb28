package runner

import (
	"context"
	"testing"
	"time"

	"deltaprobe/sim/study/studytest"
)

// The estimate counts only the blocks a run has left.
func TestEstimateCountsWhatIsLeft(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy) // replicates 2500: blocks of 1000, 1000, 500 at n = 20 and 60
	half := NewResult(s)
	half.Shard = &Shard{Index: 0, Count: 2}
	if err := RunBlocks(context.Background(), s, half, nil, Options{Workers: 1}); err != nil {
		t.Fatal(err)
	}
	half.Shard = nil // as a resumed unsharded run that holds shard 0's blocks
	shard1 := NewResult(s)
	shard1.Shard = &Shard{Index: 1, Count: 2}
	done, err := Run(context.Background(), s, Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	d := func(n int) int64 { return int64(s.DrawsPerReplicate(n)) }
	// Shard 0 of 2 owns block 0 of each n (blocks [⌊0·3/2⌋, ⌊1·3/2⌋));
	// shard 1 blocks 1 and 2, 1500 replicates of each n.
	cases := []struct {
		name        string
		res         *Result
		replicates  int64
		draws       int64
		nothingLeft bool
	}{
		{"a new run", nil, 5000, 2500*d(20) + 2500*d(60), false},
		{"a new run's empty result", NewResult(s), 5000, 2500*d(20) + 2500*d(60), false},
		{"a run holding shard 0's blocks", half, 3000, 1500*d(20) + 1500*d(60), false},
		{"a shard's run", shard1, 3000, 1500*d(20) + 1500*d(60), false},
		{"a complete run", done, 0, 0, true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e := EstimateWork(s, c.res, 1, time.Millisecond)
			if e.Replicates != c.replicates || e.Draws != c.draws {
				t.Errorf("%d replicates and %d draws left, want %d and %d", e.Replicates, e.Draws, c.replicates, c.draws)
			}
			if c.nothingLeft && (e.PerDrawNS != 0 || e.Time != 0) {
				t.Errorf("nothing left, yet %v ns per draw and %v: the calibration ran for nothing", e.PerDrawNS, e.Time)
			}
			if e.MemoryBytes <= 0 {
				t.Errorf("memory %d, want the whole result's", e.MemoryBytes)
			}
		})
	}
}
