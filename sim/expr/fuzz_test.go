package expr_test

import (
	"errors"
	"math"
	"testing"

	"deltaprobe/sim/expr"
)

// FuzzCompile feeds arbitrary sources to Compile. Whatever comes in, Compile
// must return either a program or a *SyntaxError pointing inside (or just
// past) the source, and a compiled program must evaluate on all three paths
// without panicking and with matching values and gradients.
func FuzzCompile(f *testing.F) {
	for _, seed := range []string{
		"log(a.p/(1-a.p)) - log(b.p/(1-b.p))",
		"-rate^2^-0.5 * Phi(a.p - 1e-3)",
		"expit(logit(b.p)) + atanh(tanh(.5)) / sqrt(rate)",
		"((((a.p))))",
		"log(a.p, b.p)",
		"a.p b.p",
		"1e",
		"exp(",
		"",
	} {
		f.Add(seed)
	}
	vars := []string{"a.p", "b.p", "rate"}
	x := []float64{0.3, 0.2, 1.5}
	f.Fuzz(func(t *testing.T, src string) {
		p, err := expr.Compile(src, vars)
		if err != nil {
			var se *expr.SyntaxError
			if !errors.As(err, &se) {
				t.Fatalf("Compile(%q) returned %T %v, want a *SyntaxError", src, err, err)
			}
			if se.Col < 1 || se.Col > len(src)+1 || se.Msg == "" {
				t.Fatalf("Compile(%q): column %d outside 1..%d or empty message %q", src, se.Col, len(src)+1, se.Msg)
			}
			return
		}
		if p.Source() != src || p.Dim() != len(vars) {
			t.Fatalf("Compile(%q): Source %q, Dim %d", src, p.Source(), p.Dim())
		}
		ev := p.NewEvaluator()
		grad := make([]float64, p.Dim())
		v1 := ev.Value(x)
		v2 := ev.ValueGrad(x, grad)
		v3, g3, h3 := p.ValueGradHessian(x)
		if !sameFloat(v1, v2) || !sameFloat(v1, v3) {
			t.Fatalf("%q: Value %v, ValueGrad %v, ValueGradHessian %v", src, v1, v2, v3)
		}
		n := p.Dim()
		for i := range n {
			if !sameFloat(grad[i], g3[i]) {
				t.Fatalf("%q: gradient[%d] %v from ValueGrad, %v from ValueGradHessian", src, i, grad[i], g3[i])
			}
			// A parameter that does not appear cannot move the value.
			if !p.Uses(i) && grad[i] != 0 && !math.IsNaN(grad[i]) {
				t.Fatalf("%q: unused parameter %d has gradient %v", src, i, grad[i])
			}
			for j := range n {
				if !sameFloat(h3[i*n+j], h3[j*n+i]) {
					t.Fatalf("%q: Hessian not symmetric at (%d, %d)", src, i, j)
				}
			}
		}
	})
}
