package runner

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"

	"deltaprobe/sim/study"
)

// ResultVersion is the layout version of result.json.
const ResultVersion = 1

// Result is the full mergeable state of a study run: integer counts and
// histograms summed over blocks, the floating-point moments kept block by
// block so that any set of blocks folds in block order to the same bits.
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
	Blocks      []BlockStat `json:"blocks"` // in block order
	Delta       Histogram   `json:"delta_pivot"`
	Wald        Histogram   `json:"wald_pivot"`
	mergedCache *Merged     `json:"-"`
}

// Counts are the integer tallies of a cell (or of one block of it); they
// add exactly, in any order.
type Counts struct {
	Replicates  int64 `json:"replicates"`
	Undefined   int64 `json:"undefined"`           // τ̂ or its standard error not finite, or no fit
	FitFailures int64 `json:"fit_failures"`        // of which: the estimator had no value
	NoEvents    int64 `json:"no_events,omitempty"` // of which: an arm's lifetimes had too few events
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
	c.NoEvents += o.NoEvents
	c.Events += o.Events
	c.Lifetimes += o.Lifetimes
	c.ZeroSE += o.ZeroSE
	c.Covered += o.Covered
	c.MissBelow += o.MissBelow
	c.MissAbove += o.MissAbove
	c.Rejected += o.Rejected
}

// BlockStat is the floating-point part of one block's state.
type BlockStat struct {
	Block     int     `json:"block"`
	N         int64   `json:"n"`
	Mean      float64 `json:"mean"`
	M2        float64 `json:"m2"`
	M3        float64 `json:"m3"`
	M4        float64 `json:"m4"`
	PluginVar float64 `json:"plugin_var"` // mean plug-in variance over the block's defined replicates
	Width     float64 `json:"width"`      // mean interval width over the block's defined replicates
}

// Merged is a cell's floating-point state folded over its blocks.
type Merged struct {
	Moments   Moments // of the defined estimates
	PluginVar float64 // mean plug-in variance over the defined replicates
	Width     float64 // mean interval width over the defined replicates
}

// Merged folds the blocks in block order, so any set of blocks gives the
// same bits; the fold is cached until a block is added.
func (c *Cell) Merged() Merged {
	if c.mergedCache != nil {
		return *c.mergedCache
	}
	var cm Merged
	blocks := slices.Clone(c.Blocks)
	slices.SortFunc(blocks, func(a, b BlockStat) int { return a.Block - b.Block })
	for _, b := range blocks {
		if b.N == 0 {
			continue
		}
		before := float64(cm.Moments.N)
		cm.Moments.Merge(Moments{N: b.N, Mean: b.Mean, M2: b.M2, M3: b.M3, M4: b.M4})
		cm.PluginVar += (b.PluginVar - cm.PluginVar) * float64(b.N) / (before + float64(b.N))
		cm.Width += (b.Width - cm.Width) * float64(b.N) / (before + float64(b.N))
	}
	c.mergedCache = &cm
	return cm
}

// sparseHistogram is a histogram's JSON form: its layout, its outside
// counts, and [bin, count] pairs for the non-empty bins.
type sparseHistogram struct {
	Bins   int        `json:"bins"`
	Range  float64    `json:"range"`
	Below  int64      `json:"below"`
	Above  int64      `json:"above"`
	NaN    int64      `json:"nan"`
	Counts [][2]int64 `json:"counts"`
}

// MarshalJSON writes the histogram sparsely.
func (h Histogram) MarshalJSON() ([]byte, error) {
	s := sparseHistogram{Bins: len(h.Counts), Range: PivotRange, Below: h.Below, Above: h.Above, NaN: h.NaN, Counts: [][2]int64{}}
	for i, c := range h.Counts {
		if c != 0 {
			s.Counts = append(s.Counts, [2]int64{int64(i), c})
		}
	}
	return json.Marshal(s)
}

// UnmarshalJSON reads the sparse form written by MarshalJSON.
func (h *Histogram) UnmarshalJSON(b []byte) error {
	var s sparseHistogram
	if err := json.Unmarshal(b, &s); err != nil {
		return err
	}
	if s.Bins != PivotBins || s.Range != PivotRange {
		return fmt.Errorf("histogram layout %d bins over ±%v, want %d over ±%v", s.Bins, s.Range, PivotBins, PivotRange)
	}
	*h = newHistogram()
	h.Below, h.Above, h.NaN = s.Below, s.Above, s.NaN
	for _, p := range s.Counts {
		if p[0] < 0 || p[0] >= int64(PivotBins) || p[1] < 0 {
			return fmt.Errorf("histogram bin %d count %d out of range", p[0], p[1])
		}
		h.Counts[p[0]] = p[1]
	}
	return nil
}

// MarshalJSON writes a block as a compact array [block, n, mean, m2, m3,
// m4, plugin_var, width]; a non-finite value (a heavy tail can overflow m4) is
// written as a string, since JSON has no NaN or infinity.
func (b BlockStat) MarshalJSON() ([]byte, error) {
	buf := []byte("[" + strconv.Itoa(b.Block) + "," + strconv.FormatInt(b.N, 10))
	for _, x := range []float64{b.Mean, b.M2, b.M3, b.M4, b.PluginVar, b.Width} {
		buf = append(buf, ',')
		if math.IsNaN(x) || math.IsInf(x, 0) {
			buf = strconv.AppendQuote(buf, strconv.FormatFloat(x, 'g', -1, 64))
		} else {
			buf = strconv.AppendFloat(buf, x, 'g', -1, 64)
		}
	}
	return append(buf, ']'), nil
}

// UnmarshalJSON reads the form written by MarshalJSON, and the 7-field
// form written before the width was kept, whose width is unknown (NaN,
// an empty width column).
func (b *BlockStat) UnmarshalJSON(data []byte) error {
	var parts []json.RawMessage
	if err := json.Unmarshal(data, &parts); err != nil {
		return err
	}
	if len(parts) != 7 && len(parts) != 8 {
		return fmt.Errorf("block record has %d fields, want 8", len(parts))
	}
	if len(parts) == 7 {
		b.Width = math.NaN()
	}
	if err := json.Unmarshal(parts[0], &b.Block); err != nil {
		return fmt.Errorf("block index: %w", err)
	}
	if err := json.Unmarshal(parts[1], &b.N); err != nil {
		return fmt.Errorf("block count: %w", err)
	}
	for i, dst := range []*float64{&b.Mean, &b.M2, &b.M3, &b.M4, &b.PluginVar, &b.Width}[:len(parts)-2] {
		raw := parts[i+2]
		if len(raw) > 0 && raw[0] == '"' {
			var s string
			if err := json.Unmarshal(raw, &s); err != nil {
				return err
			}
			x, err := strconv.ParseFloat(s, 64)
			if err != nil {
				return fmt.Errorf("block value %q: %w", s, err)
			}
			*dst = x
			continue
		}
		if err := json.Unmarshal(raw, dst); err != nil {
			return fmt.Errorf("block value: %w", err)
		}
	}
	return nil
}

// SaveResult writes r to path atomically: a temporary file in the same
// folder, renamed over the target, so a crash never leaves half a file.
func SaveResult(path string, r *Result) error { return SaveState(path, "result", r) }

// LoadResult reads a result file written by SaveResult.
func LoadResult(path string) (*Result, error) {
	var r Result
	if err := LoadState(path, "result", &r, func() study.Info { return r.Study }); err != nil {
		return nil, err
	}
	if r.Layout != ResultVersion {
		return nil, fmt.Errorf("%s has result layout %d; this deltaprobe reads layout %d", path, r.Layout, ResultVersion)
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
