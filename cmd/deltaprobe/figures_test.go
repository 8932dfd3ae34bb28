package main

import (
	"bytes"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

// -figures takes a non-empty comma-separated subset of png, svg and pdf,
// each once, on every command that writes figures; anything else is
// refused with status 2 and a message naming what is accepted, before any
// work is done.
func TestFiguresFlagRefused(t *testing.T) {
	study := writeStudy(t, smallStudy)
	for _, cmd := range []string{"run", "plan", "merge", "report"} {
		for _, value := range []string{"", "jpg", "png,png", "svg,", "PNG", "png svg"} {
			t.Run(cmd+" "+value, func(t *testing.T) {
				out := filepath.Join(t.TempDir(), "out")
				var args []string
				switch cmd {
				case "run", "plan":
					args = []string{cmd, study, "-o", out, "-quiet"}
				case "merge":
					args = []string{cmd, "-o", out, "part"}
				case "report":
					args = []string{cmd, out}
				}
				code, stdout, stderr := runCLI(t, append(args, "-figures", value)...)
				if code != exitUsage {
					t.Errorf("exit %d, want %d", code, exitUsage)
				}
				if stdout != "" {
					t.Errorf("stdout not empty: %q", stdout)
				}
				if !strings.Contains(stderr, "-figures") || !strings.Contains(stderr, "png,svg,pdf") {
					t.Errorf("message does not name the flag and what it accepts:\n%s", stderr)
				}
				if _, err := os.Stat(out); !os.IsNotExist(err) {
					t.Errorf("output folder made: %v", err)
				}
			})
		}
	}
}

// refs are the files a page refers to: image sources and links.
var refs = regexp.MustCompile(`(?:src|href)="([^"#][^"]*)"`)

// checkFolderFigures checks that dir holds figures in exactly the
// extensions want, each beginning as its format does, and that every file
// the page refers to exists.
func checkFolderFigures(t *testing.T, dir string, want []string) {
	t.Helper()
	magic := map[string]string{".png": "\x89PNG", ".svg": "<?xml", ".pdf": "%PDF-"}
	files := readDir(t, dir)
	var exts []string
	for name, data := range files {
		ext := filepath.Ext(name)
		m, ok := magic[ext]
		if !ok {
			continue
		}
		if !slices.Contains(exts, ext) {
			exts = append(exts, ext)
		}
		if !bytes.HasPrefix(data, []byte(m)) {
			t.Errorf("%s does not begin as a %s file: %.12q", name, ext, data)
		}
		if ext == ".svg" && !bytes.Contains(data[:min(len(data), 400)], []byte("<svg")) {
			t.Errorf("%s has no <svg element at its head", name)
		}
	}
	slices.Sort(exts)
	if !slices.Equal(exts, want) {
		t.Errorf("figures in %q, want %q", exts, want)
	}
	page, ok := files["index.html"]
	if !ok {
		t.Fatal("no index.html")
	}
	found := 0
	for _, m := range refs.FindAllSubmatch(page, -1) {
		ref := string(m[1])
		if _, ok := files[ref]; !ok {
			t.Errorf("the page refers to %q, which is not in the folder", ref)
		}
		found++
	}
	if found == 0 {
		t.Error("the page refers to no file")
	}
}

// A run with -figures svg,pdf writes vector figures and no PNG; report
// DIR re-renders the folder in the formats it is given, and the same
// formats again come out byte for byte the same.
func TestRunVectorFigures(t *testing.T) {
	study := writeStudy(t, smallStudy)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runCLI(t, "run", study, "-o", out, "-quiet", "-replicates", "300", "-figures", "svg,pdf"); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	checkFolderFigures(t, out, []string{".pdf", ".svg"})
	first := readDir(t, out)

	if code, _, stderr := runCLI(t, "report", out, "-figures", "pdf,png"); code != exitOK {
		t.Fatalf("report -figures pdf,png: exit %d: %s", code, stderr)
	}
	checkFolderFigures(t, out, []string{".pdf", ".png"})

	if code, _, stderr := runCLI(t, "report", "-figures", "svg,pdf", out); code != exitOK {
		t.Fatalf("report -figures svg,pdf: exit %d: %s", code, stderr)
	}
	again := readDir(t, out)
	if !slices.Equal(names(again), names(first)) {
		t.Fatalf("rewritten as svg,pdf the folder holds %q, first %q", names(again), names(first))
	}
	for name, data := range first {
		if !bytes.Equal(again[name], data) {
			t.Errorf("%s differs between two renderings", name)
		}
	}
}

func TestPlanVectorFigures(t *testing.T) {
	study := writeStudy(t, planStudy)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runCLI(t, "plan", study, "-o", out, "-quiet", "-workers", "2", "-figures", "pdf"); code != exitOK {
		t.Fatalf("plan: exit %d: %s", code, stderr)
	}
	checkFolderFigures(t, out, []string{".pdf"})
}
