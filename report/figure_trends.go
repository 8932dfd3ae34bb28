package report

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The trends figure sets every criterion against n, panel by panel, on one
// log axis, so a reader sees where each one enters its band and which one
// holds the answer back. Bars are the Monte Carlo intervals the verdicts
// use, so "the bar lies inside the grey band" is exactly "the criterion
// passes at that n".

const trendsHeight = 10 * vg.Inch

// Two-sided 95% normal quantile, as sim uses for its Monte Carlo intervals.
const z95 = 1.959963984540054

// trendAxes holds what every trends panel shares: the x positions and the
// smallest adequate n.
type trendAxes struct {
	ns       []int
	xmin     float64
	xmax     float64
	dodge    float64 // factor by which a second series is shifted right
	mark     int     // smallest adequate n, 0 if none
	tickGap  float64
	criteria study.Criteria
	level    float64
	xlabel   string
	// pluginLabel names the plug-in series of the variance panel; empty
	// means "mean plug-in / simulated".
	pluginLabel string
	// otherLabel names the series of the plug-in variance the intervals do
	// not use; empty when the run kept none.
	otherLabel string
}

func newTrendAxes(r *runner.Result, v measure.TransformVerdict) trendAxes {
	ns := r.Study.SampleSizes
	lo, hi := float64(ns[0]), float64(ns[len(ns)-1])
	span := math.Max(math.Log10(hi/lo), 0.3)
	return trendAxes{
		ns:   ns,
		xmin: lo / math.Pow(10, 0.06*span),
		xmax: hi * math.Pow(10, 0.06*span),
		// Two series at one n sit a little apart so their bars do not
		// hide each other; the shift is a fixed share of the axis.
		dodge:    math.Pow(10, 0.01*span),
		mark:     v.SmallestN,
		tickGap:  0.09 * span,
		criteria: r.Study.Criteria,
		level:    r.Study.Level,
		xlabel:   sampleSizeLabel(r.Study),
	}
}

// sampleSizeLabel is the trends figure's x-axis label; the subtitle says
// what a base size n stands for.
func sampleSizeLabel(st study.Info) string {
	if st.PerArm() {
		return "base sample size n per arm (log scale)"
	}
	return "sample size n (log scale)"
}

// newPanel is a panel with the trend figure's shared log n axis.
func (a trendAxes) newPanel(ylabel string) *plot.Plot {
	p := newPanel()
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = sampleSizeTicks{ns: a.ns, minGap: a.tickGap}
	p.X.Label.Text = a.xlabel
	p.Y.Label.Text = ylabel
	p.Y.Tick.Marker = stepTicks{maxLabels: 5}
	return p
}

// useLogY puts p's y axis on a log scale when the positive values vs
// span more than a factor of four: a heavy tail can push a variance ratio
// to 10⁶ at small n, and a linear axis would then flatten every other
// point onto the band. A ratio is read as well on a log axis, where 1/2
// and 2 lie equally far from 1. A value at or below zero keeps the
// axis linear.
func useLogY(p *plot.Plot, vs ...[]float64) bool {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range vs {
		for _, x := range v {
			if math.IsNaN(x) || math.IsInf(x, 1) {
				continue
			}
			if x <= 0 {
				return false
			}
			lo, hi = math.Min(lo, x), math.Max(hi, x)
		}
	}
	if !(hi/lo > 4) {
		return false
	}
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = decadeTicks{maxLabels: 6}
	p.Y.Label.Text += " (log scale)"
	return true
}

// finish fixes the ranges after every plotter is in: x to the shared
// range, y to the data with a margin, and room at the top for the label
// of the smallest adequate n.
func (a trendAxes) finish(p *plot.Plot, yfloor float64) {
	p.X.Min, p.X.Max = a.xmin, a.xmax
	lo, hi := p.Y.Min, p.Y.Max
	if !finite(lo, hi) {
		lo, hi = 0, 1
	}
	top := 0.06
	if a.mark > 0 {
		top = 0.2
	}
	if _, isLog := p.Y.Scale.(plot.LogScale); isLog {
		f := hi / lo
		p.Y.Min, p.Y.Max = lo/math.Pow(f, 0.06), hi*math.Pow(f, top)
	} else {
		if !math.IsNaN(yfloor) {
			lo = math.Min(lo, yfloor)
		}
		if hi-lo < 1e-12 {
			d := math.Max(math.Abs(hi)*0.05, 0.01)
			lo, hi = lo-d, hi+d
		}
		span := hi - lo
		p.Y.Min, p.Y.Max = lo-0.06*span, hi+top*span
		if !math.IsNaN(yfloor) && lo >= yfloor {
			p.Y.Min = math.Max(p.Y.Min, yfloor)
		}
	}
	if a.mark > 0 {
		p.Add(vMark{at: float64(a.mark), label: "n = " + strconv.Itoa(a.mark)})
	}
}

func xs(rows []measure.Row, factor float64) []float64 {
	out := make([]float64, len(rows))
	for i, r := range rows {
		out[i] = float64(r.N) * factor
	}
	return out
}

func column(rows []measure.Row, f func(measure.Row) float64) []float64 {
	out := make([]float64, len(rows))
	for i, r := range rows {
		out[i] = f(r)
	}
	return out
}

// addSeries adds each of ss to p, and its entry to the legend.
func addSeries(p *plot.Plot, legend *[]legendItem, ss ...series) error {
	for _, s := range ss {
		thumbs, err := s.add(p)
		if err != nil {
			return fmt.Errorf("%s: %w", s.label, err)
		}
		if thumbs != nil {
			*legend = append(*legend, legendItem{label: s.label, thumbs: thumbs})
		}
	}
	return nil
}

// checkedSeries is criterion cr's measure by n, under label, with the
// interval its verdict uses as bars.
func checkedSeries(label string, rows []measure.Row, cr *measure.Criterion) series {
	return series{label: label, x: xs(rows, 1),
		y:  column(rows, func(r measure.Row) float64 { return r.Get(cr.Measure) }),
		lo: column(rows, func(r measure.Row) float64 { return r.Check(cr).Low }),
		hi: column(rows, func(r measure.Row) float64 { return r.Check(cr).High }),
	}
}

var (
	refStyle  = draw.LineStyle{Color: colRef, Width: vg.Points(1.25), Dashes: dashed}
	noiseLine = draw.LineStyle{Color: colRef, Width: vg.Points(1.25), Dashes: dotted}
	idealLine = draw.LineStyle{Color: colRef, Width: vg.Points(0.5)}
)

func (a trendAxes) variancePanel(rows []measure.Row) (panel, error) {
	p := a.newPanel("variance ratio")
	c := a.criteria.VarRatio
	band := hBand{lo: c[0], hi: c[1], color: colBand}
	p.Add(band, hLine{at: 1, style: idealLine})
	legend := []legendItem{}
	// The bars of the delta ratio are the interval the variance verdict
	// uses: emp_var's Monte Carlo interval, inverted (delta_var is exact).
	delta := checkedSeries("delta-method / simulated", rows, measure.VarianceCheck)
	// The plug-in ratio shares emp_var as its denominator, so it takes the
	// same relative interval. That leaves out the Monte Carlo error of the
	// mean plug-in variance itself, an average over every replicate and far
	// smaller than that of emp_var.
	scale := func(r measure.Row, end float64) float64 {
		if !(r.Get(measure.VarRatio) > 0) {
			return math.NaN()
		}
		return r.Get(measure.PluginRatio) * end / r.Get(measure.VarRatio)
	}
	otherScale := func(r measure.Row, end float64) float64 {
		if !(r.Get(measure.VarRatio) > 0) {
			return math.NaN()
		}
		return r.Get(measure.PluginOtherRatio) * end / r.Get(measure.VarRatio)
	}
	label := a.pluginLabel
	if label == "" {
		label = "mean plug-in / simulated"
	}
	plugin := series{label: label, x: xs(rows, a.dodge), style: 1,
		y:  column(rows, func(r measure.Row) float64 { return r.Get(measure.PluginRatio) }),
		lo: column(rows, func(r measure.Row) float64 { return scale(r, r.Check(measure.VarianceCheck).Low) }),
		hi: column(rows, func(r measure.Row) float64 { return scale(r, r.Check(measure.VarianceCheck).High) }),
	}
	all := []series{delta, plugin}
	if a.otherLabel != "" {
		other := series{label: a.otherLabel, x: xs(rows, 1/a.dodge), style: 2,
			y:  column(rows, func(r measure.Row) float64 { return r.Get(measure.PluginOtherRatio) }),
			lo: column(rows, func(r measure.Row) float64 { return otherScale(r, r.Check(measure.VarianceCheck).Low) }),
			hi: column(rows, func(r measure.Row) float64 { return otherScale(r, r.Check(measure.VarianceCheck).High) }),
		}
		useLogY(p, delta.y, delta.lo, delta.hi, plugin.y, plugin.lo, plugin.hi, other.y, other.lo, other.hi, c[:])
		all = append(all, other)
	} else {
		useLogY(p, delta.y, delta.lo, delta.hi, plugin.y, plugin.lo, plugin.hi, c[:])
	}
	if err := addSeries(p, &legend, all...); err != nil {
		return panel{}, err
	}
	legend = append(legend, legendItem{label: "accepted " + fmtBand(c), thumbs: []plot.Thumbnailer{band}})
	a.finish(p, math.NaN())
	return panel{title: "Variance: delta method against simulation", plot: p, legend: legend}, nil
}

// powerPanel sets the simulated rejection rate of the test of the null,
// with the Wilson interval the power criterion uses, beside the rate the
// delta method predicts and the target.
func (a trendAxes) powerPanel(rows []measure.Row) (panel, error) {
	p := a.newPanel("rejection rate (proportion)")
	target := hLine{at: a.criteria.PowerTarget(), style: refStyle}
	p.Add(target)
	legend := []legendItem{}
	sim := checkedSeries("simulated", rows, measure.PowerCheck)
	pred := series{label: "delta-method prediction", x: xs(rows, a.dodge), style: 1,
		y: column(rows, func(r measure.Row) float64 { return r.Get(measure.RejectDelta) })}
	if err := addSeries(p, &legend, sim, pred); err != nil {
		return panel{}, err
	}
	legend = append(legend, legendItem{label: "target " + fmtG(a.criteria.PowerTarget()), thumbs: []plot.Thumbnailer{target}})
	a.finish(p, 0)
	return panel{title: "Power: rejections of the null", plot: p, legend: legend}, nil
}

func (a trendAxes) coveragePanel(rows []measure.Row) (panel, error) {
	p := a.newPanel("coverage (proportion)")
	c := a.criteria.Coverage
	band := hBand{lo: c[0], hi: c[1], color: colBand}
	nominal := hLine{at: a.level, style: refStyle}
	p.Add(band, nominal)
	legend := []legendItem{}
	cov := checkedSeries("simulated coverage", rows, measure.CoverageCheck)
	if err := addSeries(p, &legend, cov); err != nil {
		return panel{}, err
	}
	legend = append(legend,
		legendItem{label: "nominal " + fmtG(a.level), thumbs: []plot.Thumbnailer{nominal}},
		legendItem{label: "accepted " + fmtBand(c), thumbs: []plot.Thumbnailer{band}})
	a.finish(p, math.NaN())
	return panel{title: "Coverage of the Wald interval", plot: p, legend: legend}, nil
}

// missBars is the normal-approximation 95% interval of a share p of R
// replicates, the same form as sim's coverage MCSE. The miss rates are
// diagnostic: they enter no verdict, so no sharper interval is needed.
func missBars(rows []measure.Row, share func(measure.Row) float64) (lo, hi []float64) {
	for _, r := range rows {
		p, n := share(r), float64(r.Count(measure.Replicates))
		h := math.NaN()
		if n > 0 {
			h = z95 * math.Sqrt(p*(1-p)/n)
		}
		lo, hi = append(lo, math.Max(p-h, 0)), append(hi, p+h)
	}
	return lo, hi
}

func (a trendAxes) missPanel(rows []measure.Row) (panel, error) {
	p := a.newPanel("miss rate (proportion)")
	nominal := hLine{at: (1 - a.level) / 2, style: refStyle}
	p.Add(nominal)
	legend := []legendItem{}
	below := func(r measure.Row) float64 { return r.Get(measure.MissBelow) }
	above := func(r measure.Row) float64 { return r.Get(measure.MissAbove) }
	blo, bhi := missBars(rows, below)
	alo, ahi := missBars(rows, above)
	if err := addSeries(p, &legend,
		series{label: "below the truth", x: xs(rows, 1), y: column(rows, below), lo: blo, hi: bhi},
		series{label: "above the truth", x: xs(rows, a.dodge), y: column(rows, above), lo: alo, hi: ahi, style: 1},
	); err != nil {
		return panel{}, err
	}
	legend = append(legend, legendItem{label: "nominal " + fmtG((1-a.level)/2) + " each", thumbs: []plot.Thumbnailer{nominal}})
	a.finish(p, 0)
	return panel{title: "One-sided misses of the interval", plot: p, legend: legend}, nil
}

func (a trendAxes) biasPanel(rows []measure.Row) (panel, error) {
	p := a.newPanel("bias / delta-method sd")
	b := a.criteria.StdBias
	band := hBand{lo: -b, hi: b, color: colBand}
	p.Add(band, hLine{at: 0, style: idealLine})
	legend := []legendItem{}
	sim2 := checkedSeries("simulated bias", rows, measure.BiasCheck)
	pred := series{label: "second-order prediction", x: xs(rows, a.dodge), style: 1,
		y: column(rows, func(r measure.Row) float64 { return r.Get(measure.Bias2nd) / math.Sqrt(r.Get(measure.DeltaVar)) }),
	}
	if err := addSeries(p, &legend, sim2, pred); err != nil {
		return panel{}, err
	}
	legend = append(legend, legendItem{label: "accepted ±" + fmtG(b), thumbs: []plot.Thumbnailer{band}})
	a.finish(p, math.NaN())
	return panel{title: "Bias, in delta-method standard deviations", plot: p, legend: legend}, nil
}

// ksNoise is the 95% point of the Kolmogorov distribution over √R
// (Kolmogorov 1933; the asymptotic constant 1.358): a pivot that is
// exactly N(0, 1) reaches this distance by chance one time in twenty. The
// binned KS distance errs low by about 0.002, so the line is a guide.
const ksNoise = 1.3581

// trendsSubtitle is transform t's trends figure's subtitle: the
// replicates, level and interval, the verdict, what n stands for and the
// censoring.
func trendsSubtitle(r *runner.Result, t int, v measure.TransformVerdict) string {
	sub := fmt.Sprintf("Delta method against %d simulated replicates per n; Wald intervals at level %s. %s",
		r.Study.Replicates, fmtG(r.Study.Level), verdictPhrase(v))
	if customRecipe(r.Study) {
		sub = fmt.Sprintf("Delta method against %d simulated replicates per n; intervals at level %s: %s. %s",
			r.Study.Replicates, fmtG(r.Study.Level), recipeWords(r.Study, t), verdictPhrase(v))
	}
	if note := armSizesNote(r.Study, exampleN(r.Study, v.SmallestN)); note != "" {
		sub += " " + note
	}
	if short := fitShort(r.Study, t); short != "" {
		sub += " " + short
	}
	if note := censoringNote(r.Study); note != "" {
		sub += " " + note
	}
	return sub
}

func (a trendAxes) ksPanel(r *runner.Result, t int, rows []measure.Row) (panel, error) {
	p := a.newPanel("KS distance")
	legend := []legendItem{}
	noise := make([]float64, len(rows))
	for i := range rows {
		h := r.Cells[t][i].Wald
		noise[i] = math.NaN()
		if tot := h.Total(); tot > 0 {
			noise[i] = ksNoise / math.Sqrt(float64(tot))
		}
	}
	ks := series{label: "Wald pivot against N(0, 1)", x: xs(rows, 1), y: column(rows, func(r measure.Row) float64 { return r.Get(measure.KSPivot) })}
	if err := addSeries(p, &legend, ks); err != nil {
		return panel{}, err
	}
	th, err := noiseSeries(p, xs(rows, 1), noise)
	if err != nil {
		return panel{}, err
	}
	if th != nil {
		legend = append(legend, legendItem{label: "Monte Carlo noise (95%)", thumbs: th})
	}
	a.finish(p, 0)
	return panel{title: "Normality of the Wald pivot", plot: p, legend: legend}, nil
}

// trendsFigure draws the trends figure of transform t with enc.
func trendsFigure(r *runner.Result, t int, rows []measure.Row, v measure.TransformVerdict, enc encodeFunc) ([]byte, int, int, error) {
	a := newTrendAxes(r, v)
	a.pluginLabel = pluginLabel(r.Study, t)
	a.otherLabel = otherLabel(r.Study, t, rows)
	var panels []panel
	makers := []func() (panel, error){
		func() (panel, error) { return a.variancePanel(rows) },
		func() (panel, error) { return a.coveragePanel(rows) },
		func() (panel, error) { return a.biasPanel(rows) },
		func() (panel, error) { return a.missPanel(rows) },
		func() (panel, error) { return a.ksPanel(r, t, rows) },
	}
	tested := r.Study.Transforms[t].Null != nil
	if tested {
		makers = append(makers[:2], append([]func() (panel, error){func() (panel, error) { return a.powerPanel(rows) }}, makers[2:]...)...)
	}
	for _, mk := range makers {
		pn, err := mk()
		if err != nil {
			return nil, 0, 0, err
		}
		panels = append(panels, pn)
	}
	info := r.Study.Transforms[t]
	title := figureTitle(info, "")
	sub := trendsSubtitle(r, t, v)
	key := trendsKey(rows, v, measure.GridDecisions(r.Study))
	if readsMisfit(r.Study, t) {
		key = append(key, "The fit differs from the data model: truth is the transform at θ*, the pseudo-true parameter, and the delta method uses the sandwich variance at θ*.")
	}
	if otherLabel(r.Study, t, rows) != "" {
		key = append(key, "The dotted green line is the mean of the plug-in variance the intervals do not use, over the simulated variance: near 1 where that variance would have suited the interval.")
	}
	// A subtitle too long for one line wraps, and the figure grows by
	// the lines it adds, in whole pixels, so the panels keep their room.
	head := wrappedHeading(title, sub)
	rowsOfPanels, base := 3, trendsHeight
	if tested {
		rowsOfPanels, base = 4, trendsHeight*3/2
	}
	height := base + head.height() - oneLineHeading(title, sub).height()
	height = vg.Length(math.Ceil(float64(height.Dots(figDPI)))) / figDPI * vg.Inch
	return encodeSized(enc, height, func(dc draw.Canvas) {
		grid := runPanelGrid(panelRows(panels, rowsOfPanels, 2))
		keyDrawn := false // in the first empty slot only
		grid.extra = func(c draw.Canvas) {
			if !keyDrawn {
				drawKey(c, key)
				keyDrawn = true
			}
		}
		grid.draw(head.draw(dc))
	})
}

// runPanelGrid spaces the panels of the run's figures, the trends and the
// shapes alike.
func runPanelGrid(panels [][]*panel) panelGrid {
	return panelGrid{panels: panels, gapX: vg.Points(30), gapY: vg.Points(16), titleGap: vg.Points(6), stripGap: vg.Points(6)}
}

// noiseSeries draws the Monte Carlo noise level as a dotted black line.
func noiseSeries(p *plot.Plot, x, y []float64) ([]plot.Thumbnailer, error) {
	var px, py []float64
	for i := range x {
		if finite(y[i]) {
			px, py = append(px, x[i]), append(py, y[i])
		}
	}
	if len(px) == 0 {
		return nil, nil
	}
	l, err := lineOf(px, py, noiseLine)
	if err != nil {
		return nil, err
	}
	p.Add(l)
	return []plot.Thumbnailer{l}, nil
}

// trendsKey explains the figure in words and lists the verdicts by n, so
// the PNG can be read on its own, away from the page.
func trendsKey(rows []measure.Row, v measure.TransformVerdict, d measure.Decisions) []string {
	paras := []string{
		fmt.Sprintf("Bars are the Monte Carlo intervals the verdict uses, at z = %.3f (Wilson intervals for the coverage), so that the answer holds with family-wise confidence %s over its %d decisions (Bonferroni). ", d.Z, fmtG(d.Confidence), d.Count) +
			"A criterion passes at n when its bar lies inside the grey band, fails when the bar lies wholly outside it, and is unclear otherwise.",
		"Only variance, coverage and bias decide the verdict; the one-sided misses and the KS distance help to see why.",
	}
	if len(rows) > 0 && !slices.Equal(decidingNames(rows[0]), []string{"coverage", "variance", "bias"}) {
		paras[1] = "Only " + criteriaInWords(rows[0]) + " decide the verdict (the study's decide list); the other panels help to see why."
	}
	if v.SmallestN > 0 {
		paras = append(paras, fmt.Sprintf("The dash-dot line marks n = %d, the smallest n from which every criterion passes at that n and every larger n of the grid.", v.SmallestN))
	}
	paras = append(paras, "Verdict by n: "+verdictRuns(rows)+".")
	return paras
}

// decidingNames names the criteria that decide row r, in table order.
func decidingNames(r measure.Row) []string {
	var names []string
	for _, c := range measure.Criteria() {
		if !r.Check(c).Advisory {
			names = append(names, c.Name)
		}
	}
	return names
}

// verdictRuns condenses the verdicts by n into runs, "5–10 fail; 20–160 pass".
func verdictRuns(rows []measure.Row) string {
	var parts []string
	for i := 0; i < len(rows); {
		j := i
		for j+1 < len(rows) && rows[j+1].Verdict == rows[i].Verdict {
			j++
		}
		span := strconv.Itoa(rows[i].N)
		if j > i {
			span += "–" + strconv.Itoa(rows[j].N)
		}
		parts = append(parts, span+" "+string(rows[i].Verdict))
		i = j + 1
	}
	return strings.Join(parts, "; ")
}

// verdictPhrase is the one-line answer for a figure's subtitle.
func verdictPhrase(v measure.TransformVerdict) string {
	switch v.Status {
	case measure.Adequate:
		if v.Limiting == "none" || v.Limiting == "" {
			return fmt.Sprintf("Adequate at every n of the grid (from n = %d).", v.SmallestN)
		}
		return fmt.Sprintf("Smallest adequate n = %d; limiting: %s.", v.SmallestN, v.Limiting)
	case measure.NotReached:
		return fmt.Sprintf("Not adequate within the grid; %s fails at the largest n.", v.Limiting)
	case measure.StatusUnclear:
		if v.High == 0 {
			return fmt.Sprintf("Undecided: %s is unclear at the largest n; the smallest adequate n is %s or more, if any.", v.Limiting, formatN(v.Low))
		}
		return fmt.Sprintf("Undecided: the smallest adequate n lies in %d–%d; more replicates would decide it.", v.Low, v.High)
	}
	return ""
}

func fmtBand(b [2]float64) string { return fmtG(b[0]) + "–" + fmtG(b[1]) }

func trendsAlt(r *runner.Result, t int, v measure.TransformVerdict) string {
	info := r.Study.Transforms[t]
	if info.Null != nil {
		return fmt.Sprintf("Trends for %s against n: variance ratio, coverage, rejection rate of the test of %s = %s against the delta method's prediction, standardised bias, one-sided miss rates and KS distance, each with its accepted band or target. %s",
			info.Name, info.Name, fmtG(*info.Null), verdictPhrase(v))
	}
	return fmt.Sprintf("Trends for %s against n: variance ratio, coverage, standardised bias, one-sided miss rates and KS distance, each with its accepted band. %s",
		info.Name, verdictPhrase(v))
}
