package expr_test

import (
	"strings"
	"testing"

	"deltaprobe/sim/expr"
)

func TestTmpPrint(t *testing.T) {
	for _, s := range []string{"", "   ", "mean +", "mean * * sd", "+mean", "mean )", "mean mean", "2(mean)", "(mean", "(mean sd)", "log", "2*exp mean", "log(mean", "log()", "log(mean, sd)", "mean, sd", "frob(mean)", "phi(mean)", "men", "zzzz", "mean(2)", "1e", "1.2.3", "1e999", "mean.1", "mean.", "mean $ sd", ".", "μ", "mean\xff", strings.Repeat("(", 70), "x"} {
		_, err := expr.Compile(s, []string{"mean", "sd"})
		t.Logf("%-14q %v", s, err)
	}
	_, err := expr.Compile("x", nil)
	t.Logf("%v", err)
}
