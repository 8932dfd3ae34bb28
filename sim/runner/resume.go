package runner

import (
	"fmt"

	"deltaprobe/sim/study"
)

// ResumeStudy rebuilds the study a saved result was run from, out of the
// study text the result carries, with the seed and replicates it ran
// with, and checks that the result fits it. A result that does not
// match is refused: merging blocks of another study would be wrong
// without any sign of it.
func ResumeStudy(res *Result) (*study.Study, error) {
	s, err := res.Study.Rebuild("result")
	if err != nil {
		return nil, err
	}
	if err := res.Fits(s); err != nil {
		return nil, err
	}
	return s, nil
}

// Fits reports whether the result can hold blocks of s: the same study
// text, seed, replicates, block size and layout of cells.
func (r *Result) Fits(s *study.Study) error {
	switch {
	case r.Study.SHA256 != s.SHA256:
		return fmt.Errorf("the result comes from a study with SHA-256 %.12s…, not %s (SHA-256 %.12s…)", r.Study.SHA256, s.File, s.SHA256)
	case r.Study.Seed != s.Seed:
		return fmt.Errorf("the result was run with seed %d, not %d", r.Study.Seed, s.Seed)
	case r.Study.Replicates != s.Replicates:
		return fmt.Errorf("the result was run with %d replicates per n, not %d", r.Study.Replicates, s.Replicates)
	case r.BlockSize != BlockSize:
		return fmt.Errorf("the result uses blocks of %d replicates; this deltaprobe uses %d", r.BlockSize, BlockSize)
	case r.Shard != nil && !(r.Shard.Count >= 1 && r.Shard.Index >= 0 && r.Shard.Index < r.Shard.Count):
		return fmt.Errorf("the result names shard %s, which no split has", r.Shard)
	case len(r.Cells) != len(s.Transforms):
		return fmt.Errorf("the result has %d transforms; the study has %d", len(r.Cells), len(s.Transforms))
	}
	for t := range r.Cells {
		if len(r.Cells[t]) != len(s.SampleSizes) {
			return fmt.Errorf("the result has %d sample sizes; the study has %d", len(r.Cells[t]), len(s.SampleSizes))
		}
		for ni, c := range r.Cells[t] {
			if c.N != s.SampleSizes[ni] {
				return fmt.Errorf("the result's sample size %d is %d; the study's is %d", ni+1, c.N, s.SampleSizes[ni])
			}
			// The nodes must be the reduction's own: aligned, in range,
			// disjoint and maximal; re-inserting them checks all four.
			var again []Node
			for _, nd := range c.Nodes {
				var err error
				if nd.Hi() > Blocks(s.Replicates) {
					return fmt.Errorf("the result holds blocks %d–%d of n=%d, beyond its %d blocks", nd.Lo, nd.Hi()-1, c.N, Blocks(s.Replicates))
				}
				if again, err = insertNode(again, nd); err != nil {
					return fmt.Errorf("the result's n=%d: %w", c.N, err)
				}
			}
			if len(again) != len(c.Nodes) {
				return fmt.Errorf("the result's n=%d holds nodes a reduction would have joined", c.N)
			}
		}
	}
	return nil
}
