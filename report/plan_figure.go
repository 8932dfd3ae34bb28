package report

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/study"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The plan figure shows the search for one transform: every n it
// evaluated, on the log n axis of the whole search range, with the
// interval each decision used; beside it the same near the answer, one
// integer at a time, where the search crowds its evaluations; and under
// both, the replicates each decision took. A reader sees where the
// answer lies in the range, why the n just below it was not enough, what
// the window above it showed, and that the budget went where the
// decisions were hard.

// KindPlan is the kind of the plan's figure, as it ends the file name.
const KindPlan = "plan"

// The figure's height above its key; the key adds what its text needs.
const planBodyHeight = 10 * vg.Inch

// planSteps returns the evaluations of transform name, in evaluation order.
func planSteps(p *plan.Result, name string) []plan.Step {
	var out []plan.Step
	for _, st := range p.Steps {
		if st.Transform == name {
			out = append(out, st)
		}
	}
	return out
}

// planView is what one transform's figure and page section need from
// the plan, worked out once.
type planView struct {
	info       study.TransformInfo
	steps      []plan.Step
	verdict    measure.TransformVerdict
	window     int   // as the plan reports it
	windowTop  int   // the largest n the window reached, 0 if none
	answer     int   // the search's answer, n_high: the smallest adequate n when the bracket closes; 0 if none
	oscill     []int // failing n found above a candidate
	undecided  []int
	largestN   int   // the largest n evaluated
	replicates int64 // replicates behind this transform's decisions
}

func newPlanView(p *plan.Result, t int) planView {
	tr := p.Study.Transforms[t]
	v := planView{info: tr, steps: planSteps(p, tr.Name)}
	if t < len(p.Verdicts) {
		v.verdict = p.Verdicts[t]
	} else {
		v.verdict = measure.TransformVerdict{Transform: tr.Name, Status: measure.StatusUnclear}
	}
	if t < len(p.Window) {
		v.window = p.Window[t]
	}
	if t < len(p.Oscillations) {
		v.oscill = p.Oscillations[t]
	}
	if t < len(p.Undecided) {
		v.undecided = p.Undecided[t]
	}
	v.answer = v.verdict.High
	if a := v.answer; a > 0 && v.window > 0 {
		v.windowTop = min(a+v.window, p.Spec.NMax)
		if v.windowTop <= a {
			v.windowTop = 0
		}
	}
	for _, st := range v.steps {
		v.largestN = max(v.largestN, st.N)
		v.replicates += st.Replicates
	}
	return v
}

// stepAt returns the evaluation at n, if there is one.
func (v planView) stepAt(n int) (plan.Step, bool) {
	for _, st := range v.steps {
		if st.N == n {
			return st, true
		}
	}
	return plan.Step{}, false
}

// below returns the largest evaluated n under n, if there is one.
func (v planView) below(n int) (plan.Step, bool) {
	var best plan.Step
	found := false
	for _, st := range v.steps {
		if st.N < n && (!found || st.N > best.N) {
			best, found = st, true
		}
	}
	return best, found
}

// zoomRange is the stretch of integers shown near the answer: from the
// evaluated n just below the answer (if it is near) to the top of the
// window. ok is false when there is no answer to zoom on.
func (v planView) zoomRange() (lo, hi int, ok bool) {
	a := v.answer
	if a <= 0 {
		return 0, 0, false
	}
	lo, hi = a, max(a, v.windowTop)
	if b, found := v.below(a); found && a-b.N <= max(v.window, 3)+1 {
		lo = b.N
	} else if found {
		lo = a - 1
	}
	// A couple of integers either side at least, so a lone point does
	// not sit on the frame.
	if hi-lo < 4 {
		lo, hi = lo-1, hi+1
	}
	return lo, hi, true
}

// PlanFigures renders the plan's figure of every transform in each of
// formats (none: the DefaultFormats), in study order, one at a time; each
// is a pure function of the saved plan p and comes out byte for byte the
// same every time.
func PlanFigures(p *plan.Result, formats ...Format) ([]Figure, error) {
	var figs []Figure
	err := eachPlanFigure(p, formats, func(f Figure) error {
		figs = append(figs, f)
		return nil
	})
	if err != nil {
		return nil, err
	}
	return figs, nil
}

// eachPlanFigure renders the figures of PlanFigures one at a time and
// hands each to emit before drawing the next (see eachFigure).
func eachPlanFigure(p *plan.Result, formats []Format, emit func(Figure) error) error {
	formats, err := checkFormats(formats)
	if err != nil {
		return err
	}
	stems := transformStems(p.Study.Transforms)
	for t := range stems {
		v := newPlanView(p, t)
		stem := stems[t] + "-" + KindPlan
		f := Figure{Transform: t, Kind: KindPlan, Alt: planAlt(v)}
		var err error
		f.Files, f.Width, f.Height, err = renderFormats(stem, formats, func(enc encodeFunc) ([]byte, int, int, error) {
			return planFigure(p, v, enc)
		})
		if err != nil {
			return fmt.Errorf("drawing %s: %w", stem, err)
		}
		f.File = shownFile(f.Files)
		if err := emit(f); err != nil {
			return err
		}
	}
	return nil
}

// planAxis is one column's n axis: the whole search on a log scale, or
// the integers near the answer on a linear one.
type planAxis struct {
	log        bool
	xmin, xmax float64
	ticks      plot.Ticker
	answer     int
	winLo      float64 // the window's shading, in n; winHi ≤ winLo: none
	winHi      float64
}

func (a planAxis) contains(n int) bool {
	x := float64(n)
	return x >= a.xmin && x <= a.xmax
}

func (a planAxis) newPlot(xlabel, ylabel string) *plot.Plot {
	p := newPanel()
	if a.log {
		p.X.Scale = plot.LogScale{}
	}
	p.X.Tick.Marker = a.ticks
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	p.Y.Tick.Marker = stepTicks{maxLabels: 5}
	return p
}

// addWindow shades the confirmation window under the data. The window
// holds the integers answer+1 … top, so the shading runs between the
// half-integers around them.
func (a planAxis) addWindow(p *plot.Plot) {
	if a.winHi > a.winLo {
		p.Add(vWindow{lo: a.winLo, hi: a.winHi})
	}
}

// measurePanel draws criterion cr of the steps that fall on axis a: each
// point in the look of that criterion's own verdict at that n, with the
// interval the decision used (already widened for repeated looks), over
// the band of crit and a line at the ideal value for the nominal level.
func (a planAxis) measurePanel(cr *measure.Criterion, crit study.Criteria, level float64, steps []plan.Step, title string) *panel {
	var vp verdictPoints
	for _, st := range steps {
		if !a.contains(st.N) {
			continue
		}
		ch := st.Row.Check(cr)
		vp.x = append(vp.x, float64(st.N))
		vp.y = append(vp.y, st.Row.Get(cr.Measure))
		vp.lo, vp.hi = append(vp.lo, ch.Low), append(vp.hi, ch.High)
		vp.v = append(vp.v, ch.Verdict)
	}
	ylabel := ""
	if a.log {
		ylabel = cr.Axis
	}
	p := a.newPlot("", ylabel)
	band := cr.Band(crit)
	ref := hLine{at: cr.Ideal(level), style: idealLine}
	if cr.Nominal {
		ref.style = refStyle
	}
	p.Add(hBand{lo: band[0], hi: band[1], color: colBand}, ref)
	if cr.Ratio && useLogY(p, vp.y, vp.lo, vp.hi, band[:]) && !a.log {
		// useLogY names the scale in the label; the zoom column has none.
		p.Y.Label.Text = ""
	}
	a.addWindow(p)
	if cr == measure.PowerCheck {
		// The delta method's predicted rejection rate at the evaluated n,
		// under the points (planKey says what it is).
		var px, py []float64
		for _, st := range steps {
			if a.contains(st.N) && finite(st.Row.Get(measure.RejectDelta)) {
				px, py = append(px, float64(st.N)), append(py, st.Row.Get(measure.RejectDelta))
			}
		}
		idx := make([]int, len(px))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(i, j int) bool { return px[idx[i]] < px[idx[j]] })
		sx, sy := make([]float64, len(px)), make([]float64, len(px))
		for k, i := range idx {
			sx[k], sy[k] = px[i], py[i]
		}
		if l, err := lineOf(sx, sy, draw.LineStyle{Color: colSeries2, Width: vg.Points(1.25), Dashes: dashed}); err == nil && len(sx) > 0 {
			p.Add(l)
		}
	}
	p.Add(vp)
	tr := trendAxes{xmin: a.xmin, xmax: a.xmax, mark: a.answer}
	tr.finish(p, math.NaN())
	return &panel{title: title, plot: p}
}

// replicatesPanel draws the replicates behind each decision as bars,
// topped by the overall verdict at that n, under a dotted line at
// perN, the most one n may take.
func (a planAxis) replicatesPanel(steps []plan.Step, perN int, title, xlabel string) *panel {
	var st stems
	var vp verdictPoints
	for _, s := range steps {
		if !a.contains(s.N) {
			continue
		}
		st.x, st.y = append(st.x, float64(s.N)), append(st.y, float64(s.Replicates))
		vp.x, vp.y = append(vp.x, float64(s.N)), append(vp.y, float64(s.Replicates))
		vp.v = append(vp.v, s.Row.Verdict)
	}
	if !a.log {
		st.halfWidth = 0.3
	}
	ylabel := ""
	if a.log {
		ylabel = "replicates"
	}
	p := a.newPlot(xlabel, ylabel)
	p.Y.Tick.Marker = stepTicks{maxLabels: 4}
	a.addWindow(p)
	p.Add(st, hLine{at: float64(perN), style: noiseLine}, vp)
	if a.answer > 0 {
		p.Add(vMark{at: float64(a.answer)})
	}
	p.X.Min, p.X.Max = a.xmin, a.xmax
	// Room above the line for the markers on the tallest bars.
	p.Y.Min, p.Y.Max = 0, 1.18*float64(max(perN, 1))
	return &panel{title: title, plot: p}
}

// planFigure draws the plan figure of one transform with enc.
func planFigure(p *plan.Result, v planView, enc encodeFunc) ([]byte, int, int, error) {
	spec, s := p.Spec, p.Study
	var ns []int
	for _, st := range v.steps {
		ns = append(ns, st.N)
	}
	slices.Sort(ns)
	ns = slices.Compact(ns)

	lo, hi := float64(spec.NMin), float64(max(spec.NMax, v.largestN))
	span := math.Max(math.Log10(hi/lo), 0.3)
	a := v.answer
	logAxis := planAxis{
		log: true, xmin: lo / math.Pow(10, 0.04*span), xmax: hi * math.Pow(10, 0.04*span),
		answer: a,
	}
	zlo, zhi, zoom := v.zoomRange()
	colW := []float64{1}
	if zoom {
		colW = []float64{0.6, 0.4}
	}
	// How long a decade is on the log axis, near enough to keep tick
	// labels apart: the column's share of the width less what the panel
	// grid takes for axes, padding and gaps (about 96 points for one column,
	// 82 more for a second), over the axis's span in decades.
	dataLen := vg.Length(colW[0]) * (figWidth - vg.Points(96) - vg.Points(82)*vg.Length(len(colW)-1))
	logAxis.ticks = planTicks{ns: ns, must: []int{a, spec.NMin, spec.NMax},
		perDecade: dataLen / vg.Length(math.Log10(logAxis.xmax/logAxis.xmin))}
	if v.windowTop > 0 {
		logAxis.winLo, logAxis.winHi = float64(a)+0.5, float64(v.windowTop)+0.5
	}
	criteria := measure.Deciding(s.Criteria)
	cols := []planAxis{logAxis}
	if zoom {
		za := planAxis{xmin: float64(zlo) - 0.6, xmax: float64(zhi) + 0.6, ticks: zoomTicks{answer: a}, answer: a,
			winLo: logAxis.winLo, winHi: logAxis.winHi}
		cols = append(cols, za)
	}
	zoomNote := ""
	if zoom {
		zoomNote = fmt.Sprintf("n = %d–%d", zlo, zhi)
	}
	grid := make([][]*panel, len(criteria)+1)
	rowWeights := make([]float64, 0, len(criteria)+1)
	for c, cr := range criteria {
		rowWeights = append(rowWeights, 1)
		for k, ax := range cols {
			title := cr.Heading
			if k == 1 {
				title = cr.Title
			}
			pn := ax.measurePanel(cr, s.Criteria, s.Level, v.steps, title)
			if k == 1 {
				pn.note = zoomNote
			}
			grid[c] = append(grid[c], pn)
		}
	}
	for k, ax := range cols {
		title, xlabel := "Replicates behind each decision", "sample size n (log scale)"
		if k == 1 {
			title, xlabel = "Replicates", "sample size n"
		}
		pn := ax.replicatesPanel(v.steps, spec.MaxReplicates, title, xlabel)
		if k == 1 {
			pn.note = zoomNote
		}
		grid[len(criteria)] = append(grid[len(criteria)], pn)
	}
	rowWeights = append(rowWeights, 0.62)
	body := panelGrid{panels: grid, colWeights: colW, rowWeights: rowWeights,
		gapX: vg.Points(34), gapY: vg.Points(14), titleGap: vg.Points(8)}

	sub := planPhrase(v, spec) + " " + planCost(v, p)
	if note := censoringNote(s); note != "" {
		sub += " " + note
	}
	head := wrappedHeading(figureTitle(v.info, " — search for the smallest adequate n"), sub)
	legend := planLegend(v, spec, s.Level)
	key := planKey(v, p, spec)

	// The key's height depends on how its text wraps; measure it first,
	// at the width of the key canvas below.
	keyH := keyHeight(key, figWidth-vg.Points(16))
	legH := legendHeight(legend, figWidth-2*vg.Points(22)) + vg.Points(8)
	height := head.height() + legH + planBodyHeight + keyH
	// Whole pixels, so the reported size is the decoded size.
	height = vg.Length(math.Ceil(float64(height.Dots(figDPI)))) / figDPI * vg.Inch

	return encodeSized(enc, height, func(dc draw.Canvas) {
		rest := head.draw(dc)
		lc := draw.Crop(rest, vg.Points(22), -vg.Points(22), 0, 0)
		used := drawLegend(lc, legend)
		rest = draw.Crop(rest, 0, 0, 0, -(used + vg.Points(8)))
		body.draw(draw.Crop(rest, 0, 0, keyH, 0))
		kc := draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{
			Min: vg.Point{X: dc.Min.X + vg.Points(2), Y: dc.Min.Y},
			Max: vg.Point{X: dc.Max.X - vg.Points(14), Y: dc.Min.Y + keyH - vg.Points(6)},
		}}
		drawKey(kc, key)
	})
}

// planLegend is the legend row shared by every panel of the figure.
func planLegend(v planView, spec study.PlanSpec, level float64) []legendItem {
	items := []legendItem{
		{label: "pass", thumbs: []plot.Thumbnailer{verdictThumb{measure.Pass}}},
		{label: "fail", thumbs: []plot.Thumbnailer{verdictThumb{measure.Fail}}},
		{label: "unclear", thumbs: []plot.Thumbnailer{verdictThumb{measure.Unclear}}},
		{label: "accepted band", thumbs: []plot.Thumbnailer{hBand{color: colBand}}},
	}
	switch a := v.answer; {
	case v.verdict.SmallestN > 0:
		items = append(items, legendItem{label: "smallest adequate n = " + strconv.Itoa(a), thumbs: []plot.Thumbnailer{vMark{}}})
	case a > 0:
		items = append(items, legendItem{label: fmt.Sprintf("n_high = %d; the answer lies in %s", a, boundsText(v.verdict)), thumbs: []plot.Thumbnailer{vMark{}}})
	}
	if v.windowTop > 0 {
		items = append(items, legendItem{label: fmt.Sprintf("window above n_high, n = %d–%d", v.answer+1, v.windowTop), thumbs: []plot.Thumbnailer{vWindow{}}})
	}
	items = append(items,
		legendItem{label: "nominal level " + fmtG(level), thumbs: []plot.Thumbnailer{hLine{style: refStyle}}},
		legendItem{label: fmt.Sprintf("at most %d replicates per n", spec.MaxReplicates), thumbs: []plot.Thumbnailer{hLine{style: noiseLine}}})
	return items
}

// planPhrase is the figure's one-line answer.
func planPhrase(v planView, spec study.PlanSpec) string {
	tv := v.verdict
	switch tv.Status {
	case measure.Adequate:
		s := fmt.Sprintf("Smallest adequate n = %d", tv.SmallestN)
		if tv.Limiting != "" && tv.Limiting != "none" {
			s += "; limiting: " + tv.Limiting
		}
		if v.windowTop > 0 {
			s += fmt.Sprintf("; window above it n = %d–%d", v.answer+1, v.windowTop)
		}
		return s + "."
	case measure.NotReached:
		return fmt.Sprintf("Not adequate for n up to %d: %s fails at the largest n checked, %d.", spec.NMax, tv.Limiting, v.largestN)
	}
	if tv.High > 0 && len(tv.Undecided) > 0 {
		return fmt.Sprintf("Smallest adequate n in %s: %s undecided at n = %s.", boundsText(tv), dash(tv.Limiting), undecidedNs(tv.Undecided))
	}
	if tv.High > 0 {
		return fmt.Sprintf("Unclear: n = %d passes, but the budget left its window unchecked.", tv.High)
	}
	return fmt.Sprintf("Undecided: %s stays unclear at the largest n checked, %d.", dash(tv.Limiting), v.largestN)
}

// planCost says what the search took.
func planCost(v planView, p *plan.Result) string {
	s := fmt.Sprintf("%d evaluations, %d replicates behind their decisions; intervals at z = %.3f per look.",
		len(v.steps), v.replicates, p.Z)
	if p.Exhausted {
		s += " The -budget cap was reached."
	}
	return s
}

// planKey explains the figure in words and gives the order of the
// search, so the PNG can be read away from the page.
func planKey(v planView, p *plan.Result, spec study.PlanSpec) []string {
	closeUp, hatched := "", ""
	if v.windowTop > 0 {
		hatched = " (the hatched window)"
	}
	if _, _, ok := v.zoomRange(); ok {
		closeUp = "The right-hand column shows the n near the answer on a linear axis, one integer at a time. "
	}
	paras := []string{
		fmt.Sprintf("Each point is one n the search evaluated; its bar is the Monte Carlo interval the decision used, widened for repeated looks. %s. "+
			"A criterion passes at n when its bar lies inside the grey band, fails when the bar lies wholly outside it, and is unclear otherwise; the marker shows which, by shape as well as colour.",
			capitalized(p.Method)),
		fmt.Sprintf("The search doubles n from %d until every criterion passes, bisects down to the smallest passing n, then checks the integers just above it%s. "+
			"%s"+
			"The bottom row gives the replicates behind each decision, topped by the overall verdict at that n: clear cases stop after one batch of %d, cases near the threshold take up to %d.",
			spec.NMin, hatched, closeUp, spec.Batch, spec.MaxReplicates),
	}
	if n, ok := p.DeltaPowerN[v.info.Name]; ok {
		paras = append(paras, "In the power row, the orange dashed line is the rejection rate the delta method predicts at each evaluated n; "+deltaPowerWords(p, n)+".")
	}
	if len(v.oscill) > 0 {
		paras = append(paras, fmt.Sprintf("Not monotone in n: n = %s failed above an earlier passing n, and the search started again above it.", joinInts(v.oscill)))
	}
	paras = append(paras, "Order of evaluation: "+searchOrder(v.steps, 80)+".")
	return paras
}

// searchOrder lists the evaluations as "5 fail, 10 fail, 20 pass", at
// most limit of them.
func searchOrder(steps []plan.Step, limit int) string {
	var parts []string
	for i, st := range steps {
		if i == limit {
			parts = append(parts, fmt.Sprintf("… (%d more)", len(steps)-limit))
			break
		}
		parts = append(parts, strconv.Itoa(st.N)+" "+string(st.Row.Verdict))
	}
	return strings.Join(parts, ", ")
}

func planAlt(v planView) string {
	return fmt.Sprintf("Search for the smallest adequate n of %s: coverage, variance ratio and standardised bias at each of the %d evaluated n with the intervals the decisions used, and the replicates behind each decision. %s",
		v.info.Name, len(v.steps), planPhraseAlt(v))
}

func planPhraseAlt(v planView) string {
	switch v.verdict.Status {
	case measure.Adequate:
		return fmt.Sprintf("Smallest adequate n = %d.", v.verdict.SmallestN)
	case measure.NotReached:
		return "Not adequate within the search range."
	}
	if v.verdict.High > 0 {
		return fmt.Sprintf("The smallest adequate n lies in %s; the budget did not decide it more closely.", boundsText(v.verdict))
	}
	return "Undecided within the budget."
}

// undecidedNs lists the undecided n, at most five and then how many more.
func undecidedNs(us []measure.UndecidedN) string {
	var ns []int
	for _, u := range us {
		ns = append(ns, u.N)
	}
	if len(ns) > 5 {
		return joinInts(ns[:5]) + fmt.Sprintf(" and %d more", len(ns)-5)
	}
	return joinInts(ns)
}

// capitalized is s with its first letter in upper case, to start a sentence.
func capitalized(s string) string {
	r, size := utf8.DecodeRuneInString(s)
	return string(unicode.ToUpper(r)) + s[size:]
}
