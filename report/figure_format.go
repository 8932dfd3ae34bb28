package report

import (
	"bytes"
	"fmt"
	"image/color"
	"image/png"
	"slices"
	"strings"
	"time"
	"unicode/utf8"

	"codeberg.org/go-pdf/fpdf"
	xfont "golang.org/x/image/font"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Format is a file format the figures are written in.
type Format string

// The figure formats. PNG is the default and what the page shows; SVG and
// PDF are vector files for print and for reviewers who want to zoom.
const (
	FormatPNG Format = "png"
	FormatSVG Format = "svg"
	FormatPDF Format = "pdf"
)

// Formats lists every figure format, in the order a figure's files are
// written and linked.
var Formats = []Format{FormatPNG, FormatSVG, FormatPDF}

// DefaultFormats are the formats written when none are asked for.
var DefaultFormats = []Format{FormatPNG}

// ParseFormats parses a comma-separated list of figure formats, such as
// "png,svg,pdf": a non-empty subset of Formats, each named once. The
// result is in the order of Formats, whatever the order given.
func ParseFormats(s string) ([]Format, error) {
	accepted := FormatList(Formats)
	if strings.TrimSpace(s) == "" {
		return nil, fmt.Errorf("no figure format given; accepted: a comma-separated subset of %s", accepted)
	}
	seen := map[Format]bool{}
	for part := range strings.SplitSeq(s, ",") {
		f := Format(strings.TrimSpace(part))
		switch {
		case !slices.Contains(Formats, f):
			return nil, fmt.Errorf("unknown figure format %q; accepted: a comma-separated subset of %s", part, accepted)
		case seen[f]:
			return nil, fmt.Errorf("figure format %q given twice; accepted: a comma-separated subset of %s, each once", f, accepted)
		}
		seen[f] = true
	}
	var out []Format
	for _, f := range Formats {
		if seen[f] {
			out = append(out, f)
		}
	}
	return out, nil
}

// FormatList writes formats as ParseFormats reads them.
func FormatList(formats []Format) string {
	parts := make([]string, len(formats))
	for i, f := range formats {
		parts[i] = string(f)
	}
	return strings.Join(parts, ",")
}

// checkFormats refuses an empty, unknown or repeated format, and puts
// known ones in the order of Formats. No formats at all means
// DefaultFormats.
func checkFormats(formats []Format) ([]Format, error) {
	if len(formats) == 0 {
		return DefaultFormats, nil
	}
	return ParseFormats(FormatList(formats))
}

// FigureFile is one file of a figure: the figure in one format.
type FigureFile struct {
	Name   string // file name inside the output folder
	Format Format
	Data   []byte
}

// shownFile picks the file the page shows of a figure's files: the PNG if
// there is one, else the SVG, else the first.
func shownFile(files []FigureFile) string {
	for _, want := range []Format{FormatPNG, FormatSVG} {
		for _, f := range files {
			if f.Format == want {
				return f.Name
			}
		}
	}
	if len(files) > 0 {
		return files[0].Name
	}
	return ""
}

// PDFDate is the creation and modification date every PDF figure states.
// A PDF writer would otherwise stamp the time of writing, and the same
// input would not give the same bytes.
var PDFDate = time.Date(2000, time.January, 1, 0, 0, 0, 0, time.UTC)

func init() {
	// The PDF writer takes these defaults when it starts a document; set
	// once here, before any figure renders, they make its output a pure
	// function of the drawing: a fixed date, and resources in sorted
	// rather than map order.
	fpdf.SetDefaultCreationDate(PDFDate)
	fpdf.SetDefaultModificationDate(PDFDate)
	fpdf.SetDefaultCatalogSort(true)
}

// encodeFunc renders a drawing of the given height onto a figure-wide
// canvas of one format and returns the file's bytes.
type encodeFunc func(height vg.Length, drawFn func(dc draw.Canvas)) ([]byte, error)

// encoderOf returns the encodeFunc of format f.
func encoderOf(f Format) (encodeFunc, error) {
	switch f {
	case FormatPNG:
		return encodePNG, nil
	case FormatSVG:
		return encodeSVG, nil
	case FormatPDF:
		return encodePDF, nil
	}
	return nil, fmt.Errorf("unknown figure format %q", f)
}

// renderFormats renders a figure in each of formats, each file named stem
// plus the format's extension, and returns the files with the figure's
// size in PNG pixels (which the page uses for every format, so its layout
// does not depend on the format). drawFigure builds and draws the figure
// with the encoder it is given; it is called once for each format, so
// each file is drawn from a figure built afresh (a plot's layout is not
// the same when it is drawn a second time).
func renderFormats(stem string, formats []Format, drawFigure func(enc encodeFunc) ([]byte, int, int, error)) ([]FigureFile, int, int, error) {
	files := make([]FigureFile, 0, len(formats))
	var w, h int
	for _, f := range formats {
		enc, err := encoderOf(f)
		if err != nil {
			return nil, 0, 0, err
		}
		data, fw, fh, err := drawFigure(enc)
		if err != nil {
			return nil, 0, 0, err
		}
		w, h = fw, fh
		files = append(files, FigureFile{Name: stem + "." + string(f), Format: f, Data: data})
	}
	return files, w, h, nil
}

// encodeSized renders a drawing of the given height with enc and returns
// it with its size in PNG pixels.
func encodeSized(enc encodeFunc, height vg.Length, drawFn func(dc draw.Canvas)) ([]byte, int, int, error) {
	data, err := enc(height, drawFn)
	if err != nil {
		return nil, 0, 0, err
	}
	w, h := pixelSize(height)
	return data, w, h, nil
}

// pixelSize is the size in pixels of a figure-wide PNG of the given
// height, rounded as the PNG canvas rounds it.
func pixelSize(height vg.Length) (int, int) {
	w := figWidth / vg.Inch * figDPI
	h := height / vg.Inch * figDPI
	return int(w + 0.5), int(h + 0.5)
}

// encodePNG renders a drawing of the given height onto a figure-wide
// canvas and encodes it as PNG.
func encodePNG(height vg.Length, drawFn func(dc draw.Canvas)) ([]byte, error) {
	img := vgimg.NewWith(vgimg.UseWH(figWidth, height), vgimg.UseDPI(figDPI), vgimg.UseBackgroundColor(color.White))
	drawFn(draw.New(img))
	var buf bytes.Buffer
	// Best speed: the figures are mostly flat colour, so the files stay
	// small, and encoding no longer dominates writing the report.
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	if err := enc.Encode(&buf, img.Image()); err != nil {
		return nil, fmt.Errorf("encoding PNG: %w", err)
	}
	return buf.Bytes(), nil
}

// encodeSVG renders a drawing as SVG. The fonts are embedded, so the
// text is set in the figures' own type on any machine.
func encodeSVG(height vg.Length, drawFn func(dc draw.Canvas)) ([]byte, error) {
	c := vgsvg.NewWith(vgsvg.UseWH(figWidth, height), vgsvg.EmbedFonts(true))
	dc := draw.New(c)
	fillBackground(dc)
	drawFn(dc)
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("encoding SVG: %w", err)
	}
	return buf.Bytes(), nil
}

// encodePDF renders a drawing as a one-page PDF, its regular face
// embedded (see pdfTextCanvas).
func encodePDF(height vg.Length, drawFn func(dc draw.Canvas)) ([]byte, error) {
	c := vgpdf.New(figWidth, height)
	c.EmbedFonts(true)
	dc := draw.New(pdfTextCanvas{CanvasSizer: c, pdf: c})
	fillBackground(dc)
	drawFn(dc)
	var buf bytes.Buffer
	if _, err := c.WriteTo(&buf); err != nil {
		return nil, fmt.Errorf("encoding PDF: %w", err)
	}
	return buf.Bytes(), nil
}

// fillBackground paints the canvas white, as the PNG's background is, so
// a vector figure does not show through to a dark viewer.
func fillBackground(dc draw.Canvas) {
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
}

// pdfTextCanvas passes text to the PDF canvas so that it comes out right.
//
// It encodes the text in code page 1252, the encoding the canvas's
// embedded fonts use: the PDF writer takes the bytes of a string as they
// are, so any character beyond ASCII would otherwise come out as two or
// three wrong ones.
//
// It names a bold or italic face as a normal one of a variant of its own:
// the canvas registers every face under its name with no style, but asks
// the writer for a bold face under its name with style "B", which the
// writer then does not find. The face itself, and so the glyphs' widths,
// is unchanged.
//
// And it embeds the regular face only. The canvas names every embedded
// font's data alike, so a document embedding two faces holds the data of
// one of them for both: bold text would be set in regular glyphs. A bold
// face is referenced by name instead (LiberationSans-Bold, whose metrics
// are Arial's), so a viewer sets it in that face or one of the same
// widths.
type pdfTextCanvas struct {
	vg.CanvasSizer
	pdf *vgpdf.Canvas
}

func (c pdfTextCanvas) FillString(f font.Face, pt vg.Point, s string) {
	if f.Font.Weight != xfont.WeightNormal || f.Font.Style != xfont.StyleNormal {
		f.Font.Variant = font.Variant(fmt.Sprintf("%s-w%d-s%d", f.Font.Variant, f.Font.Weight, f.Font.Style))
		f.Font.Weight, f.Font.Style = xfont.WeightNormal, xfont.StyleNormal
		defer c.pdf.EmbedFonts(c.pdf.EmbedFonts(false))
	}
	c.CanvasSizer.FillString(f, pt, toCP1252(s))
}

// cp1252High maps the characters code page 1252 puts at 0x80–0x9F.
var cp1252High = map[rune]byte{
	'€': 0x80, '‚': 0x82, 'ƒ': 0x83, '„': 0x84, '…': 0x85, '†': 0x86, '‡': 0x87,
	'ˆ': 0x88, '‰': 0x89, 'Š': 0x8A, '‹': 0x8B, 'Œ': 0x8C, 'Ž': 0x8E,
	'‘': 0x91, '’': 0x92, '“': 0x93, '”': 0x94, '•': 0x95, '–': 0x96, '—': 0x97,
	'˜': 0x98, '™': 0x99, 'š': 0x9A, '›': 0x9B, 'œ': 0x9C, 'ž': 0x9E, 'Ÿ': 0x9F,
}

// toCP1252 encodes s in code page 1252. The minus sign becomes a hyphen;
// any other character the code page lacks becomes '?'.
func toCP1252(s string) string {
	b := make([]byte, 0, len(s))
	for _, r := range s {
		switch {
		case r < 0x80 || r >= 0xA0 && r <= 0xFF:
			b = append(b, byte(r))
		case r == '−':
			b = append(b, '-')
		case r == utf8.RuneError:
			b = append(b, '?')
		default:
			if c, ok := cp1252High[r]; ok {
				b = append(b, c)
			} else {
				b = append(b, '?')
			}
		}
	}
	return string(b)
}
