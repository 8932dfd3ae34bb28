package report

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

func TestParseFormats(t *testing.T) {
	for _, tc := range []struct {
		in   string
		want []Format // nil: refused
	}{
		{"png", []Format{FormatPNG}},
		{"svg", []Format{FormatSVG}},
		{"pdf", []Format{FormatPDF}},
		{"svg,pdf", []Format{FormatSVG, FormatPDF}},
		{"pdf,svg,png", []Format{FormatPNG, FormatSVG, FormatPDF}},
		{"png, svg", []Format{FormatPNG, FormatSVG}},
		{"", nil},
		{" ", nil},
		{"jpg", nil},
		{"PNG", nil},
		{"png,png", nil},
		{"png,", nil},
		{",svg", nil},
		{"png;svg", nil},
		{"svg,pdf,svg", nil},
	} {
		t.Run(tc.in, func(t *testing.T) {
			got, err := ParseFormats(tc.in)
			if tc.want == nil {
				if err == nil {
					t.Fatalf("accepted as %v, want refused", got)
				}
				if !strings.Contains(err.Error(), "png,svg,pdf") {
					t.Errorf("message %q does not name what is accepted", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got, tc.want) {
				t.Errorf("got %v, want %v", got, tc.want)
			}
			if again, err := ParseFormats(FormatList(got)); err != nil || !slices.Equal(again, got) {
				t.Errorf("FormatList does not round-trip: %q gives %v, %v", FormatList(got), again, err)
			}
		})
	}
}

func TestToCP1252(t *testing.T) {
	for _, tc := range []struct{ in, want string }{
		{"n = 10", "n = 10"},
		{"n = 10–20", "n = 10\x9620"},
		{"±0.05 … größe", "\xb10.05 \x85 gr\xf6\xdfe"},
		{"estimate − truth", "estimate - truth"},
		{"θ ≤ 1", "? ? 1"},
		{"\xff", "?"},
	} {
		if got := toCP1252(tc.in); got != tc.want {
			t.Errorf("toCP1252(%q) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

// magic is how a file of each format begins.
var magic = map[Format]string{
	FormatPNG: "\x89PNG\r\n\x1a\n",
	FormatSVG: "<?xml",
	FormatPDF: "%PDF-",
}

// checkVectorFiles checks that every figure has exactly the files of
// formats, named after the figure, each starting as its format does.
func checkVectorFiles(t *testing.T, figs []Figure, formats []Format) {
	t.Helper()
	if len(figs) == 0 {
		t.Fatal("no figures")
	}
	for _, fig := range figs {
		if len(fig.Files) != len(formats) {
			t.Errorf("%s has %d files, want %d", fig.File, len(fig.Files), len(formats))
			continue
		}
		for i, f := range fig.Files {
			if f.Format != formats[i] || !strings.HasSuffix(f.Name, "-"+fig.Kind+"."+string(formats[i])) {
				t.Errorf("file %d of %s is %s (%s), want one in %s", i, fig.File, f.Name, f.Format, formats[i])
			}
			if !bytes.HasPrefix(f.Data, []byte(magic[f.Format])) {
				t.Errorf("%s does not start as a %s file: %.20q", f.Name, f.Format, f.Data)
			}
			if f.Format == FormatSVG && !bytes.Contains(f.Data[:min(len(f.Data), 400)], []byte("<svg")) {
				t.Errorf("%s has no <svg element at its head", f.Name)
			}
		}
	}
}

// Vector figures are a pure function of the input too: the PDF states a
// fixed date, not the time of writing. Asking for more formats changes no
// format's bytes, so the PNG is the same with or without vector files.
func TestVectorFiguresDeterministic(t *testing.T) {
	r := storedRun(t, "run-small")
	vector := []Format{FormatSVG, FormatPDF}
	a, b := renderTwice(t, func() ([]Figure, error) { return Figures(r, vector...) })
	checkVectorFiles(t, a, vector)
	all, err := Figures(r, Formats...)
	if err != nil {
		t.Fatal(err)
	}
	checkVectorFiles(t, all, Formats)
	pngs := storedFigures(t, "run-small")
	for i := range a {
		for _, f := range vector {
			if !bytes.Equal(a[i].Data(f), b[i].Data(f)) {
				t.Errorf("%s: the %s differs between two renderings", a[i].File, f)
			}
			if !bytes.Equal(a[i].Data(f), all[i].Data(f)) {
				t.Errorf("%s: the %s differs when the PNG is rendered too", a[i].File, f)
			}
		}
		if !bytes.Equal(all[i].Data(FormatPNG), pngs[i].Data(FormatPNG)) {
			t.Errorf("%s: the PNG differs when vector files are rendered too", pngs[i].File)
		}
		if a[i].Width != pngs[i].Width || a[i].Height != pngs[i].Height {
			t.Errorf("%s: size %d×%d without the PNG, %d×%d with it", a[i].File, a[i].Width, a[i].Height, pngs[i].Width, pngs[i].Height)
		}
	}
	for _, f := range a {
		pdf := f.Data(FormatPDF)
		if !bytes.Contains(pdf, []byte("D:20000101000000")) {
			t.Errorf("%s.pdf does not state the fixed date", strings.TrimSuffix(f.File, ".svg"))
		}
		if !bytes.Contains(pdf, []byte("/FontFile2")) {
			t.Errorf("%s: the PDF embeds no font", f.File)
		}
		if !bytes.Contains(f.Data(FormatSVG), []byte("@font-face")) {
			t.Errorf("%s embeds no font", f.File)
		}
	}
}

func TestPlanVectorFigures(t *testing.T) {
	_, p := storedPlan(t, planCases[0].dir)
	formats := []Format{FormatPDF}
	a, b := renderTwice(t, func() ([]Figure, error) { return PlanFigures(p, formats...) })
	checkVectorFiles(t, a, formats)
	for i := range a {
		if !bytes.Equal(a[i].Data(FormatPDF), b[i].Data(FormatPDF)) {
			t.Errorf("%s differs between two renderings", a[i].File)
		}
	}
}

// A run written with only vector figures has no PNG; its page shows the
// SVG, links the PDF, and references files that exist. Writing the folder
// again in PNG alone removes the vector files.
func TestWriteVectorFigures(t *testing.T) {
	r := storedRun(t, "run-small")
	dir := t.TempDir()
	if err := Write(dir, r, FormatSVG, FormatPDF); err != nil {
		t.Fatal(err)
	}
	count := func(ext string) int {
		m, err := filepath.Glob(filepath.Join(dir, "*"+ext))
		if err != nil {
			t.Fatal(err)
		}
		return len(m)
	}
	figs := 2 * len(r.Study.Transforms)
	if n := count(".png"); n != 0 {
		t.Errorf("%d PNG files, want none", n)
	}
	if n, m := count(".svg"), count(".pdf"); n != figs || m != figs {
		t.Errorf("%d SVG and %d PDF files, want %d each", n, m, figs)
	}
	page, err := os.ReadFile(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}
	doc, _ := checkPageBasics(t, dir, page, pageWant{
		transforms: len(r.Study.Transforms), images: figs, imageSuffix: ".svg",
		title: r.Study.Title, source: r.Study.Source,
	})
	if n := len(doc.find(hasClass("span", "also"))); n != figs {
		t.Errorf("%d figures link their other formats, want %d", n, figs)
	}

	if err := Write(dir, r); err != nil {
		t.Fatal(err)
	}
	if n, m, k := count(".png"), count(".svg"), count(".pdf"); n != figs || m != 0 || k != 0 {
		t.Errorf("rewritten as PNG: %d PNG, %d SVG, %d PDF files, want %d, 0, 0", n, m, k, figs)
	}
}

// A page of figures in PDF alone links each PDF, since a browser shows no
// PDF as an image.
func TestPageOfPDFOnly(t *testing.T) {
	_, p := storedPlan(t, planCases[0].dir)
	dir := t.TempDir()
	if err := WritePlan(dir, p, FormatPDF); err != nil {
		t.Fatal(err)
	}
	page, err := os.ReadFile(filepath.Join(dir, PageFile))
	if err != nil {
		t.Fatal(err)
	}
	doc := parsePage(t, page)
	if imgs := doc.find(named("img")); len(imgs) != 0 {
		t.Errorf("%d images, want none", len(imgs))
	}
	var pdfs []string
	for _, a := range doc.find(named("a")) {
		if href := a.attrs["href"]; strings.HasSuffix(href, ".pdf") {
			pdfs = append(pdfs, href)
			if _, err := os.Stat(filepath.Join(dir, href)); err != nil {
				t.Error(err)
			}
		}
	}
	if len(pdfs) != len(p.Study.Transforms) {
		t.Errorf("links to %q, want one PDF per transform", pdfs)
	}
}

func TestFiguresRefuseFormat(t *testing.T) {
	r := storedRun(t, "run-small")
	for _, formats := range [][]Format{{"jpg"}, {FormatPNG, FormatPNG}} {
		if _, err := Figures(r, formats...); err == nil {
			t.Errorf("Figures accepted %v", formats)
		}
	}
	if err := Write(t.TempDir(), r, "tiff"); err == nil {
		t.Errorf("Write accepted tiff: %v", err)
	}
}
