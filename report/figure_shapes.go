package report

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The shapes figure shows, n by n, the distribution of the standardised
// estimate (τ̂ − τ0)/sd_delta that the delta method says is N(0, 1): a
// histogram under the N(0, 1) density, and its quantiles against N(0, 1)
// quantiles. Because the scale is the delta-method sd, not the simulated
// one, a shift shows bias, a spread wider or narrower than the curve shows
// a wrong variance, and a lean or long tail shows skewness or kurtosis.

// maxShapes caps the sample sizes drawn: past a dozen the small multiples
// grow too small to read, and the summary table has every n.
const maxShapes = 12

const shapeRowHeight = 2.45 * vg.Inch

// shapeIndices picks the sample sizes to draw: all of them when there are
// few; otherwise the smallest, the largest, the smallest adequate n and
// the one before it, and the rest spread evenly over the grid.
func shapeIndices(ns []int, smallest int) []int {
	k := len(ns)
	if k <= maxShapes {
		idx := make([]int, k)
		for i := range idx {
			idx[i] = i
		}
		return idx
	}
	pick := map[int]bool{0: true, k - 1: true}
	for i, n := range ns {
		if n == smallest {
			pick[i] = true
			if i > 0 {
				pick[i-1] = true
			}
		}
	}
	for m := maxShapes; len(pick) < maxShapes && m <= k; m++ {
		for j := 0; j < m && len(pick) < maxShapes; j++ {
			pick[int(math.Round(float64(j)*float64(k-1)/float64(m-1)))] = true
		}
	}
	idx := make([]int, 0, len(pick))
	for i := range pick {
		idx = append(idx, i)
	}
	sort.Ints(idx)
	return idx
}

// shapeRange is the half-width L of the common histogram axis [−L, L]: it
// holds the central 99.8% of every drawn n, but at least ±4 and at most
// ±6, so the body of a heavy-tailed estimate is not squeezed into a few
// bins; the share beyond is printed over the panel, and the quantile
// panel shows the tail.
func shapeRange(hs []*runner.Histogram) float64 {
	l := 4.0
	for _, h := range hs {
		if h.Total() == 0 {
			continue
		}
		for _, p := range []float64{0.001, 0.999} {
			q := math.Abs(h.Quantile(p))
			if math.IsInf(q, 0) {
				q = runner.PivotRange
			}
			l = math.Max(l, math.Ceil(q))
		}
	}
	return math.Min(l, maxShapeRange)
}

const maxShapeRange = 6.0

// shapeBinWidth coarsens the fine pivot bins so that a central bin holds
// about 100 replicates or more (its N(0, 1) share is about 0.4·w): fewer
// make a histogram of noise.
func shapeBinWidth(total int64) float64 {
	for _, w := range []float64{0.2, 0.25, 0.5} {
		if float64(total)*w*0.4 >= 100 {
			return w
		}
	}
	return 1
}

// rebin returns the bin edges and densities of h over [−l, l] in bins of
// width w, and the share of values outside that range. The density is
// over all non-NaN values, so the bars and the outside share add to one.
func rebin(h *runner.Histogram, l, w float64) (edges, dens []float64, outside float64) {
	total := float64(h.Total())
	if total == 0 {
		return nil, nil, 0
	}
	per := int(math.Round(w * runner.BinsPerUnit))
	first := int(math.Round((runner.PivotRange - l) * runner.BinsPerUnit))
	last := int(math.Round((runner.PivotRange + l) * runner.BinsPerUnit))
	inside := 0.0
	for i := first; i < last; i += per {
		var c int64
		for j := i; j < i+per && j < last; j++ {
			c += h.Counts[j]
		}
		edges = append(edges, runner.BinEdge(i))
		dens = append(dens, float64(c)/(total*w))
		inside += float64(c)
	}
	edges = append(edges, runner.BinEdge(last))
	return edges, dens, 1 - inside/total
}

// densityBars draws a histogram given as edges and densities.
type densityBars struct {
	edges, dens []float64
}

var barEdge = draw.LineStyle{Color: colMark, Width: vg.Points(0.75)}

func (b densityBars) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	var outline []vg.Point
	for i, d := range b.dens {
		x0, x1, y0, y1 := trX(b.edges[i]), trX(b.edges[i+1]), trY(0), trY(d)
		if d > 0 {
			c.FillPolygon(colBars, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
		}
		outline = append(outline, vg.Point{X: x0, Y: y1}, vg.Point{X: x1, Y: y1})
	}
	c.StrokeLines(barEdge, c.ClipLinesXY(outline)...)
}

func (b densityBars) DataRange() (xmin, xmax, ymin, ymax float64) {
	ymax = 0
	for _, d := range b.dens {
		ymax = math.Max(ymax, d)
	}
	return b.edges[0], b.edges[len(b.edges)-1], 0, ymax
}

func (b densityBars) Thumbnail(c *draw.Canvas) {
	pts := []vg.Point{{X: c.Min.X, Y: c.Min.Y}, {X: c.Max.X, Y: c.Min.Y}, {X: c.Max.X, Y: c.Max.Y}, {X: c.Min.X, Y: c.Max.Y}}
	c.FillPolygon(colBars, pts)
	c.StrokeLines(barEdge, append(pts, pts[0]))
}

func normalPDF(x float64) float64 { return math.Exp(-x*x/2) / math.Sqrt(2*math.Pi) }

// normalQuantile is Φ⁻¹(p).
func normalQuantile(p float64) float64 { return math.Sqrt2 * math.Erfinv(2*p-1) }

var (
	normalCurve = draw.LineStyle{Color: colSeries1, Width: vg.Points(2)}
	diagonal    = draw.LineStyle{Color: colRef, Width: vg.Points(1), Dashes: dashed}
	qqGlyph     = draw.GlyphStyle{Color: colSeries1, Radius: vg.Points(2.5), Shape: draw.CircleGlyph{}}
)

// qqPoints are the histogram's quantiles at normal quantiles z spaced
// evenly out to where about five replicates lie beyond, and no further
// than ±3.5.
func qqPoints(h *runner.Histogram) (plotter.XYs, float64) {
	total := float64(h.Total())
	if total == 0 {
		return nil, 3
	}
	zmax := math.Min(3.5, normalQuantile(1-math.Min(5/total, 0.25)))
	zmax = math.Floor(zmax*10) / 10
	var pts plotter.XYs
	// Steps of 0.2 keep the points apart, so they read as points and the
	// diagonal shows between them.
	steps := int(math.Floor(zmax * 5))
	for i := -steps; i <= steps; i++ {
		z := float64(i) / 5
		q := h.Quantile(0.5 * math.Erfc(-z/math.Sqrt2))
		if finite(q) {
			pts = append(pts, plotter.XY{X: z, Y: q})
		}
	}
	return pts, zmax
}

// shapesFigure draws the shapes figure of transform t with enc.
func shapesFigure(r *runner.Result, t int, rows []measure.Row, v measure.TransformVerdict, enc encodeFunc) ([]byte, int, int, error) {
	idx := shapeIndices(r.Study.SampleSizes, v.SmallestN)
	hs := make([]*runner.Histogram, len(idx))
	minTotal := int64(math.MaxInt64)
	for k, i := range idx {
		hs[k] = &r.Cells[t][i].Delta
		minTotal = min(minTotal, hs[k].Total())
	}
	l := shapeRange(hs)
	w := shapeBinWidth(minTotal)

	// One quantile axis for every n, so the eye compares like with like.
	type qq struct {
		pts  plotter.XYs
		zmax float64
	}
	qqs := make([]qq, len(idx))
	qlo, qhi, zmax := -3.0, 3.0, 0.0
	for k, h := range hs {
		pts, zm := qqPoints(h)
		qqs[k] = qq{pts, zm}
		zmax = math.Max(zmax, zm)
		for _, p := range pts {
			qlo, qhi = math.Min(qlo, p.Y), math.Max(qhi, p.Y)
		}
	}
	qlo, qhi = math.Max(qlo, -runner.PivotRange), math.Min(qhi, runner.PivotRange)

	var panels []panel
	hmax := normalPDF(0)
	var hists []*plot.Plot
	for k, i := range idx {
		n := r.Study.SampleSizes[i]
		hp := newPanel()
		hp.X.Label.Text = "standardised estimate"
		hp.Y.Label.Text = "density"
		edges, dens, outside := rebin(hs[k], l, w)
		if edges != nil {
			hp.Add(densityBars{edges: edges, dens: dens})
		}
		curve := plotter.NewFunction(normalPDF)
		curve.LineStyle = normalCurve
		curve.Samples = 241
		hp.Add(curve)
		hp.X.Min, hp.X.Max = -l, l
		hmax = math.Max(hmax, hp.Y.Max)
		// What the histogram leaves out is said over it: replicates with
		// no defined estimate, and the share beyond the axis.
		var notes []string
		cell := r.Cells[t][i]
		if cell.Undefined > 0 && cell.Replicates > 0 {
			notes = append(notes, fmt.Sprintf("%s%% undefined", fmtG(100*float64(cell.Undefined)/float64(cell.Replicates))))
		}
		if outside > 0 {
			notes = append(notes, fmt.Sprintf("%s%% beyond ±%g", fmtG(100*outside), l))
		}
		if hs[k].Total() == 0 {
			notes = []string{"no defined replicates"}
		}
		note := strings.Join(notes, ", ")
		panels = append(panels, panel{title: shapeTitle(r.Study, n), note: note, plot: hp})
		hists = append(hists, hp)

		qp := newPanel()
		qp.X.Label.Text = "N(0, 1) quantile"
		qp.Y.Label.Text = "simulated quantile"
		d, err := lineOf([]float64{math.Max(qlo, -zmax-0.3), math.Min(qhi, zmax+0.3)}, []float64{math.Max(qlo, -zmax-0.3), math.Min(qhi, zmax+0.3)}, diagonal)
		if err != nil {
			return nil, 0, 0, err
		}
		qp.Add(d)
		if len(qqs[k].pts) > 0 {
			sc, err := plotter.NewScatter(qqs[k].pts)
			if err != nil {
				return nil, 0, 0, err
			}
			sc.GlyphStyle = qqGlyph
			qp.Add(sc)
		}
		qp.X.Min, qp.X.Max = -zmax-0.3, zmax+0.3
		pad := 0.05 * (qhi - qlo)
		qp.Y.Min, qp.Y.Max = qlo-pad, qhi+pad
		qp.X.Tick.Marker = stepTicks{maxLabels: 4}
		qp.Y.Tick.Marker = stepTicks{maxLabels: 5}
		panels = append(panels, panel{plot: qp})
	}
	// One density axis too: the tallest histogram or the normal peak.
	for _, hp := range hists {
		hp.Y.Min, hp.Y.Max = 0, hmax*1.05
	}

	// Pairs of (histogram, quantiles) sit two to a row, the pairs further
	// apart than the panels within a pair.
	pairCols := 2
	if len(idx) == 1 {
		pairCols = 1
	}
	rowsN := (len(idx) + pairCols - 1) / pairCols
	info := r.Study.Transforms[t]
	sub := fmt.Sprintf("(estimate − truth) / delta-method sd, at each n; %d replicates per n; bins of width %g.", r.Study.Replicates, w)
	if len(idx) < len(r.Study.SampleSizes) {
		sub += fmt.Sprintf(" Showing %d of %d sample sizes.", len(idx), len(r.Study.SampleSizes))
	}
	legend := []legendItem{
		{label: "simulated, as a density", thumbs: []plot.Thumbnailer{densityBars{}}},
		{label: "N(0, 1) density", thumbs: []plot.Thumbnailer{hLine{style: normalCurve}}},
		{label: "simulated quantiles", thumbs: []plot.Thumbnailer{glyphThumb{qqGlyph}}},
		{label: "y = x: exactly N(0, 1)", thumbs: []plot.Thumbnailer{hLine{style: diagonal}}},
	}
	height := vg.Length(rowsN)*shapeRowHeight + 1.1*vg.Inch
	return encodeSized(enc, height, func(dc draw.Canvas) {
		rest := oneLineHeading(figureTitle(info, ": shape of the standardised estimate"), sub).draw(dc)
		lc := draw.Crop(rest, vg.Points(14), vg.Points(-14), 0, 0)
		used := drawLegend(lc, legend)
		rest = draw.Crop(rest, 0, 0, 0, -used-vg.Points(10))
		const gap = 36
		w := (rest.Max.X - rest.Min.X - vg.Length(pairCols-1)*vg.Points(gap)) / vg.Length(pairCols)
		for pc := 0; pc < pairCols; pc++ {
			var mine []panel
			for k := pc; k < len(idx); k += pairCols {
				mine = append(mine, panels[2*k], panels[2*k+1])
			}
			x0 := rest.Min.X + vg.Length(pc)*(w+vg.Points(gap))
			sub := draw.Canvas{Canvas: rest.Canvas, Rectangle: vg.Rectangle{
				Min: vg.Point{X: x0, Y: rest.Min.Y}, Max: vg.Point{X: x0 + w, Y: rest.Max.Y},
			}}
			runPanelGrid(panelRows(mine, rowsN, 2)).draw(sub)
		}
	})
}

// glyphThumb shows one marker in a legend.
type glyphThumb struct{ style draw.GlyphStyle }

func (g glyphThumb) Thumbnail(c *draw.Canvas) { c.DrawGlyph(g.style, c.Center()) }

func shapesAlt(r *runner.Result, t int) string {
	return fmt.Sprintf("Shapes for %s: for each sample size, a histogram of the standardised estimate under the N(0, 1) density, and its quantiles against N(0, 1) quantiles.",
		r.Study.Transforms[t].Name)
}

// shapeTitle heads the small multiple at n: "n = 40", and with several
// arms or an allocation the total as well, "n = 40 (N = 100)".
func shapeTitle(st study.Info, n int) string {
	if st.PerArm() {
		return fmt.Sprintf("n = %d (N = %d)", n, st.Total(n))
	}
	return fmt.Sprintf("n = %d", n)
}
