package report

import (
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// panel is one tile of a figure: a plot, the title above it and the
// legend row under the title.
type panel struct {
	title  string
	note   string // set after the title in regular type
	plot   *plot.Plot
	legend []legendItem
}

// panelGrid lays a figure's panels out in rows and columns, each under
// its title and legend row, with every data area of a row the same height
// at the same place and every data area of a column the same width at the
// same place, so that n lines up down a column. (plot.Align aligns the
// data areas but leaves the canvases' tops uneven, with no room kept for
// a strip above each.) Every figure of the report, of a run or of a plan,
// is laid out by it; they differ only in its fields.
type panelGrid struct {
	panels [][]*panel // by row, then column; a nil panel leaves its slot empty
	// colWeights and rowWeights share the width and the height left for
	// the data areas out among the columns and the rows; nil shares them
	// equally.
	colWeights, rowWeights []float64
	gapX, gapY             vg.Length         // between columns, between rows
	titleGap               vg.Length         // under a panel's title line
	stripGap               vg.Length         // under the legend row, over the plot
	extra                  func(draw.Canvas) // if set, draws in each empty slot
}

// gridPadding is kept clear around the whole grid.
const gridPadding = 8

// panelRows puts panels into a grid of the given size, row by row,
// leaving the slots past the last panel empty.
func panelRows(panels []panel, rows, cols int) [][]*panel {
	grid := make([][]*panel, rows)
	for j := range grid {
		grid[j] = make([]*panel, cols)
		for i := range grid[j] {
			if k := j*cols + i; k < len(panels) {
				grid[j][i] = &panels[k]
			}
		}
	}
	return grid
}

// shareOut splits total into n parts in proportion to weights, or into
// equal parts when weights is nil.
func shareOut(total vg.Length, weights []float64, n int) []vg.Length {
	parts := make([]vg.Length, n)
	var sum float64
	for _, w := range weights {
		sum += w
	}
	for i := range parts {
		if weights == nil {
			parts[i] = total / vg.Length(n)
		} else {
			parts[i] = total * vg.Length(weights[i]/sum)
		}
	}
	return parts
}

// yLabelStyle is the type of the y-axis labels, which the grid sets
// itself: on a log axis gonum/plot places the label's box by the linear
// midpoint of the range, near the top, and pads the plot for it.
func yLabelStyle() (st text.Style, width vg.Length) {
	st = textStyle(sans, fontLabel)
	st.Rotation = math.Pi / 2
	st.XAlign, st.YAlign = draw.XCenter, draw.YCenter
	return st, st.Height("Mg") + vg.Points(8)
}

// draw lays the grid out over dc and draws it.
func (g panelGrid) draw(dc draw.Canvas) {
	rows := len(g.panels)
	if rows == 0 {
		return
	}
	cols := len(g.panels[0])
	pad := vg.Points(gridPadding)
	ts := textStyle(sansBold, fontPanel)
	titleH := ts.Height("Mg") + g.titleGap
	ls, labelW := yLabelStyle()

	// Measure what each plot needs around its data area (axes, tick
	// labels) on a trial canvas the size of its share of dc; it does not
	// depend on the canvas size.
	W, H := dc.Max.X-dc.Min.X, dc.Max.Y-dc.Min.Y
	trialW, trialH := shareOut(W, g.colWeights, cols), shareOut(H, g.rowWeights, rows)
	type pads struct{ l, r, b, t vg.Length }
	own := make([][]pads, rows)
	ylabels := make([][]string, rows)
	colL, colR := make([]vg.Length, cols), make([]vg.Length, cols)
	rowB, rowT := make([]vg.Length, rows), make([]vg.Length, rows)
	for j, row := range g.panels {
		own[j], ylabels[j] = make([]pads, cols), make([]string, cols)
		for i, pn := range row {
			if pn == nil {
				continue
			}
			ylabels[j][i], pn.plot.Y.Label.Text = pn.plot.Y.Label.Text, ""
			c := draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{Max: vg.Point{X: trialW[i], Y: trialH[j]}}}
			d := pn.plot.DataCanvas(c)
			o := pads{l: d.Min.X - c.Min.X, r: c.Max.X - d.Max.X, b: d.Min.Y - c.Min.Y, t: c.Max.Y - d.Max.Y}
			own[j][i] = o
			lw := o.l
			if ylabels[j][i] != "" {
				lw += labelW
			}
			colL[i], colR[i] = max(colL[i], lw), max(colR[i], o.r)
			rowB[j], rowT[j] = max(rowB[j], o.b), max(rowT[j], o.t)
		}
	}

	// The data areas share what the axes, the strips and the gaps leave.
	// Legends wrap within the width over their data area.
	fixedX := 2*pad + vg.Length(cols-1)*g.gapX
	for i := range cols {
		fixedX += colL[i] + colR[i]
	}
	widths := shareOut(W-fixedX, g.colWeights, cols)
	legendH := vg.Length(0)
	for _, row := range g.panels {
		for i, pn := range row {
			if pn != nil {
				legendH = max(legendH, legendHeight(pn.legend, widths[i]+colR[i]))
			}
		}
	}
	strip := titleH + legendH + g.stripGap
	fixedY := 2*pad + vg.Length(rows-1)*g.gapY
	for j := range rows {
		fixedY += strip + rowT[j] + rowB[j]
	}
	heights := shareOut(H-fixedY, g.rowWeights, rows)

	left := make([]vg.Length, cols) // data area's left edge, per column
	x := dc.Min.X + pad
	for i := range cols {
		left[i] = x + colL[i]
		x = left[i] + widths[i] + colR[i] + g.gapX
	}
	y := dc.Max.Y - pad
	for j, row := range g.panels {
		top := y
		h := heights[j]
		dataTop := top - strip - rowT[j]
		for i, pn := range row {
			if pn == nil {
				if g.extra != nil {
					g.extra(draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{
						Min: vg.Point{X: left[i] - colL[i], Y: dataTop - h - rowB[j]},
						Max: vg.Point{X: left[i] + widths[i] + colR[i], Y: top},
					}})
				}
				continue
			}
			o := own[j][i]
			c := draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{
				Min: vg.Point{X: left[i] - o.l, Y: dataTop - h - o.b},
				Max: vg.Point{X: left[i] + widths[i] + o.r, Y: dataTop + o.t},
			}}
			c.FillText(ts, vg.Point{X: left[i], Y: top}, pn.title)
			if pn.note != "" {
				// Share the title's baseline: drop the smaller type by the
				// difference of the ascents.
				ns := textStyle(sans, fontSmall)
				ny := top - (ts.FontExtents().Ascent - ns.FontExtents().Ascent)
				c.FillText(ns, vg.Point{X: left[i] + ts.Width(pn.title) + vg.Points(6), Y: ny}, pn.note)
			}
			drawLegend(draw.Canvas{Canvas: dc.Canvas, Rectangle: vg.Rectangle{
				Min: vg.Point{X: left[i], Y: top - strip}, Max: vg.Point{X: left[i] + widths[i] + colR[i], Y: top - titleH},
			}}, pn.legend)
			pn.plot.Draw(c)
			if ylabels[j][i] != "" {
				c.FillText(ls, vg.Point{X: left[i] - colL[i] + labelW/2, Y: dataTop - h/2}, ylabels[j][i])
			}
		}
		y = dataTop - h - rowB[j] - g.gapY
	}
}
