package report

import (
	"image/color"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The plotters here draw what gonum/plot has no single plotter for:
// bands and reference lines that span the whole panel whatever its range,
// intervals given by their ends (the Wilson interval is not symmetric),
// and a labelled vertical marker.

// hBand shades lo ≤ y ≤ hi across the panel.
type hBand struct {
	lo, hi float64
	color  color.Color
}

func (b hBand) Plot(c draw.Canvas, p *plot.Plot) {
	_, trY := p.Transforms(&c)
	lo, hi := math.Max(b.lo, p.Y.Min), math.Min(b.hi, p.Y.Max)
	if !(lo < hi) {
		return
	}
	pts := []vg.Point{
		{X: c.Min.X, Y: trY(lo)}, {X: c.Max.X, Y: trY(lo)},
		{X: c.Max.X, Y: trY(hi)}, {X: c.Min.X, Y: trY(hi)},
	}
	c.FillPolygon(b.color, pts)
}

// DataRange keeps the band in view: a reader must see where it lies even
// when every estimate is far from it.
func (b hBand) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Inf(1), math.Inf(-1), b.lo, b.hi
}

func (b hBand) Thumbnail(c *draw.Canvas) {
	c.FillPolygon(b.color, []vg.Point{
		{X: c.Min.X, Y: c.Min.Y}, {X: c.Max.X, Y: c.Min.Y},
		{X: c.Max.X, Y: c.Max.Y}, {X: c.Min.X, Y: c.Max.Y},
	})
}

// hLine is a reference line y = at across the panel.
type hLine struct {
	at    float64
	style draw.LineStyle
}

func (l hLine) Plot(c draw.Canvas, p *plot.Plot) {
	_, trY := p.Transforms(&c)
	if l.at < p.Y.Min || l.at > p.Y.Max {
		return
	}
	y := trY(l.at)
	c.StrokeLine2(l.style, c.Min.X, y, c.Max.X, y)
}

func (l hLine) DataRange() (xmin, xmax, ymin, ymax float64) {
	return math.Inf(1), math.Inf(-1), l.at, l.at
}

func (l hLine) Thumbnail(c *draw.Canvas) {
	y := (c.Min.Y + c.Max.Y) / 2
	c.StrokeLine2(l.style, c.Min.X, y, c.Max.X, y)
}

// vMark is the vertical line at the smallest adequate n, with its label
// set on a white ground at the top of the panel so data cannot hide it.
type vMark struct {
	at    float64
	label string
}

var markStyle = draw.LineStyle{Color: colMark, Width: vg.Points(1.5), Dashes: dashDt}

func (m vMark) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	x := trX(m.at)
	c.StrokeLine2(markStyle, x, c.Min.Y, x, c.Max.Y)
	if m.label == "" {
		return
	}
	st := textStyle(sans, fontSmall)
	st.Color = colMark
	w, h := st.Width(m.label), st.Height(m.label)
	pad := vg.Points(3)
	// Right of the line if it fits, else left of it.
	x0 := x + pad
	if x0+w+2*pad > c.Max.X {
		x0 = x - pad - w - 2*pad
	}
	top := c.Max.Y - pad
	c.FillPolygon(color.White, []vg.Point{
		{X: x0, Y: top - h - pad}, {X: x0 + w + 2*pad, Y: top - h - pad},
		{X: x0 + w + 2*pad, Y: top}, {X: x0, Y: top},
	})
	c.FillText(st, vg.Point{X: x0 + pad, Y: top - pad/2}, m.label)
}

func (m vMark) Thumbnail(c *draw.Canvas) {
	x := (c.Min.X + c.Max.X) / 2
	c.StrokeLine2(markStyle, x, c.Min.Y, x, c.Max.Y)
}

// intervals draws vertical bars from lo to hi at each x, with caps.
type intervals struct {
	x, lo, hi []float64
	style     draw.LineStyle
}

func (iv intervals) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	capW := vg.Points(4)
	for i := range iv.x {
		x := trX(iv.x[i])
		// An open end (an interval reaching +Inf) runs to the panel's edge,
		// without a cap.
		y0, cap0 := clampY(c, trY, iv.lo[i])
		y1, cap1 := clampY(c, trY, iv.hi[i])
		if y1 <= y0 {
			continue
		}
		c.StrokeLine2(iv.style, x, y0, x, y1)
		if cap0 {
			c.StrokeLine2(iv.style, x-capW, y0, x+capW, y0)
		}
		if cap1 {
			c.StrokeLine2(iv.style, x-capW, y1, x+capW, y1)
		}
	}
}

// clampY maps v to the canvas, clamped to its height; it reports whether
// v lay inside, and so deserves a cap.
func clampY(c draw.Canvas, trY func(float64) vg.Length, v float64) (vg.Length, bool) {
	switch {
	case math.IsNaN(v):
		return c.Min.Y, false
	case math.IsInf(v, 1):
		return c.Max.Y, false
	case math.IsInf(v, -1):
		return c.Min.Y, false
	}
	y := trY(v)
	switch {
	case y > c.Max.Y:
		return c.Max.Y, false
	case y < c.Min.Y:
		return c.Min.Y, false
	}
	return y, true
}

// DataRange covers the finite ends only: an open end must not stretch the
// axis to infinity.
func (iv intervals) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, xmax, ymin, ymax = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for i := range iv.x {
		xmin, xmax = math.Min(xmin, iv.x[i]), math.Max(xmax, iv.x[i])
		for _, v := range []float64{iv.lo[i], iv.hi[i]} {
			if finite(v) {
				ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
			}
		}
	}
	return
}

func (iv intervals) Thumbnail(c *draw.Canvas) {
	x := (c.Min.X + c.Max.X) / 2
	c.StrokeLine2(iv.style, x, c.Min.Y, x, c.Max.Y)
}

// series is one set of points, joined by a line, with optional bars.
type series struct {
	label  string
	x, y   []float64
	lo, hi []float64 // nil: no bars
	style  int       // 0: first series of a panel, 1: second, 2: third
}

// add puts the series on p (bars first, so markers sit on top) and
// returns the plotters its legend entry shows.
func (s series) add(p *plot.Plot) ([]plot.Thumbnailer, error) {
	xys := make(plotter.XYs, 0, len(s.x))
	var bx, blo, bhi []float64
	for i := range s.x {
		if !finite(s.x[i], s.y[i]) {
			continue
		}
		xys = append(xys, plotter.XY{X: s.x[i], Y: s.y[i]})
		if s.lo != nil && !math.IsNaN(s.lo[i]) && !math.IsNaN(s.hi[i]) {
			bx, blo, bhi = append(bx, s.x[i]), append(blo, s.lo[i]), append(bhi, s.hi[i])
		}
	}
	if len(xys) == 0 {
		return nil, nil
	}
	col, glyph, dash := colSeries1, draw.GlyphDrawer(draw.CircleGlyph{}), []vg.Length(nil)
	switch s.style {
	case 1:
		col, glyph, dash = colSeries2, draw.TriangleGlyph{}, dashed
	case 2:
		col, glyph, dash = colSeries3, draw.SquareGlyph{}, dotted
	}
	var thumbs []plot.Thumbnailer
	if bx != nil {
		iv := intervals{x: bx, lo: blo, hi: bhi, style: draw.LineStyle{Color: col, Width: vg.Points(1.25)}}
		p.Add(iv)
	}
	line, err := plotter.NewLine(xys)
	if err != nil {
		return nil, err
	}
	line.LineStyle = draw.LineStyle{Color: col, Width: vg.Points(1.75), Dashes: dash}
	sc, err := plotter.NewScatter(xys)
	if err != nil {
		return nil, err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(4), Shape: glyph}
	p.Add(line, sc)
	thumbs = append(thumbs, line, sc)
	return thumbs, nil
}

// sampleSizeTicks labels the grid's own sample sizes on a log axis, so a
// reader reads n off the axis rather than interpolating between powers of
// ten. When labels would crowd, only those at least minGap decades apart
// are labelled; the rest keep an unlabelled tick.
type sampleSizeTicks struct {
	ns     []int
	minGap float64 // decades
}

func (t sampleSizeTicks) Ticks(lo, hi float64) []plot.Tick {
	var ticks []plot.Tick
	last := math.Inf(-1)
	for i, n := range t.ns {
		x := float64(n)
		if x < lo || x > hi {
			continue
		}
		lab := ""
		l := math.Log10(x)
		// The largest n is always labelled; the one before it gives way.
		if l-last >= t.minGap && (i == len(t.ns)-1 || math.Log10(float64(t.ns[len(t.ns)-1]))-l >= t.minGap) || i == len(t.ns)-1 {
			lab = strconv.Itoa(n)
			last = l
		}
		ticks = append(ticks, plot.Tick{Value: x, Label: lab})
	}
	return ticks
}

// lineOf is a plain line through the points in the given style.
func lineOf(x, y []float64, style draw.LineStyle) (*plotter.Line, error) {
	xys := make(plotter.XYs, len(x))
	for i := range x {
		xys[i] = plotter.XY{X: x[i], Y: y[i]}
	}
	l, err := plotter.NewLine(xys)
	if err != nil {
		return nil, err
	}
	l.LineStyle = style
	return l, nil
}

// stepTicks labels multiples of the smallest step in 1, 2, 5, 10, … that
// gives at most maxLabels labels, written as integers where they are:
// the default ticker's "2.50" suggests a precision nobody asked for.
type stepTicks struct{ maxLabels int }

func (t stepTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || !finite(lo, hi) {
		return nil
	}
	// A hair of slack so that 0.3/0.05 = 5.999… still counts 0.3 in.
	const slack = 1e-9
	first := func(step float64) float64 { return math.Ceil(lo/step - slack) }
	last := func(step float64) float64 { return math.Floor(hi/step + slack) }
	count := func(step float64) int { return int(last(step) - first(step) + 1) }
	e := int(math.Floor(math.Log10((hi - lo) / float64(t.maxLabels))))
	var step float64
	var decimals int
	for step == 0 {
		for _, m := range []float64{1, 2, 5} {
			s := m * math.Pow10(e)
			if count(s) <= t.maxLabels {
				step, decimals = s, max(0, -e)
				break
			}
		}
		e++
	}
	var ticks []plot.Tick
	for k, end := first(step), last(step); k <= end; k++ {
		// k·step, not a running sum, and labels rounded to the step's
		// decimals: no 0.15000000000000002.
		v := k * step
		lab := strconv.FormatFloat(v, 'f', decimals, 64)
		if lab == "-0" || strings.Trim(lab, "-0.") == "" {
			lab = "0"
		}
		ticks = append(ticks, plot.Tick{Value: v, Label: lab})
	}
	return ticks
}

// decadeTicks labels powers of ten on a log axis, every k-th decade so
// that at most maxLabels are labelled, with unlabelled ticks between.
type decadeTicks struct{ maxLabels int }

func (t decadeTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0 && hi > lo) || !finite(lo, hi) {
		return nil
	}
	e0, e1 := int(math.Floor(math.Log10(lo))), int(math.Ceil(math.Log10(hi)))
	every := max(1, (e1-e0+t.maxLabels-1)/t.maxLabels)
	var ticks []plot.Tick
	for e := e0; e <= e1; e++ {
		v := math.Pow10(e)
		if e%every == 0 && v >= lo && v <= hi {
			ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'g', -1, 64)})
		} else if v >= lo && v <= hi {
			ticks = append(ticks, plot.Tick{Value: v})
		}
		if every == 1 && e1-e0 <= 2 {
			// Over a decade or two, 2 and 5 are labelled too.
			for _, m := range []float64{2, 5} {
				if w := m * v; w >= lo && w <= hi {
					ticks = append(ticks, plot.Tick{Value: w, Label: strconv.FormatFloat(w, 'g', -1, 64)})
				}
			}
		}
	}
	return ticks
}
