package report

import (
	"bytes"
	"crypto/sha256"
	"image/png"
	"math"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"deltaprobe/sim/runner"

	"gonum.org/v1/plot/vg"
)

func TestSafeNames(t *testing.T) {
	tests := []struct {
		name string
		in   []string
		want []string
	}{
		{"kept", []string{"log_OR", "ratio-2.5"}, []string{"log_OR", "ratio-2.5"}},
		{"replaced", []string{"1/mean (reciprocal)", "a:b*c?"}, []string{"1_mean__reciprocal_", "a_b_c_"}},
		{"non-ASCII", []string{"θ ratio", "größe"}, []string{"__ratio", "gr__e"}},
		{"hidden file", []string{".hidden", "a.b"}, []string{"_hidden", "a.b"}},
		{"empty", []string{""}, []string{"transform"}},
		{"collision", []string{"a b", "a_b", "a/b"}, []string{"a_b", "a_b-2", "a_b-3"}},
		{"collision with a suffix", []string{"a b", "a_b", "a_b-2"}, []string{"a_b", "a_b-2", "a_b-2-2"}},
		{"letter case", []string{"OR", "or"}, []string{"OR", "or-2"}},
	}
	ok := regexp.MustCompile(`^[A-Za-z0-9_\-][A-Za-z0-9_.\-]*$`)
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := SafeNames(tc.in)
			if strings.Join(got, "|") != strings.Join(tc.want, "|") {
				t.Fatalf("SafeNames(%q) = %q, want %q", tc.in, got, tc.want)
			}
			seen := map[string]bool{}
			for _, g := range got {
				if !ok.MatchString(g) {
					t.Errorf("%q is not a safe file name", g)
				}
				if seen[strings.ToLower(g)] {
					t.Errorf("%q collides with another name", g)
				}
				seen[strings.ToLower(g)] = true
			}
		})
	}
}

// checkPNG decodes b and checks its size and that it shows something: a
// blank or nearly blank canvas has few distinct colours and little ink.
func checkPNG(t *testing.T, name string, b []byte, wantW, wantH int) {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("%s: not a PNG: %v", name, err)
	}
	bounds := img.Bounds()
	if bounds.Dx() != wantW || bounds.Dy() != wantH {
		t.Errorf("%s: %d×%d pixels, want %d×%d", name, bounds.Dx(), bounds.Dy(), wantW, wantH)
	}
	if bounds.Dx() < 1200 {
		t.Errorf("%s: %d pixels wide, want at least 1200", name, bounds.Dx())
	}
	colours := map[[3]uint32]bool{}
	var ink int
	for y := bounds.Min.Y; y < bounds.Max.Y; y += 2 {
		for x := bounds.Min.X; x < bounds.Max.X; x += 2 {
			r, g, b, _ := img.At(x, y).RGBA()
			colours[[3]uint32{r >> 8, g >> 8, b >> 8}] = true
			if r>>8 < 0xF0 || g>>8 < 0xF0 || b>>8 < 0xF0 {
				ink++
			}
		}
	}
	share := float64(ink) / float64(bounds.Dx()*bounds.Dy()/4)
	if len(colours) < 50 || share < 0.03 {
		t.Errorf("%s looks blank: %d distinct colours, %.1f%% of pixels inked", name, len(colours), 100*share)
	}
}

func TestFigures(t *testing.T) {
	for _, tc := range runCases {
		t.Run(tc.name, func(t *testing.T) {
			r := storedRun(t, tc.dir)
			figs := storedFigures(t, tc.dir)
			if len(figs) != 2*len(r.Study.Transforms) {
				t.Fatalf("%d figures for %d transforms, want two each", len(figs), len(r.Study.Transforms))
			}
			names := make([]string, len(r.Study.Transforms))
			for i, tr := range r.Study.Transforms {
				names[i] = tr.Name
			}
			stems := SafeNames(names)
			files := map[string]bool{}
			for _, f := range figs {
				want := stems[f.Transform] + "-" + f.Kind + ".png"
				if f.File != want {
					t.Errorf("figure file %q, want %q", f.File, want)
				}
				if files[f.File] {
					t.Errorf("two figures share the file %q", f.File)
				}
				files[f.File] = true
				// 160 pixels an inch; trends 10 inches tall (15 with the
				// power panel's fourth row, when the transform has a null)
				// plus the lines a long subtitle wraps onto
				// (TestLongSubtitleWraps), shapes 2.45 inches a row of two
				// sample sizes and 1.1 for the heading.
				wantH := 1600
				if f.Kind == KindTrends && r.Study.Transforms[f.Transform].Null != nil {
					wantH = 2400
				}
				if f.Kind == KindTrends && f.Height > wantH && f.Height < wantH+3*60 {
					wantH = f.Height
				}
				if f.Kind == KindShapes {
					rows := (len(shapeIndices(r.Study.SampleSizes, 0)) + 1) / 2
					wantH = int(math.Round((2.45*float64(rows) + 1.1) * 160))
				}
				checkPNG(t, f.File, f.Data(FormatPNG), 1600, wantH)
				if f.Width != 1600 || f.Height != wantH {
					t.Errorf("%s reports %d×%d, want 1600×%d", f.File, f.Width, f.Height, wantH)
				}
				if f.Alt == "" {
					t.Errorf("%s has no alt text", f.File)
				}
			}
		})
	}
}

// Figures must be a pure function of the result: the same bytes on every
// rendering, and the same after the result has been saved and loaded
// again. The first rendering is the one TestFigures checks; TestWritePage
// compares another rendering of the result as it is with it, and this test
// one of the result saved and loaded again. (That a freshly simulated
// result draws as its saved copy does, cmd/deltaprobe's
// TestReportFromSavedResult checks.)
func TestFiguresDeterministic(t *testing.T) {
	r := storedRun(t, "run-small")
	first := storedFigures(t, "run-small")
	path := filepath.Join(t.TempDir(), "result.json")
	if err := runner.SaveResult(path, r); err != nil {
		t.Fatal(err)
	}
	loaded, err := runner.LoadResult(path)
	if err != nil {
		t.Fatal(err)
	}
	again, err := Figures(loaded)
	if err != nil {
		t.Fatal(err)
	}
	for i := range first {
		if sha256.Sum256(first[i].Data(FormatPNG)) != sha256.Sum256(again[i].Data(FormatPNG)) {
			t.Errorf("%s differs between renderings of the result before and after saving and loading it", first[i].File)
		}
	}
}

func TestShapeIndices(t *testing.T) {
	grid := func(k int) []int {
		ns := make([]int, k)
		for i := range ns {
			ns[i] = 10 * (i + 1)
		}
		return ns
	}
	tests := []struct {
		name     string
		ns       []int
		smallest int
		must     []int // indices that must be shown
	}{
		{"few: all", grid(6), 30, []int{0, 1, 2, 3, 4, 5}},
		{"exactly the cap", grid(maxShapes), 0, []int{0, maxShapes - 1}},
		{"many: ends", grid(40), 0, []int{0, 39}},
		{"many: smallest adequate and the one before", grid(40), 230, []int{0, 21, 22, 39}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := shapeIndices(tc.ns, tc.smallest)
			if len(got) > maxShapes {
				t.Errorf("%d sample sizes shown, want at most %d", len(got), maxShapes)
			}
			if len(tc.ns) >= maxShapes && len(got) != maxShapes {
				t.Errorf("%d sample sizes shown of %d, want %d", len(got), len(tc.ns), maxShapes)
			}
			in := map[int]bool{}
			for i, g := range got {
				if i > 0 && g <= got[i-1] {
					t.Fatalf("indices %v not strictly increasing", got)
				}
				in[g] = true
			}
			for _, m := range tc.must {
				if !in[m] {
					t.Errorf("index %d missing from %v", m, got)
				}
			}
		})
	}
}

// Tick labels are round numbers, at most as many as asked for, written
// without floating-point noise.
func TestStepTicks(t *testing.T) {
	tests := []struct {
		lo, hi float64
		max    int
		want   string
	}{
		{0.84, 0.98, 5, "0.85 0.90 0.95"},
		{0, 0.27, 5, "0 0.1 0.2"},
		{-0.12, 0.15, 5, "-0.1 0 0.1"},
		{-3.2, 5.4, 5, "-2 0 2 4"},
		{0.7, 1.25, 5, "0.8 1.0 1.2"},
		{0.1, 0.3, 5, "0.10 0.15 0.20 0.25 0.30"},
	}
	for _, tc := range tests {
		var labels []string
		for _, tk := range (stepTicks{maxLabels: tc.max}).Ticks(tc.lo, tc.hi) {
			labels = append(labels, tk.Label)
		}
		if got := strings.Join(labels, " "); got != tc.want {
			t.Errorf("ticks over [%g, %g]: %q, want %q", tc.lo, tc.hi, got, tc.want)
		}
	}
}

// The heavy-tailed run has pivots beyond the histogram's range, so the
// share outside counts.
func TestRebin(t *testing.T) {
	r := storedRun(t, "run-heavy")
	for ni, n := range r.Study.SampleSizes {
		h := &r.Cells[0][ni].Delta
		for _, w := range []float64{0.2, 0.25, 0.5, 1} {
			edges, dens, outside := rebin(h, 6, w)
			if len(edges) != len(dens)+1 {
				t.Fatalf("n=%d w=%g: %d edges for %d bins", n, w, len(edges), len(dens))
			}
			var area float64
			for i, d := range dens {
				area += d * (edges[i+1] - edges[i])
			}
			if math.Abs(area+outside-1) > 1e-9 {
				t.Errorf("n=%d w=%g: area %g + outside %g = %g, want 1", n, w, area, outside, area+outside)
			}
		}
	}
}

// The tick labels of the trends figure's n axis name the grid's own
// sample sizes, thinned when they would crowd, and always the largest.
func TestSampleSizeTicks(t *testing.T) {
	ns := []int{4, 8, 16, 32, 64, 128, 256, 512, 1024, 2048, 4096, 8192, 16384, 32768}
	span := math.Log10(float64(ns[len(ns)-1]) / float64(ns[0]))
	ticks := sampleSizeTicks{ns: ns, minGap: 0.09 * span}.Ticks(1, 1e6)
	if len(ticks) != len(ns) {
		t.Fatalf("%d ticks for %d sample sizes", len(ticks), len(ns))
	}
	last := math.Inf(-1)
	var labelled []string
	for _, tk := range ticks {
		if tk.Label == "" {
			continue
		}
		if tk.Label != strconv.Itoa(int(tk.Value)) {
			t.Errorf("tick at %g labelled %q", tk.Value, tk.Label)
		}
		if l := math.Log10(tk.Value); l-last < 0.09*span-1e-9 {
			t.Errorf("label %q only %.2f decades from the one before", tk.Label, l-last)
		} else {
			last = l
		}
		labelled = append(labelled, tk.Label)
	}
	if labelled[0] != "4" || labelled[len(labelled)-1] != "32768" {
		t.Errorf("labels %v: want the smallest and the largest n labelled", labelled)
	}
}

// A subtitle longer than the figure is wide wraps onto lines that each
// fit, instead of running off the edge (it did for not_reached answers).
func TestLongSubtitleWraps(t *testing.T) {
	sub := "Delta method against 20000 simulated replicates per n; Wald intervals at level 0.95. " +
		"Not adequate within the grid; variance fails at the largest n."
	h := wrappedHeading("title", sub)
	if len(h.lines) < 2 {
		t.Fatalf("subtitle of %d characters kept on %d line", len(sub), len(h.lines))
	}
	st := subtitleStyle()
	for _, l := range h.lines {
		if w := st.Width(l); w > figWidth-2*vg.Points(headingMargin) {
			t.Errorf("line %q is %v wide, more than the figure allows", l, w)
		}
	}
	if h.height() <= oneLineHeading("title", sub).height() {
		t.Error("the wrapped heading takes no more room than one line")
	}
}
