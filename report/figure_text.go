package report

import (
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// The text around a figure's panels, the same in every figure of the
// report: the heading at the top, legend rows, and the key that explains
// the figure in words. Each is measured by the same code that sets it, so
// a figure that grows with its text is exactly as tall as the text needs.

// heading is a figure's title and, under it, its subtitle.
type heading struct {
	title   string
	lines   []string  // the subtitle, line by line
	leading vg.Length // added under each line of the subtitle
}

// headingMargin is kept clear above and left of the heading.
const headingMargin = 14

// oneLineHeading keeps the subtitle on one line: the run's figures have a
// fixed height, and the heading may not take room from their panels.
func oneLineHeading(title, sub string) heading {
	h := heading{title: title}
	if sub != "" {
		h.lines = []string{sub}
	}
	return h
}

// wrappedHeading breaks the subtitle into lines that fit the figure's
// width, for a figure whose height follows its text.
func wrappedHeading(title, sub string) heading {
	w := figWidth - 2*vg.Points(headingMargin)
	return heading{title: title, lines: wrapText(subtitleStyle(), sub, w), leading: vg.Points(2)}
}

func titleStyle() text.Style    { return textStyle(sansBold, fontTitle) }
func subtitleStyle() text.Style { return textStyle(sans, fontLabel) }

// height is the height draw takes, the gap under the heading included.
func (h heading) height() vg.Length {
	lineH := subtitleStyle().Height("Mg") + h.leading
	height := vg.Points(headingMargin) + titleStyle().Height(h.title) + vg.Points(6)
	height += vg.Length(len(h.lines)) * lineH
	return height + vg.Points(8)
}

// draw sets the heading at the top of dc and returns the canvas left
// below it.
func (h heading) draw(dc draw.Canvas) draw.Canvas {
	ts, ss := titleStyle(), subtitleStyle()
	lineH := ss.Height("Mg") + h.leading
	x := dc.Min.X + vg.Points(headingMargin)
	y := dc.Max.Y - vg.Points(headingMargin)
	dc.FillText(ts, vg.Point{X: x, Y: y}, h.title)
	y -= ts.Height(h.title) + vg.Points(6)
	for _, line := range h.lines {
		dc.FillText(ss, vg.Point{X: x, Y: y}, line)
		y -= lineH
	}
	return draw.Crop(dc, 0, 0, 0, y-dc.Max.Y-vg.Points(8))
}

// legendItem is one entry of a legend row.
type legendItem struct {
	label  string
	thumbs []plot.Thumbnailer
}

// The legend row's measures: a thumbnail, the gap to its label, and the
// gap to the next entry.
var (
	legendThumbW  = vg.Points(24)
	legendGap     = vg.Points(5)
	legendItemGap = vg.Points(16)
)

// legendStyle is the legend's type and the height of one of its lines.
func legendStyle() (text.Style, vg.Length) {
	st := textStyle(sans, fontSmall)
	st.YAlign = draw.YCenter
	return st, st.Height("Mg") + vg.Points(5)
}

// layLegend places items side by side from the top left of r, wrapping to
// a new line when one would run past the right edge, and returns the
// number of lines. place, if set, is given each item and the middle of
// the left edge of its place.
func layLegend(r vg.Rectangle, items []legendItem, place func(it legendItem, at vg.Point)) int {
	if len(items) == 0 {
		return 0
	}
	st, lineH := legendStyle()
	lines := 1
	x, y := r.Min.X, r.Max.Y-lineH/2
	for _, it := range items {
		w := legendThumbW + legendGap + st.Width(it.label)
		if x > r.Min.X && x+w > r.Max.X {
			x = r.Min.X
			y -= lineH
			lines++
		}
		if place != nil {
			place(it, vg.Point{X: x, Y: y})
		}
		x += w + legendItemGap
	}
	return lines
}

// legendHeight is the height drawLegend takes for items in a row of
// width w.
func legendHeight(items []legendItem, w vg.Length) vg.Length {
	_, lineH := legendStyle()
	return vg.Length(layLegend(vg.Rectangle{Max: vg.Point{X: w}}, items, nil)) * lineH
}

// drawLegend sets items as a legend row from the top left of c and
// returns the height it took. A row above the panels keeps the legend off
// the data.
func drawLegend(c draw.Canvas, items []legendItem) vg.Length {
	st, lineH := legendStyle()
	lines := layLegend(c.Rectangle, items, func(it legendItem, at vg.Point) {
		tc := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
			Min: vg.Point{X: at.X, Y: at.Y - lineH/2 + vg.Points(3)},
			Max: vg.Point{X: at.X + legendThumbW, Y: at.Y + lineH/2 - vg.Points(3)},
		}}
		for _, t := range it.thumbs {
			t.Thumbnail(&tc)
		}
		c.FillText(st, vg.Point{X: at.X + legendThumbW + legendGap, Y: at.Y}, it.label)
	})
	return vg.Length(lines) * lineH
}

// A figure's key explains it in words, paragraph by paragraph under
// keyHeading, so that the PNG can be read away from the page.
const keyHeading = "How to read this figure"

// The key's measures: its indent from the left of its canvas, and the
// gaps under its heading and under each paragraph.
var (
	keyIndent  = vg.Points(12)
	keyHeadGap = vg.Points(8)
	keyParaGap = vg.Points(5)
)

// keyStyle is the key's heading type, body type and line height.
func keyStyle() (head, body text.Style, lineH vg.Length) {
	head, body = textStyle(sansBold, fontPanel), textStyle(sans, fontSmall)
	return head, body, body.Height("Mg") + vg.Points(2)
}

// keyHeight is the height drawKey takes for paras in a canvas w wide,
// with a little to spare.
func keyHeight(paras []string, w vg.Length) vg.Length {
	head, body, lineH := keyStyle()
	h := head.Height(keyHeading) + keyHeadGap
	for _, para := range paras {
		h += vg.Length(len(wrapText(body, para, w-keyIndent))) * lineH
		h += keyParaGap
	}
	return h + vg.Points(14)
}

// drawKey sets the key's heading and paras in c, as many lines as fit.
func drawKey(c draw.Canvas, paras []string) {
	head, body, lineH := keyStyle()
	c = draw.Crop(c, keyIndent, 0, 0, 0)
	c.FillText(head, vg.Point{X: c.Min.X, Y: c.Max.Y}, keyHeading)
	y := c.Max.Y - head.Height(keyHeading) - keyHeadGap
	for _, para := range paras {
		for _, line := range wrapText(body, para, c.Max.X-c.Min.X) {
			if y-lineH < c.Min.Y {
				return
			}
			c.FillText(body, vg.Point{X: c.Min.X, Y: y}, line)
			y -= lineH
		}
		y -= keyParaGap
	}
}

// wrapText breaks s into lines no wider than w in style st.
func wrapText(st text.Style, s string, w vg.Length) []string {
	var lines []string
	var cur string
	for _, word := range strings.Fields(s) {
		try := word
		if cur != "" {
			try = cur + " " + word
		}
		if cur != "" && st.Width(try) > w {
			lines = append(lines, cur)
			cur = word
			continue
		}
		cur = try
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return lines
}
