package report

import (
	"image/color"
	"math"
	"strconv"

	"deltaprobe/sim/measure"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The plan figure needs what the run's figures do not: points whose
// marker says how each was decided, a window of n shaded across the
// panel, and bars for the replicates spent.

// The three verdicts are told apart by shape first: a filled circle for
// pass, a bold cross for fail, an open diamond for unclear, so a
// greyscale print or a reader who sees no colour loses nothing. The
// colours add a second cue: the palette's blue for pass, the vermillion
// of the same Okabe & Ito (2008) set for fail (blue and vermillion stay
// apart under every common colour blindness), and the mark grey for
// unclear, which is neither.
var (
	colFail    = color.RGBA{R: 0xD5, G: 0x5E, B: 0x00, A: 0xFF} // vermillion
	colUnclear = colMark
	// The confirmation window: a pale tint under diagonal hatching. The
	// hatching, not the tint, keeps it apart from the accepted band in
	// greyscale, where both tints are light.
	// Not premultiplied: NRGBA keeps the hue whatever the alpha.
	colWindow      = color.NRGBA{R: 0x56, G: 0xB4, B: 0xE9, A: 0x38}
	colWindowHatch = color.NRGBA{R: 0x2C, G: 0x6E, B: 0x9E, A: 0x80}
)

// verdictLook is how points of one verdict are drawn.
type verdictLook struct {
	color  color.Color
	glyph  draw.GlyphDrawer
	radius vg.Length
}

func lookOf(v measure.Verdict) verdictLook {
	switch v {
	case measure.Pass:
		return verdictLook{color: colSeries1, glyph: draw.CircleGlyph{}, radius: vg.Points(4)}
	case measure.Fail:
		return verdictLook{color: colFail, glyph: boldCross{}, radius: vg.Points(4.5)}
	}
	return verdictLook{color: colUnclear, glyph: openDiamond{}, radius: vg.Points(4.5)}
}

// boldCross is an × stroked heavily enough to read at a glance; the
// library's cross is a hairline.
type boldCross struct{}

func (boldCross) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	r := sty.Radius * 0.8
	ls := draw.LineStyle{Color: sty.Color, Width: vg.Points(2.25)}
	c.StrokeLine2(ls, pt.X-r, pt.Y-r, pt.X+r, pt.Y+r)
	c.StrokeLine2(ls, pt.X-r, pt.Y+r, pt.X+r, pt.Y-r)
}

// openDiamond is a diamond outline on a white ground, so the interval bar
// behind it does not run through its middle and it reads as open.
type openDiamond struct{}

func (openDiamond) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	r := sty.Radius
	pts := []vg.Point{{X: pt.X, Y: pt.Y + r}, {X: pt.X + r, Y: pt.Y}, {X: pt.X, Y: pt.Y - r}, {X: pt.X - r, Y: pt.Y}}
	c.FillPolygon(color.White, pts)
	c.StrokeLines(draw.LineStyle{Color: sty.Color, Width: vg.Points(1.75)}, append(pts, pts[0]))
}

// verdictPoints draws one point per evaluation, with its interval as a
// bar when lo and hi are given, each in the look of its verdict.
type verdictPoints struct {
	x, y, lo, hi []float64
	v            []measure.Verdict
}

func (vp verdictPoints) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	// Bars first, grouped by verdict, so no marker is hidden by a bar.
	if vp.lo != nil {
		for _, want := range []measure.Verdict{measure.Pass, measure.Unclear, measure.Fail} {
			var iv intervals
			for i := range vp.x {
				if vp.v[i] == want && !math.IsNaN(vp.lo[i]) && !math.IsNaN(vp.hi[i]) {
					iv.x, iv.lo, iv.hi = append(iv.x, vp.x[i]), append(iv.lo, vp.lo[i]), append(iv.hi, vp.hi[i])
				}
			}
			iv.style = draw.LineStyle{Color: lookOf(want).color, Width: vg.Points(1.25)}
			iv.Plot(c, p)
		}
	}
	for i := range vp.x {
		if !finite(vp.x[i], vp.y[i]) {
			continue
		}
		lk := lookOf(vp.v[i])
		c.DrawGlyph(draw.GlyphStyle{Color: lk.color, Radius: lk.radius, Shape: lk.glyph}, vg.Point{X: trX(vp.x[i]), Y: trY(vp.y[i])})
	}
}

// DataRange covers the points and the finite ends of their bars.
func (vp verdictPoints) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, xmax, ymin, ymax = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for i := range vp.x {
		ends := []float64{vp.y[i]}
		if vp.lo != nil {
			ends = append(ends, vp.lo[i], vp.hi[i])
		}
		for _, v := range ends {
			if finite(v) {
				ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
				xmin, xmax = math.Min(xmin, vp.x[i]), math.Max(xmax, vp.x[i])
			}
		}
	}
	return
}

// verdictThumb is a legend entry: a short bar through the verdict's marker.
type verdictThumb struct{ v measure.Verdict }

func (t verdictThumb) Thumbnail(c *draw.Canvas) {
	lk := lookOf(t.v)
	mid := vg.Point{X: (c.Min.X + c.Max.X) / 2, Y: (c.Min.Y + c.Max.Y) / 2}
	c.StrokeLine2(draw.LineStyle{Color: lk.color, Width: vg.Points(1.25)}, mid.X, c.Min.Y, mid.X, c.Max.Y)
	c.DrawGlyphNoClip(draw.GlyphStyle{Color: lk.color, Radius: lk.radius, Shape: lk.glyph}, mid)
}

// stems are bars from 0 up to y at each x: the replicates behind each
// decision. halfWidth > 0 gives bars that wide either side in data units
// (on the linear axis near the answer, where each n has room); otherwise
// they are fixed-width strokes, which on the log axis simply merge where
// the search crowded its evaluations.
type stems struct {
	x, y      []float64
	halfWidth float64
}

var stemStroke = draw.LineStyle{Color: colBars, Width: vg.Points(2.5)}

func (s stems) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for i := range s.x {
		if !finite(s.x[i], s.y[i]) || s.x[i] < p.X.Min || s.x[i] > p.X.Max {
			continue
		}
		y0, y1 := trY(math.Max(0, p.Y.Min)), trY(math.Min(s.y[i], p.Y.Max))
		if y1 <= y0 {
			continue
		}
		if s.halfWidth <= 0 {
			x := trX(s.x[i])
			c.StrokeLine2(stemStroke, x, y0, x, y1)
			continue
		}
		x0, x1 := trX(s.x[i]-s.halfWidth), trX(s.x[i]+s.halfWidth)
		pts := []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}}
		c.FillPolygon(colBars, pts)
		c.StrokeLines(draw.LineStyle{Color: colMark, Width: vg.Points(0.5)}, append(pts, pts[0]))
	}
}

func (s stems) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, xmax, ymin, ymax = math.Inf(1), math.Inf(-1), 0, math.Inf(-1)
	for i := range s.x {
		xmin, xmax = math.Min(xmin, s.x[i]), math.Max(xmax, s.x[i])
		ymax = math.Max(ymax, s.y[i])
	}
	return
}

// vWindow shades lo ≤ x ≤ hi over the panel's full height, under
// diagonal hatching: the integers above the answer that the plan also
// checked.
type vWindow struct{ lo, hi float64 }

func (w vWindow) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	lo, hi := math.Max(w.lo, p.X.Min), math.Min(w.hi, p.X.Max)
	if !(lo < hi) {
		return
	}
	hatchRect(&c, trX(lo), c.Min.Y, trX(hi), c.Max.Y)
}

func (w vWindow) Thumbnail(c *draw.Canvas) {
	hatchRect(c, c.Min.X, c.Min.Y, c.Max.X, c.Max.Y)
}

// hatchRect fills the rectangle with the window's tint and strokes lines
// x − y = d across it, clipped to it by hand: each line enters at the
// larger of the left edge and the bottom, and leaves at the smaller of
// the right edge and the top.
func hatchRect(c *draw.Canvas, x0, y0, x1, y1 vg.Length) {
	c.FillPolygon(colWindow, []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}})
	ls := draw.LineStyle{Color: colWindowHatch, Width: vg.Points(0.6)}
	step := vg.Points(5)
	// Offsets are whole multiples of step from the canvas origin, so
	// neighbouring panels' hatching lines up.
	first := vg.Length(math.Floor(float64((x0-y1)/step))) * step
	for d := first; d <= x1-y0; d += step {
		ax, bx := max(x0, y0+d), min(x1, y1+d)
		if ax < bx {
			c.StrokeLine2(ls, ax, ax-d, bx, bx-d)
		}
	}
}

// planTicks labels some of the evaluated sample sizes on the log n axis:
// those in must first (the answer and the ends of the search range),
// then, smallest first, any whose label keeps clear of every label
// already placed. The search crowds its evaluations near the answer, so
// labelling them all would print numbers over each other; every
// evaluated n still gets an unlabelled tick, a rug of where the search
// looked.
type planTicks struct {
	ns        []int // candidates, ascending
	must      []int
	perDecade vg.Length // length of one decade on the axis, roughly
}

func (t planTicks) Ticks(lo, hi float64) []plot.Tick {
	st := textStyle(sans, fontSmall)
	width := func(n int) vg.Length { return st.Width(strconv.Itoa(n)) }
	var placed []int
	labelled := map[int]bool{}
	ok := func(n int) bool {
		x := float64(n)
		if x < lo || x > hi {
			return false
		}
		for _, q := range placed {
			apart := vg.Length(math.Abs(math.Log10(x/float64(q)))) * t.perDecade
			if apart < (width(n)+width(q))/2+vg.Points(5) {
				return false
			}
		}
		return true
	}
	var ticks []plot.Tick
	for _, group := range [][]int{t.must, t.ns} {
		for _, n := range group {
			if x := float64(n); n > 0 && !labelled[n] && ok(n) {
				placed = append(placed, n)
				labelled[n] = true
				ticks = append(ticks, plot.Tick{Value: x, Label: strconv.Itoa(n)})
			}
		}
	}
	for _, n := range t.ns {
		if x := float64(n); !labelled[n] && x >= lo && x <= hi {
			ticks = append(ticks, plot.Tick{Value: x})
		}
	}
	return ticks
}

// zoomTicks labels round integers on the linear axis near the answer,
// and the answer itself; a round label too close to the answer's gives
// way. Every integer gets an unlabelled tick while there are few enough
// to tell apart, so a reader can count n.
type zoomTicks struct{ answer int }

func (t zoomTicks) Ticks(lo, hi float64) []plot.Tick {
	round := stepTicks{maxLabels: 6}.Ticks(lo, hi)
	step := 1.0
	if len(round) > 1 {
		step = round[1].Value - round[0].Value
	}
	step = math.Max(step, 1)
	var ticks []plot.Tick
	labelled := map[int]bool{}
	if a := float64(t.answer); t.answer > 0 && a >= lo && a <= hi {
		ticks = append(ticks, plot.Tick{Value: a, Label: strconv.Itoa(t.answer)})
		labelled[t.answer] = true
	}
	for _, tk := range round {
		n := int(math.Round(tk.Value))
		if t.answer > 0 && math.Abs(tk.Value-float64(t.answer)) < 0.5*step+1e-9 {
			continue
		}
		ticks = append(ticks, plot.Tick{Value: float64(n), Label: strconv.Itoa(n)})
		labelled[n] = true
	}
	if hi-lo <= 60 {
		for n := int(math.Ceil(lo)); float64(n) <= hi; n++ {
			if !labelled[n] {
				ticks = append(ticks, plot.Tick{Value: float64(n)})
			}
		}
	}
	return ticks
}
