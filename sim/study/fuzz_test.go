package study

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// FuzzParse feeds arbitrary bytes to the study loader: it must return a
// study or StudyErrors, never panic, and every error must name the file.
func FuzzParse(f *testing.F) {
	for _, pattern := range []string{"../../studies/*.toml", "../../testdata/bad/*.toml"} {
		files, _ := filepath.Glob(pattern)
		for _, file := range files {
			if b, err := os.ReadFile(file); err == nil {
				f.Add(b)
			}
		}
	}
	f.Add([]byte("seed = 1\nsample_sizes = [2]\n[model]\nfamily = \"gamma\"\nshape = 0.5\nrate = 2\n[[transform]]\nname = \"m\"\nexpr = \"shape/rate\"\n"))
	f.Add([]byte("arm = [{name = \"a\", family = \"poisson\", mean = 1}]\ntransform = [{name = \"t\", expr = \"log(a.mean)\"}]\nseed = 2\nsample_sizes = [5]\n"))
	f.Fuzz(func(t *testing.T, src []byte) {
		var (
			s   *Study
			err error
		)
		done := make(chan struct{})
		go func() {
			defer close(done)
			s, err = Parse("fuzz.toml", src)
		}()
		select {
		case <-done:
		case <-time.After(5 * time.Second):
			t.Fatalf("Parse did not return within 5 s")
		}
		if err == nil {
			if s == nil || len(s.Transforms) == 0 || len(s.Arms) == 0 {
				t.Fatalf("accepted a study without arms or transforms: %+v", s)
			}
			if s.Plan == nil && len(s.SampleSizes) == 0 {
				t.Fatalf("accepted a study with neither a grid nor a plan")
			}
			return
		}
		var es StudyErrors
		if !errors.As(err, &es) || len(es) == 0 {
			t.Fatalf("error of type %T, want StudyErrors: %v", err, err)
		}
		for _, e := range es {
			if !strings.HasPrefix(e.Error(), "fuzz.toml") {
				t.Fatalf("message does not name the file: %q", e.Error())
			}
		}
	})
}
