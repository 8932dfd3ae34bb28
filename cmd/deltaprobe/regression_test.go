package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The regression examples predict (golden: the design stated under the
// table) and run end to end, and the page states the design.
func TestRegressionStudiesGolden(t *testing.T) {
	for _, name := range []string{"dose_response", "count_exposure", "mediation", "coefficient_ratio"} {
		t.Run(name, func(t *testing.T) {
			code, stdout, stderr := runCLI(t, "predict", "../../studies/"+name+".toml")
			if code != exitOK {
				t.Fatalf("predict: exit %d: %s", code, stderr)
			}
			golden(t, "testdata/predict-"+name+".stdout", []byte(stdout))
			if testing.Short() {
				return
			}
			out := filepath.Join(t.TempDir(), "out")
			if code, _, stderr := runCLI(t, "run", "../../studies/"+name+".toml", "-o", out, "-quiet", "-replicates", "1000"); code != exitOK {
				t.Fatalf("run: exit %d: %s", code, stderr)
			}
			page, err := os.ReadFile(filepath.Join(out, "index.html"))
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(string(page), "n is the number of rows (observations); covariates:") {
				t.Errorf("the page of %s does not state the design", name)
			}
		})
	}
}
