package report

import (
	"fmt"
	"image/color"
	"math"
	"strconv"
	"strings"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"

	xfont "golang.org/x/image/font"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Figure is one figure of the report, rendered in one or more formats.
type Figure struct {
	File      string       // the file the page shows: the PNG, else the SVG
	Files     []FigureFile // one a format, in the order of Formats
	Transform int          // index into Result.Study.Transforms
	Kind      string       // "trends", "shapes" or "plan"
	Width     int          // pixels of the PNG, also when there is none
	Height    int          // pixels
	Alt       string
}

// Data returns the figure's bytes in format f, nil if it was not rendered
// in f.
func (fig Figure) Data(f Format) []byte {
	for _, ff := range fig.Files {
		if ff.Format == f {
			return ff.Data
		}
	}
	return nil
}

// has reports whether the figure was rendered in format f.
func (fig Figure) has(f Format) bool {
	for _, ff := range fig.Files {
		if ff.Format == f {
			return true
		}
	}
	return false
}

// Figure kinds, as they end the file names.
const (
	KindTrends = "trends"
	KindShapes = "shapes"
)

// Every figure is drawn on a page 10 inches wide at 160 dots per inch:
// 1600 pixels, so a figure stays sharp on a high-density screen, and text
// set at 11 points or more is at least 24 pixels tall. Both figures share
// the width, so their text appears at the same size when the page scales
// them to its column.
const (
	figDPI   = 160
	figWidth = 10 * vg.Inch
)

// Type sizes in points. Nothing in a figure is set smaller than fontSmall.
const (
	fontSmall = 11
	fontLabel = 12
	fontPanel = 13
	fontTitle = 16
)

// The palette. Two data series at most share a panel, so they take the
// Okabe & Ito (2008) blue and orange: both are told apart by every common
// kind of colour blindness, and their luminances differ enough (about 0.37
// against 0.64) to stay apart in greyscale print. Each series also has its
// own marker (filled circle against triangle) and line (solid against
// dashed), so nothing rests on colour alone. Reference lines are black,
// accepted bands a pale grey that any ink shows as a tint.
var (
	colSeries1 = color.RGBA{R: 0x00, G: 0x72, B: 0xB2, A: 0xFF} // blue
	colSeries2 = color.RGBA{R: 0xE6, G: 0x9F, B: 0x00, A: 0xFF} // orange
	colSeries3 = color.RGBA{R: 0x00, G: 0x9E, B: 0x73, A: 0xFF} // bluish green
	colRef     = color.RGBA{R: 0x00, G: 0x00, B: 0x00, A: 0xFF}
	colBand    = color.RGBA{R: 0xE4, G: 0xE4, B: 0xE4, A: 0xFF}
	colMark    = color.RGBA{R: 0x55, G: 0x55, B: 0x55, A: 0xFF} // the smallest adequate n
	colBars    = color.RGBA{R: 0xC4, G: 0xC4, B: 0xC4, A: 0xFF} // histogram bars
	colText    = color.RGBA{R: 0x22, G: 0x22, B: 0x22, A: 0xFF}
	colGrid    = color.RGBA{R: 0xEE, G: 0xEE, B: 0xEE, A: 0xFF}
)

var (
	dashed = []vg.Length{vg.Points(7), vg.Points(4)}
	dotted = []vg.Length{vg.Points(2), vg.Points(3)}
	dashDt = []vg.Length{vg.Points(8), vg.Points(3), vg.Points(2), vg.Points(3)}
)

// sans is Liberation Sans, which gonum/plot embeds: the figures look the
// same on every machine and need no installed fonts.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

var sansBold = func() font.Font {
	f := sans
	f.Weight = xfont.WeightBold
	return f
}()

func textStyle(f font.Font, size float64) text.Style {
	return text.Style{
		Color:   colText,
		Font:    font.From(f, font.Length(size)),
		XAlign:  draw.XLeft,
		YAlign:  draw.YTop,
		Handler: plot.DefaultTextHandler,
	}
}

// newPanel returns a plot with the report's type and quiet axes.
func newPanel() *plot.Plot {
	p := plot.New()
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		ax.Label.TextStyle.Font = font.From(sans, fontLabel)
		ax.Label.TextStyle.Color = colText
		ax.Tick.Label.Font = font.From(sans, fontSmall)
		ax.Tick.Label.Color = colText
		ax.LineStyle.Color = colText
		ax.Tick.LineStyle.Color = colText
		ax.LineStyle.Width = vg.Points(0.75)
		ax.Tick.LineStyle.Width = vg.Points(0.75)
	}
	p.Title.TextStyle.Font = font.From(sansBold, fontPanel)
	p.Legend.TextStyle.Font = font.From(sans, fontSmall)
	return p
}

// Figures renders every figure of r in each of formats (none: the
// DefaultFormats): for each transform, its trends and its shapes. They
// render one at a time, so the memory of drawing does not grow with the
// number of figures; each is a pure function of r and comes out byte for
// byte the same every time.
func Figures(r *runner.Result, formats ...Format) ([]Figure, error) {
	var figs []Figure
	err := eachFigure(r, formats, func(f Figure) error {
		figs = append(figs, f)
		return nil
	})
	if err != nil {
		return nil, err
	}
	return figs, nil
}

// eachFigure renders the figures of Figures one at a time, in order, and
// hands each to emit before drawing the next, so a caller that writes
// and drops each one holds one figure's bytes at a time.
func eachFigure(r *runner.Result, formats []Format, emit func(Figure) error) error {
	formats, err := checkFormats(formats)
	if err != nil {
		return err
	}
	rows := measure.Summarize(r)
	verdicts := measure.Verdicts(rows)
	stems := transformStems(r.Study.Transforms)
	nn := len(r.Study.SampleSizes)
	for t := range stems {
		var v measure.TransformVerdict
		if t < len(verdicts) {
			v = verdicts[t]
		}
		for _, kind := range []string{KindTrends, KindShapes} {
			stem := stems[t] + "-" + kind
			f := Figure{File: stem, Transform: t, Kind: kind}
			var err error
			switch kind {
			case KindTrends:
				f.Files, f.Width, f.Height, err = renderFormats(stem, formats, func(enc encodeFunc) ([]byte, int, int, error) {
					return trendsFigure(r, t, rows[t*nn:(t+1)*nn], v, enc)
				})
				f.Alt = trendsAlt(r, t, v)
			case KindShapes:
				f.Files, f.Width, f.Height, err = renderFormats(stem, formats, func(enc encodeFunc) ([]byte, int, int, error) {
					return shapesFigure(r, t, rows[t*nn:(t+1)*nn], v, enc)
				})
				f.Alt = shapesAlt(r, t)
			}
			if err != nil {
				return fmt.Errorf("drawing %s: %w", stem, err)
			}
			f.File = shownFile(f.Files)
			if err := emit(f); err != nil {
				return err
			}
		}
	}
	return nil
}

// transformStems are the file-name stems of the transforms, from
// SafeNames.
func transformStems(ts []study.TransformInfo) []string {
	names := make([]string, len(ts))
	for i, t := range ts {
		names[i] = t.Name
	}
	return SafeNames(names)
}

// SafeNames turns transform names into file-name stems that every common
// file system accepts: ASCII letters, digits, '-', '_' and '.' are kept,
// anything else becomes '_', and a leading '.' (a hidden file) becomes '_'.
// Two names that would meet, also when letter case is ignored, as it is on
// some file systems, are kept apart by a suffix "-2", "-3", … on the later.
func SafeNames(names []string) []string {
	out := make([]string, len(names))
	used := map[string]bool{}
	for i, name := range names {
		var b strings.Builder
		for j, c := range name {
			switch {
			case c == '.' && j == 0:
				b.WriteByte('_')
			case c < 0x80 && (c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_' || c == '.'):
				b.WriteRune(c)
			default:
				b.WriteByte('_')
			}
		}
		stem := b.String()
		if stem == "" {
			stem = "transform"
		}
		cand := stem
		for k := 2; used[strings.ToLower(cand)]; k++ {
			cand = stem + "-" + strconv.Itoa(k)
		}
		used[strings.ToLower(cand)] = true
		out[i] = cand
	}
	return out
}

// figureTitle names the transform and its expression, clipped so that a
// long one does not run off the figure.
func figureTitle(info study.TransformInfo, what string) string {
	return clip(info.Name, 40) + " = " + clip(info.Expr, 60) + what
}

// finite reports whether every x is a finite number.
func finite(xs ...float64) bool {
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// fmtG writes x with 3 significant digits for figure labels.
func fmtG(x float64) string {
	if !finite(x) {
		return "–"
	}
	return strconv.FormatFloat(x, 'g', 3, 64)
}
