package runner

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"deltaprobe/sim/family"
	"deltaprobe/sim/study"
)

// ResultVersion is the layout version of result.json.
//
// Layout 2 keeps the moments in the nodes of the reduction tree instead
// of block by block, and writes histograms densely as one string.
const ResultVersion = 2

// Result is the full mergeable state of a study run: integer counts and
// histograms summed over blocks, the floating-point moments kept as the
// few nodes of a fixed reduction tree over the blocks (reduce.go), so that
// any way of running the same blocks folds to the same bits.
type Result struct {
	Layout      int                  `json:"layout"`
	Tool        string               `json:"tool"`
	Build       Build                `json:"build"` // the generator and the build that ran it
	Study       study.Info           `json:"study"`
	BlockSize   int                  `json:"block_size"`
	Predictions [][]study.Prediction `json:"predictions"` // [transform][sample size]
	Cells       [][]*Cell            `json:"cells"`       // [transform][sample size]
	Workers     int                  `json:"workers"`
	Elapsed     float64              `json:"elapsed_seconds"`
	Finished    string               `json:"finished,omitempty"` // when the last block was added, RFC 3339 UTC
	Complete    bool                 `json:"complete"`
	Shard       *Shard               `json:"shard,omitempty"`   // set on a shard's partial state
	MissingNote string               `json:"missing,omitempty"` // what a partial merge lacks
}

// Cell is the state of one transform at one sample size.
type Cell struct {
	N int `json:"n"`
	Counts
	Nodes       []Node    `json:"nodes"` // maximal complete nodes of the reduction tree, by first block
	Delta       Histogram `json:"delta_pivot"`
	Wald        Histogram `json:"wald_pivot"`
	mergedCache *Merged   `json:"-"`
}

// Counts are the integer tallies of a cell (or of one block of it); they
// add exactly, in any order.
type Counts struct {
	Replicates  int64 `json:"replicates"`
	Undefined   int64 `json:"undefined"`           // τ̂ or its standard error not finite, or no fit
	FitFailures int64 `json:"fit_failures"`        // of which: the estimator had no value
	NoEvents    int64 `json:"no_events,omitempty"` // of which: an arm's lifetimes had too few events
	// Of the fit failures, those whose cause the fitter named (the rest
	// did not converge); left out of result.json when 0, as for families
	// whose fits cannot fail.
	Separation     int64 `json:"separation,omitempty"`
	ZeroCounts     int64 `json:"zero_counts,omitempty"`
	SingularDesign int64 `json:"singular_design,omitempty"`
	// Events and Lifetimes count, over the replicates and the lifetime
	// arms the transform reads, the observations that were events and
	// all observations: summary.csv's events is their ratio.
	Events    int64 `json:"events,omitempty"`
	Lifetimes int64 `json:"lifetimes,omitempty"`
	ZeroSE    int64 `json:"zero_se"` // defined, but the plug-in standard error was 0
	Covered   int64 `json:"covered"`
	MissBelow int64 `json:"miss_below"`         // interval wholly below the truth
	MissAbove int64 `json:"miss_above"`         // interval wholly above the truth
	Rejected  int64 `json:"rejected,omitempty"` // interval excludes the transform's null
}

func (c *Counts) add(o Counts) {
	c.Replicates += o.Replicates
	c.Undefined += o.Undefined
	c.FitFailures += o.FitFailures
	c.Separation += o.Separation
	c.ZeroCounts += o.ZeroCounts
	c.SingularDesign += o.SingularDesign
	c.NoEvents += o.NoEvents
	c.Events += o.Events
	c.Lifetimes += o.Lifetimes
	c.ZeroSE += o.ZeroSE
	c.Covered += o.Covered
	c.MissBelow += o.MissBelow
	c.MissAbove += o.MissAbove
	c.Rejected += o.Rejected
}

// Failed is the number of fit failures with cause f.
func (c *Counts) Failed(f family.Failure) int64 {
	switch f {
	case family.Separation:
		return c.Separation
	case family.ZeroCounts:
		return c.ZeroCounts
	case family.Singular:
		return c.SingularDesign
	}
	return c.FitFailures - c.Separation - c.ZeroCounts - c.SingularDesign
}

// failed counts one fit failure with cause f.
func (c *Counts) failed(f family.Failure) {
	c.Undefined++
	c.FitFailures++
	switch f {
	case family.Separation:
		c.Separation++
	case family.ZeroCounts:
		c.ZeroCounts++
	case family.Singular:
		c.SingularDesign++
	}
}

// Merged is a cell's floating-point state folded over its nodes.
type Merged struct {
	Moments   Moments // of the defined estimates
	PluginVar float64 // mean plug-in variance over the defined replicates
	Width     float64 // mean interval width over the defined replicates
	// PluginOther is the mean other plug-in variance (Node.PluginOther).
	PluginOther float64
}

// Merged folds the cell's nodes left to right (see the canonical
// reduction in reduce.go), so any way of arriving at the same blocks
// gives the same bits; the fold is cached until a block is added.
func (c *Cell) Merged() Merged {
	if c.mergedCache != nil {
		return *c.mergedCache
	}
	var cm Merged
	for i, nd := range c.Nodes {
		if i == 0 {
			cm = Merged{Moments: nd.moments(), PluginVar: nd.PluginVar, Width: nd.Width, PluginOther: nd.PluginOther}
			continue
		}
		if nd.N == 0 {
			continue
		}
		before := float64(cm.Moments.N)
		cm.Moments.Merge(nd.moments())
		cm.PluginVar += (nd.PluginVar - cm.PluginVar) * float64(nd.N) / (before + float64(nd.N))
		cm.Width += (nd.Width - cm.Width) * float64(nd.N) / (before + float64(nd.N))
		cm.PluginOther = weighOther(cm.PluginOther, cm.Moments.N-nd.N, nd.PluginOther, nd.N)
	}
	c.mergedCache = &cm
	return cm
}

// addNode adds a node (a block's, or a part's in a merge) to the cell.
func (c *Cell) addNode(nd Node) error {
	nodes, err := insertNode(c.Nodes, nd)
	c.Nodes = nodes
	c.mergedCache = nil
	return err
}

// denseHistogram is a histogram's JSON form: its layout, its outside
// counts, and the counts of bins First onwards up to the last non-empty
// one, as decimal numbers separated by spaces in one string (a string,
// so that indenting the file does not put each count on a line of its
// own: at 10⁸ replicates every bin is in use).
type denseHistogram struct {
	Bins   int     `json:"bins"`
	Range  float64 `json:"range"`
	Below  int64   `json:"below"`
	Above  int64   `json:"above"`
	NaN    int64   `json:"nan"`
	First  int     `json:"first"`
	Counts string  `json:"counts"`
}

// MarshalJSON writes the histogram densely from its first to its last
// non-empty bin.
func (h Histogram) MarshalJSON() ([]byte, error) {
	s := denseHistogram{Bins: len(h.Counts), Range: PivotRange, Below: h.Below, Above: h.Above, NaN: h.NaN}
	first, last := len(h.Counts), -1
	for i, c := range h.Counts {
		if c != 0 {
			first, last = min(first, i), i
		}
	}
	if last >= 0 {
		s.First = first
		buf := make([]byte, 0, 8*(last-first+1))
		for i := first; i <= last; i++ {
			if i > first {
				buf = append(buf, ' ')
			}
			buf = strconv.AppendInt(buf, h.Counts[i], 10)
		}
		s.Counts = string(buf)
	}
	return json.Marshal(s)
}

// UnmarshalJSON reads the form written by MarshalJSON.
func (h *Histogram) UnmarshalJSON(b []byte) error {
	var s denseHistogram
	if err := json.Unmarshal(b, &s); err != nil {
		return err
	}
	if s.Bins != PivotBins || s.Range != PivotRange {
		return fmt.Errorf("histogram layout %d bins over ±%v, want %d over ±%v", s.Bins, s.Range, PivotBins, PivotRange)
	}
	*h = newHistogram()
	h.Below, h.Above, h.NaN = s.Below, s.Above, s.NaN
	if s.Counts == "" {
		return nil
	}
	i := s.First
	for _, f := range strings.Fields(s.Counts) {
		c, err := strconv.ParseInt(f, 10, 64)
		if err != nil || c < 0 || i < 0 || i >= PivotBins {
			return fmt.Errorf("histogram bin %d count %q out of range", i, f)
		}
		h.Counts[i] = c
		i++
	}
	return nil
}

// SaveResult writes r to path atomically: a temporary file in the same
// folder, renamed over the target, so a crash never leaves half a file.
func SaveResult(path string, r *Result) error { return SaveState(path, "result", r) }

// LoadResult reads a result file written by SaveResult.
// A file of another layout is refused before it is decoded, so that
// neither resume nor merge mixes layouts.
func LoadResult(path string) (*Result, error) {
	var r Result
	if err := LoadStateLayout(path, "result", ResultVersion, &r, func() study.Info { return r.Study }); err != nil {
		return nil, err
	}
	if len(r.Cells) != len(r.Study.Transforms) || len(r.Predictions) != len(r.Study.Transforms) {
		return nil, fmt.Errorf("%s is inconsistent: %d transforms but %d cell rows", path, len(r.Study.Transforms), len(r.Cells))
	}
	for t := range r.Cells {
		if len(r.Cells[t]) != len(r.Study.SampleSizes) || len(r.Predictions[t]) != len(r.Study.SampleSizes) {
			return nil, fmt.Errorf("%s is inconsistent: transform %d has %d cells for %d sample sizes", path, t, len(r.Cells[t]), len(r.Study.SampleSizes))
		}
	}
	return &r, nil
}

// SaveState writes a saved state (a run's result, a plan) to path as
// indented JSON, atomically; what names the kind of state in errors.
func SaveState(path, what string, v any) error {
	b, err := json.MarshalIndent(v, "", " ")
	if err != nil {
		return fmt.Errorf("encoding %s: %w", what, err)
	}
	return WriteFileAtomic(path, append(b, '\n'))
}

// LoadState reads the state at path into v and refuses it when the study
// text it carries (info, read after decoding) no longer matches its
// SHA-256: such a file was edited, and its numbers belong to no study.
func LoadState(path, what string, v any, info func() study.Info) error {
	b, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("reading %s: %w", what, err)
	}
	return decodeState(path, what, b, v, info)
}

// LoadStateLayout is LoadState for a state with a "layout" field: a file
// of another layout than layout is refused, before it is decoded, with a
// message that says it cannot be resumed or merged.
func LoadStateLayout(path, what string, layout int, v any, info func() study.Info) error {
	b, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("reading %s: %w", what, err)
	}
	var head struct {
		Layout int `json:"layout"`
	}
	if err := json.Unmarshal(b, &head); err != nil {
		return fmt.Errorf("%s is not a valid %s file: %w", path, what, err)
	}
	if head.Layout != layout {
		return fmt.Errorf("%s has %s layout %d; this deltaprobe reads layout %d only, and cannot report, resume or merge it: run the study again with this deltaprobe", path, what, head.Layout, layout)
	}
	return decodeState(path, what, b, v, info)
}

// decodeState is LoadState on the file's bytes b.
func decodeState(path, what string, b []byte, v any, info func() study.Info) error {
	if err := json.Unmarshal(b, v); err != nil {
		return fmt.Errorf("%s is not a valid %s file: %w", path, what, err)
	}
	if st := info(); study.SHA256Of(st.Source) != st.SHA256 {
		return fmt.Errorf("%s has been edited: its study text does not match its SHA-256 %.12s…", path, st.SHA256)
	}
	return nil
}

// WriteFileAtomic writes data to a temporary file beside path and renames
// it into place.
func WriteFileAtomic(path string, data []byte) error {
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	tmp := f.Name()
	if _, err := f.Write(data); err != nil {
		f.Close()
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Chmod(tmp, 0o644); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := os.Rename(tmp, path); err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}
