package runner

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
)

// The canonical reduction. A cell's floating-point state is the fold of
// its blocks' moments over a fixed binary tree: node (level k, lo) holds
// the blocks [lo, lo+2^k) for lo a multiple of 2^k, and its value is
// Merge(left child, right child). A result keeps only the maximal
// complete nodes: when a node's sibling is held too, the two are replaced
// by their parent at once. The set kept is therefore a function of the set
// of blocks held, and each node's bits a function of its blocks, whatever
// order they arrived in, from however many workers, shards or resumed
// runs. A complete cell of B blocks is left with one node per set bit of
// B (at most 17 for 10⁵ blocks); the summary folds them left to right.
// Nodes never cover blocks past the last, so a plan that grows a cell
// from B to B' blocks continues from the same nodes.

// Node is the summary of the blocks [Lo, Lo+2^Level) of one cell.
type Node struct {
	Lo        int
	Level     int
	N         int64 // defined replicates
	Mean      float64
	M2        float64
	M3        float64
	M4        float64
	PluginVar float64 // mean plug-in variance over the defined replicates
	Width     float64 // mean interval width over the defined replicates
	// PluginOther is the mean of the other plug-in variance (the sandwich
	// where the intervals use the model-based one, and the other way
	// round) over the defined replicates; NaN where the cell keeps none.
	PluginOther float64
}

// Hi is one past the node's last block.
func (nd Node) Hi() int { return nd.Lo + 1<<nd.Level }

func (nd Node) moments() Moments {
	return Moments{N: nd.N, Mean: nd.Mean, M2: nd.M2, M3: nd.M3, M4: nd.M4}
}

// joinNodes returns the parent of left and its right sibling.
func joinNodes(left, right Node) Node {
	m := left.moments()
	m.Merge(right.moments())
	p := Node{Lo: left.Lo, Level: left.Level + 1, N: m.N, Mean: m.Mean, M2: m.M2, M3: m.M3, M4: m.M4}
	p.PluginVar, p.Width = left.PluginVar, left.Width
	if right.N > 0 {
		p.PluginVar += (right.PluginVar - left.PluginVar) * float64(right.N) / float64(m.N)
		p.Width += (right.Width - left.Width) * float64(right.N) / float64(m.N)
	}
	p.PluginOther = weighOther(left.PluginOther, left.N, right.PluginOther, right.N)
	return p
}

// weighOther is the mean of two means of the other plug-in variance over
// na and nb defined replicates, a mean over none counting for nothing
// (it is NaN).
func weighOther(a float64, na int64, b float64, nb int64) float64 {
	switch {
	case nb == 0:
		return a
	case na == 0:
		return b
	}
	return a + (b-a)*float64(nb)/float64(na+nb)
}

// insertNode adds nd to nodes (sorted by Lo, maximal) and joins it with
// its siblings as far as they are held. It returns an error naming a
// block already held.
func insertNode(nodes []Node, nd Node) ([]Node, error) {
	if nd.Level < 0 || nd.Level > maxNodeLevel || nd.Lo < 0 || nd.Lo%(1<<nd.Level) != 0 {
		return nodes, fmt.Errorf("node of level %d at block %d is not aligned", nd.Level, nd.Lo)
	}
	for {
		// i is where nd goes: the first node at or after its start.
		i := 0
		for i < len(nodes) && nodes[i].Lo < nd.Lo {
			i++
		}
		if i > 0 && nodes[i-1].Hi() > nd.Lo {
			return nodes, &overlapError{block: nd.Lo}
		}
		if i < len(nodes) && nodes[i].Lo < nd.Hi() {
			return nodes, &overlapError{block: nodes[i].Lo}
		}
		size := 1 << nd.Level
		if nd.Lo/size%2 == 0 {
			if i < len(nodes) && nodes[i].Lo == nd.Hi() && nodes[i].Level == nd.Level {
				nd = joinNodes(nd, nodes[i])
				nodes = append(nodes[:i], nodes[i+1:]...)
				continue
			}
		} else if i > 0 && nodes[i-1].Level == nd.Level && nodes[i-1].Hi() == nd.Lo {
			nd = joinNodes(nodes[i-1], nd)
			nodes = append(nodes[:i-1], nodes[i:]...)
			continue
		}
		nodes = append(nodes, Node{})
		copy(nodes[i+1:], nodes[i:])
		nodes[i] = nd
		return nodes, nil
	}
}

type overlapError struct{ block int }

func (e *overlapError) Error() string { return fmt.Sprintf("block %d is held twice", e.block) }

// heldBlocks counts the blocks the nodes cover.
func heldBlocks(nodes []Node) int {
	held := 0
	for _, nd := range nodes {
		held += 1 << nd.Level
	}
	return held
}

// holds reports whether block b is covered by one of nodes.
func holds(nodes []Node, b int) bool {
	for _, nd := range nodes {
		if nd.Lo <= b && b < nd.Hi() {
			return true
		}
	}
	return false
}

// maxNodes bounds the nodes a cell keeps during a run, for the memory
// estimate: one per level on each side of the blocks in flight.
const maxNodes = 2 * 20

// maxNodeLevel bounds a node's level in a saved file: 2^40 blocks is far
// beyond study.MaxReplicates.
const maxNodeLevel = 40

// MarshalJSON writes a node as a compact array [lo, level, n, mean, m2,
// m3, m4, plugin_var, width, plugin_other]; a non-finite value (a heavy tail can overflow m4)
// is written as a string, since JSON has no NaN or infinity.
func (nd Node) MarshalJSON() ([]byte, error) {
	buf := []byte("[" + strconv.Itoa(nd.Lo) + "," + strconv.Itoa(nd.Level) + "," + strconv.FormatInt(nd.N, 10))
	for _, x := range []float64{nd.Mean, nd.M2, nd.M3, nd.M4, nd.PluginVar, nd.Width, nd.PluginOther} {
		buf = append(buf, ',')
		if math.IsNaN(x) || math.IsInf(x, 0) {
			buf = strconv.AppendQuote(buf, strconv.FormatFloat(x, 'g', -1, 64))
		} else {
			buf = strconv.AppendFloat(buf, x, 'g', -1, 64)
		}
	}
	return append(buf, ']'), nil
}

// UnmarshalJSON reads the form written by MarshalJSON.
func (nd *Node) UnmarshalJSON(data []byte) error {
	var parts []jsonNumberOrString
	if err := json.Unmarshal(data, &parts); err != nil {
		return err
	}
	if len(parts) != 10 {
		return fmt.Errorf("node record has %d fields, want 10", len(parts))
	}
	ints := []*int{&nd.Lo, &nd.Level}
	for i, dst := range ints {
		v, err := strconv.Atoi(string(parts[i]))
		if err != nil {
			return fmt.Errorf("node field %d: %w", i+1, err)
		}
		*dst = v
	}
	if nd.Level < 0 || nd.Level > maxNodeLevel {
		return fmt.Errorf("node level %d out of range", nd.Level)
	}
	n, err := strconv.ParseInt(string(parts[2]), 10, 64)
	if err != nil {
		return fmt.Errorf("node count: %w", err)
	}
	nd.N = n
	for i, dst := range []*float64{&nd.Mean, &nd.M2, &nd.M3, &nd.M4, &nd.PluginVar, &nd.Width, &nd.PluginOther} {
		x, err := strconv.ParseFloat(string(parts[i+3]), 64)
		if err != nil {
			return fmt.Errorf("node value %q: %w", parts[i+3], err)
		}
		*dst = x
	}
	return nil
}

// jsonNumberOrString reads a JSON number as its text, or a string's
// content (how non-finite values are written).
type jsonNumberOrString string

func (v *jsonNumberOrString) UnmarshalJSON(b []byte) error {
	if len(b) > 0 && b[0] == '"' {
		var s string
		if err := json.Unmarshal(b, &s); err != nil {
			return err
		}
		*v = jsonNumberOrString(s)
		return nil
	}
	*v = jsonNumberOrString(b)
	return nil
}
