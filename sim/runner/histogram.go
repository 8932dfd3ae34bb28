package runner

import (
	"math"
)

// Histogram counts values in equal bins over a fixed range, with one
// count below it, one above it and one for NaN. Counts are integers, so
// histograms merge exactly in any order. Pivots are binned on [−Range,
// Range] in steps of 1/BinsPerUnit.
type Histogram struct {
	Counts []int64 // len PivotBins; bin i covers [lo + i·w, lo + (i+1)·w)
	Below  int64
	Above  int64
	NaN    int64
}

// The pivot histograms' fixed layout: fine enough that quantiles and the
// KS distance are resolved to well under their Monte Carlo error at 10⁶
// replicates.
const (
	PivotRange  = 10.0
	BinsPerUnit = 200
	PivotBins   = int(2 * PivotRange * BinsPerUnit)
)

func newHistogram() Histogram { return Histogram{Counts: make([]int64, PivotBins)} }

// Add counts one value.
func (h *Histogram) Add(z float64) {
	switch {
	case z < -PivotRange:
		h.Below++
	case z >= PivotRange:
		h.Above++
	case z >= -PivotRange:
		h.Counts[int((z+PivotRange)*BinsPerUnit)]++
	default:
		h.NaN++
	}
}

// Merge adds another histogram's counts.
func (h *Histogram) Merge(o *Histogram) {
	for i, c := range o.Counts {
		h.Counts[i] += c
	}
	h.Below += o.Below
	h.Above += o.Above
	h.NaN += o.NaN
}

func (h *Histogram) reset() {
	clear(h.Counts)
	h.Below, h.Above, h.NaN = 0, 0, 0
}

// Total counts the non-NaN values.
func (h *Histogram) Total() int64 {
	t := h.Below + h.Above
	for _, c := range h.Counts {
		t += c
	}
	return t
}

// BinEdge is the lower edge of bin i (i = PivotBins is the upper end).
func BinEdge(i int) float64 { return -PivotRange + float64(i)/BinsPerUnit }

// Quantile returns the p-quantile of the non-NaN values, interpolating
// linearly within a bin; ±Inf when it falls beyond the range.
func (h *Histogram) Quantile(p float64) float64 {
	total := h.Total()
	if total == 0 {
		return math.NaN()
	}
	target := p * float64(total)
	cum := float64(h.Below)
	if target < cum {
		return math.Inf(-1)
	}
	for i, c := range h.Counts {
		next := cum + float64(c)
		if c > 0 && target <= next {
			frac := (target - cum) / float64(c)
			return BinEdge(i) + frac/BinsPerUnit
		}
		cum = next
	}
	return math.Inf(1)
}

// KSNormal is the Kolmogorov–Smirnov distance between the binned values
// and N(0, 1), taken over the bin edges (so it errs low by at most the
// normal probability of one bin, about 0.002).
func (h *Histogram) KSNormal() float64 {
	total := float64(h.Total())
	if total == 0 {
		return math.NaN()
	}
	cum := float64(h.Below)
	worst := math.Abs(cum/total - stdNormalCDF(-PivotRange))
	for i, c := range h.Counts {
		cum += float64(c)
		if d := math.Abs(cum/total - stdNormalCDF(BinEdge(i+1))); d > worst {
			worst = d
		}
	}
	return worst
}

func stdNormalCDF(x float64) float64 { return 0.5 * math.Erfc(-x/math.Sqrt2) }
