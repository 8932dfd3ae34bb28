package runner

import (
	"fmt"
	"sort"
	"strings"

	"deltaprobe/sim/study"
)

// Shard names one part of a study split across the tasks of a job array.
type Shard struct {
	Index int `json:"index"` // 0-based
	Count int `json:"count"`
}

func (sh Shard) String() string { return fmt.Sprintf("%d/%d", sh.Index, sh.Count) }

// ShardOf assigns block b of sample size index ni to a shard: blocks are
// numbered globally, sample size by sample size (g = ni·blocks + b), and
// block g goes to shard g mod count. Every shard gets the same number of
// blocks of each sample size, give or take one, so the work balances
// whatever the spread of n.
func ShardOf(ni, b, blocksPerN, count int) int {
	return (ni*blocksPerN + b) % count
}

// Want returns the block filter of a shard, for RunBlocks.
func (sh Shard) Want(s *study.Study) func(ni, b int) bool {
	per := Blocks(s.Replicates)
	return func(ni, b int) bool { return ShardOf(ni, b, per, sh.Count) == sh.Index }
}

// Missing lists the blocks of s that res does not hold, as "n=N blocks
// a–b" ranges, and the shards they belong to when the parts came from a
// split of count shards (0: unknown).
func (r *Result) Missing(replicates, count int) (blocks []string, shards []int) {
	if len(r.Cells) == 0 {
		return nil, nil
	}
	per := Blocks(replicates)
	shardSet := map[int]bool{}
	for ni, c := range r.Cells[0] {
		have := map[int]bool{}
		for _, b := range c.Blocks {
			have[b.Block] = true
		}
		var missing []int
		for b := 0; b < per; b++ {
			if !have[b] {
				missing = append(missing, b)
				if count > 0 {
					shardSet[ShardOf(ni, b, per, count)] = true
				}
			}
		}
		if len(missing) > 0 {
			blocks = append(blocks, fmt.Sprintf("n=%d blocks %s", c.N, ranges(missing)))
		}
	}
	for sh := range shardSet {
		shards = append(shards, sh)
	}
	sort.Ints(shards)
	return blocks, shards
}

func ranges(xs []int) string {
	var parts []string
	for i := 0; i < len(xs); {
		j := i
		for j+1 < len(xs) && xs[j+1] == xs[j]+1 {
			j++
		}
		if i == j {
			parts = append(parts, fmt.Sprint(xs[i]))
		} else {
			parts = append(parts, fmt.Sprintf("%d–%d", xs[i], xs[j]))
		}
		i = j + 1
	}
	return strings.Join(parts, ", ")
}

// Part is one result to merge, with the name it is reported by.
type Part struct {
	Name   string
	Result *Result
}

// Merge combines results of the same study (shards, or resumed pieces)
// into one. It refuses parts from another study file, seed, block size,
// replicate count or tool version, and any block present twice. Missing
// blocks are allowed only when partial is true; the merged result says
// whether it is complete.
func Merge(parts []Part, partial bool) (*Result, error) {
	if len(parts) == 0 {
		return nil, fmt.Errorf("nothing to merge")
	}
	first := parts[0]
	ref := first.Result
	for _, p := range parts[1:] {
		r := p.Result
		var why string
		switch {
		case r.Study.SHA256 != ref.Study.SHA256:
			why = fmt.Sprintf("its study file has SHA-256 %.12s…, %s's has %.12s… (a different or edited study)", r.Study.SHA256, first.Name, ref.Study.SHA256)
		case r.Study.Seed != ref.Study.Seed:
			why = fmt.Sprintf("it was run with seed %d, %s with %d", r.Study.Seed, first.Name, ref.Study.Seed)
		case r.Study.Replicates != ref.Study.Replicates:
			why = fmt.Sprintf("it has %d replicates per n, %s has %d", r.Study.Replicates, first.Name, ref.Study.Replicates)
		case r.BlockSize != ref.BlockSize:
			why = fmt.Sprintf("its block size is %d, %s's is %d", r.BlockSize, first.Name, ref.BlockSize)
		case r.Tool != ref.Tool:
			why = fmt.Sprintf("it was made by deltaprobe %s, %s by %s", r.Tool, first.Name, ref.Tool)
		}
		if why != "" {
			return nil, fmt.Errorf("cannot merge %s with %s: %s", p.Name, first.Name, why)
		}
	}
	s, err := ResumeStudy(ref)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", first.Name, err)
	}
	merged := NewResult(s)
	merged.Build = ref.Build.Known()
	owner := map[[3]int]string{}
	count := 0
	for _, p := range parts {
		if err := p.Result.Fits(s); err != nil {
			return nil, fmt.Errorf("cannot merge %s: %w", p.Name, err)
		}
		if p.Result.Shard != nil {
			count = p.Result.Shard.Count
		}
		merged.Elapsed += p.Result.Elapsed
		merged.Build = merged.Build.Join(p.Result.Build)
		merged.Finished = max(merged.Finished, p.Result.Finished) // RFC 3339 UTC sorts as text
		for t := range p.Result.Cells {
			for ni, c := range p.Result.Cells[t] {
				m := merged.Cells[t][ni]
				for _, b := range c.Blocks {
					key := [3]int{t, ni, b.Block}
					if prev, dup := owner[key]; dup {
						return nil, fmt.Errorf("cannot merge: block %d of n=%d is in both %s and %s", b.Block, c.N, prev, p.Name)
					}
					owner[key] = p.Name
					m.Blocks = append(m.Blocks, b)
				}
				m.add(c.Counts)
				m.Delta.Merge(&c.Delta)
				m.Wald.Merge(&c.Wald)
			}
		}
	}
	sortBlocks(merged)
	merged.Complete = merged.missingBlocks(s.Replicates) == 0
	if !merged.Complete {
		blocks, shards := merged.Missing(s.Replicates, count)
		msg := "missing " + strings.Join(blocks, "; ")
		if len(shards) > 0 {
			var names []string
			for _, sh := range shards {
				names = append(names, Shard{sh, count}.String())
			}
			msg = fmt.Sprintf("missing shard(s) %s: %s", strings.Join(names, ", "), strings.Join(blocks, "; "))
		}
		if !partial {
			return nil, fmt.Errorf("cannot merge: %s (add -partial to merge what is there)", msg)
		}
		merged.MissingNote = msg
	}
	return merged, nil
}
