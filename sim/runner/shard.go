package runner

import (
	"fmt"
	"sort"
	"strings"

	"deltaprobe/sim/study"
)

// Shard names one part of a study split across the tasks of a job array.
// Whatever the count, the merged shards' summary is the bits of one
// unsharded run (see Range and reduce.go).
type Shard struct {
	Index int `json:"index"` // 0-based
	Count int `json:"count"`
}

func (sh Shard) String() string { return fmt.Sprintf("%d/%d", sh.Index, sh.Count) }

// Range is the blocks [lo, hi) the shard owns at every sample size, of
// per blocks: each shard owns one contiguous run of blocks per n, run k
// starting at ⌊k·per/count⌋, so every shard gets the same number of
// blocks of each sample size, give or take one, whatever the spread of n.
// A contiguous run is what keeps a shard's state small: it reduces to at
// most two nodes per level of the reduction tree (reduce.go), whereas
// interleaved blocks would all have to be kept until the merge. The
// limit this puts on shards: a count above per leaves some shards with
// no blocks (MaxShards).
func (sh Shard) Range(per int) (lo, hi int) {
	return sh.Index * per / sh.Count, (sh.Index + 1) * per / sh.Count
}

// ShardOf is the shard, of count, that owns block b of per.
func ShardOf(b, per, count int) int {
	k := b * count / per
	for k+1 < count && (k+1)*per/count <= b {
		k++
	}
	for k > 0 && k*per/count > b {
		k--
	}
	return k
}

// MaxShards is the largest useful number of shards for r replicates per
// n: one block each.
func MaxShards(r int) int { return Blocks(r) }

// Want returns the block filter of a shard, for RunBlocks.
func (sh Shard) Want(s *study.Study) func(ni, b int) bool {
	lo, hi := sh.Range(Blocks(s.Replicates))
	return func(ni, b int) bool { return lo <= b && b < hi }
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
	for _, c := range r.Cells[0] {
		var missing []int
		for b := 0; b < per; b++ {
			if !holds(c.Nodes, b) {
				missing = append(missing, b)
				if count > 0 {
					shardSet[ShardOf(b, per, count)] = true
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
// replicate count or tool version, and any block present twice (parts of
// another result layout are refused when they are loaded). Missing
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
	// owned[ni] lists the parts' node ranges at n, to name both parts
	// of a block held twice.
	type owned struct {
		lo, hi int
		name   string
	}
	owners := make([][]owned, len(s.SampleSizes))
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
				for _, nd := range c.Nodes {
					if t == 0 {
						for _, o := range owners[ni] {
							if o.lo < nd.Hi() && nd.Lo < o.hi {
								return nil, fmt.Errorf("cannot merge: block %d of n=%d is in both %s and %s", max(o.lo, nd.Lo), c.N, o.name, p.Name)
							}
						}
						owners[ni] = append(owners[ni], owned{nd.Lo, nd.Hi(), p.Name})
					}
					if err := m.addNode(nd); err != nil {
						return nil, fmt.Errorf("cannot merge %s: n=%d: %w", p.Name, c.N, err)
					}
				}
				m.add(c.Counts)
				m.Delta.Merge(&c.Delta)
				m.Wald.Merge(&c.Wald)
			}
		}
	}
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
