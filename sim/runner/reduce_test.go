package runner

import (
	"context"
	"math"
	"math/bits"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"deltaprobe/sim/study/studytest"
)

// leafNodes makes one node per block from a fixed stream of values, as a
// worker's flush does.
func leafNodes(blocks, per int) ([]Node, []float64) {
	rng := rand.New(rand.NewPCG(3, 4))
	var all []float64
	var leaves []Node
	for b := 0; b < blocks; b++ {
		vals := make([]float64, per)
		var pv float64
		for i := range vals {
			vals[i] = math.Exp(rng.NormFloat64()) // skewed, so M3 and M4 matter
			pv += vals[i] / 10
		}
		all = append(all, vals...)
		m := momentsOf(vals)
		leaves = append(leaves, Node{Lo: b, N: m.N, Mean: m.Mean, M2: m.M2, M3: m.M3, M4: m.M4, PluginVar: pv / float64(per)})
	}
	return leaves, all
}

func insertAll(t *testing.T, nodes []Node, add []Node) []Node {
	t.Helper()
	for _, nd := range add {
		var err error
		if nodes, err = insertNode(nodes, nd); err != nil {
			t.Fatal(err)
		}
	}
	return nodes
}

// The nodes kept, and so the summary's bits, depend only on the blocks
// held: any order of arrival, any split into contiguous parts reduced
// apart and then merged, gives the same nodes, one per set bit of the
// number of blocks once all are in.
func TestReductionIsCanonical(t *testing.T) {
	for _, blocks := range []int{1, 2, 3, 7, 22, 64, 100, 1000} {
		leaves, all := leafNodes(blocks, 37)
		want := insertAll(t, nil, leaves)
		if len(want) != bits.OnesCount(uint(blocks)) || heldBlocks(want) != blocks {
			t.Fatalf("%d blocks: %d nodes holding %d, want %d nodes", blocks, len(want), heldBlocks(want), bits.OnesCount(uint(blocks)))
		}
		rng := rand.New(rand.NewPCG(uint64(blocks), 1))
		for trial := 0; trial < 20; trial++ {
			// A random order, as workers finish.
			order := slices.Clone(leaves)
			rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
			if got := insertAll(t, nil, order); !slices.Equal(got, want) {
				t.Fatalf("%d blocks, shuffled: nodes differ", blocks)
			}
			// Contiguous parts reduced apart (shards, or a run and its
			// resumption), their nodes merged in a random order.
			parts := 1 + rng.IntN(min(blocks, 16))
			var pieces [][]Node
			for k := 0; k < parts; k++ {
				lo, hi := Shard{Index: k, Count: parts}.Range(blocks)
				pieces = append(pieces, insertAll(t, nil, leaves[lo:hi]))
			}
			rng.Shuffle(len(pieces), func(i, j int) { pieces[i], pieces[j] = pieces[j], pieces[i] })
			var merged []Node
			for _, p := range pieces {
				merged = insertAll(t, merged, p)
			}
			if !slices.Equal(merged, want) {
				t.Fatalf("%d blocks in %d parts: nodes differ", blocks, parts)
			}
		}
		// The fold agrees with the moments of all values at once (two-pass,
		// Chan, Golub & LeVeque 1983) to rounding.
		c := &Cell{Nodes: want}
		got, ref := c.Merged().Moments, momentsOf(all)
		for _, p := range [][3]float64{{got.Mean, ref.Mean}, {got.M2, ref.M2}, {got.M3, ref.M3}, {got.M4, ref.M4}} {
			if math.Abs(p[0]-p[1]) > 1e-10*math.Abs(p[1]) {
				t.Errorf("%d blocks: fold %v, all at once %v", blocks, p[0], p[1])
			}
		}
		if got.N != ref.N {
			t.Errorf("%d blocks: fold counts %d values, want %d", blocks, got.N, ref.N)
		}
	}
}

// A cell grown from B to B' blocks (a plan adding a batch) ends with the
// nodes of B' blocks reduced at once.
func TestReductionGrowsByPrefix(t *testing.T) {
	leaves, _ := leafNodes(45, 11)
	for _, first := range []int{1, 10, 16, 33} {
		grown := insertAll(t, insertAll(t, nil, leaves[:first]), leaves[first:])
		if want := insertAll(t, nil, leaves); !slices.Equal(grown, want) {
			t.Errorf("grown from %d blocks: nodes differ from 45 at once", first)
		}
	}
}

func TestReductionRefusesOverlaps(t *testing.T) {
	leaves, _ := leafNodes(8, 5)
	nodes := insertAll(t, nil, leaves[:6]) // [0,4) and [4,6)
	for _, nd := range []Node{leaves[5], leaves[0], {Lo: 4, Level: 2}, {Lo: 0, Level: 3}} {
		if _, err := insertNode(slices.Clone(nodes), nd); err == nil {
			t.Errorf("node [%d, %d) overlapping [0, 6) was accepted", nd.Lo, nd.Hi())
		}
	}
	if _, err := insertNode(nil, Node{Lo: 2, Level: 2}); err == nil {
		t.Error("a node not aligned to its size was accepted")
	}
}

// A saved result whose nodes the reduction could not have made (edited
// by hand, or by another program) is refused by Fits, and so by -resume
// and merge.
func TestFitsRefusesForeignNodes(t *testing.T) {
	s := studytest.Parse(t, strings.Replace(twoArmStudy, "replicates = 2500", "replicates = 7000", 1)) // 7 blocks: nodes [0,4), [4,6), [6,7)
	res, err := Run(context.Background(), s, Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	if err := res.Fits(s); err != nil {
		t.Fatalf("a result as run: %v", err)
	}
	cases := []struct {
		name string
		edit func(c *Cell)
		want string
	}{
		{"overlap", func(c *Cell) { c.Nodes[1].Lo = 2; c.Nodes[1].Level = 1 }, "held twice"},
		{"misaligned", func(c *Cell) { c.Nodes[1].Lo = 5 }, "not aligned"},
		{"past the last block", func(c *Cell) { c.Nodes[2].Lo = 8 }, "beyond"},
		{"not joined", func(c *Cell) {
			a, b := c.Nodes[0], c.Nodes[0]
			a.Level, b.Level, b.Lo = 1, 1, 2
			c.Nodes = append([]Node{a, b}, c.Nodes[1:]...)
		}, "would have joined"},
	}
	for _, tc := range cases {
		bad := res.clone()
		tc.edit(bad.Cells[1][0])
		if err := bad.Fits(s); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: Fits says %v, want an error saying %q", tc.name, err, tc.want)
		}
	}
	bad := res.clone()
	bad.Shard = &Shard{Index: 2, Count: 2}
	if err := bad.Fits(s); err == nil || !strings.Contains(err.Error(), "no split") {
		t.Errorf("shard 2/2: Fits says %v", err)
	}
}
