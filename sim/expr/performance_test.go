package expr_test

import (
	"testing"

	"deltaprobe/sim/expr"
)

const logOddsRatio = "log(a.p/(1-a.p)) - log(b.p/(1-b.p))"

func TestEvaluatorAllocatesNothing(t *testing.T) {
	tests := []struct {
		src  string
		vars []string
		x    []float64
	}{
		{logOddsRatio, []string{"a.p", "b.p"}, []float64{0.3, 0.2}},
		{"x^y + Phi(x) * expit(y) - atanh(x/3)", []string{"x", "y"}, []float64{0.7, 1.4}},
		{"log(2)/rate", []string{"rate"}, []float64{0.2}},
		{"3", nil, nil},
	}
	for _, tt := range tests {
		p := mustCompile(t, tt.src, tt.vars)
		ev := p.NewEvaluator()
		grad := make([]float64, p.Dim())
		if n := testing.AllocsPerRun(200, func() { ev.ValueGrad(tt.x, grad) }); n != 0 {
			t.Errorf("ValueGrad(%s) allocates %v times per call, want 0", tt.src, n)
		}
		if n := testing.AllocsPerRun(200, func() { ev.Value(tt.x) }); n != 0 {
			t.Errorf("Value(%s) allocates %v times per call, want 0", tt.src, n)
		}
	}
}

// sink keeps the compiler from discarding benchmarked results.
var sink float64

// BenchmarkTransform times the per-replicate call: value and gradient of a
// two-arm log odds ratio.
func BenchmarkTransform(b *testing.B) {
	p := mustCompile(b, logOddsRatio, []string{"a.p", "b.p"})
	ev := p.NewEvaluator()
	x := []float64{0.3, 0.2}
	grad := make([]float64, 2)
	b.ReportAllocs()
	for b.Loop() {
		sink = ev.ValueGrad(x, grad)
	}
}

func BenchmarkValue(b *testing.B) {
	p := mustCompile(b, logOddsRatio, []string{"a.p", "b.p"})
	ev := p.NewEvaluator()
	x := []float64{0.3, 0.2}
	b.ReportAllocs()
	for b.Loop() {
		sink = ev.Value(x)
	}
}

func BenchmarkValueGradHessian(b *testing.B) {
	p := mustCompile(b, logOddsRatio, []string{"a.p", "b.p"})
	x := []float64{0.3, 0.2}
	b.ReportAllocs()
	for b.Loop() {
		sink, _, _ = p.ValueGradHessian(x)
	}
}

func BenchmarkCompile(b *testing.B) {
	vars := []string{"a.p", "b.p"}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := expr.Compile(logOddsRatio, vars); err != nil {
			b.Fatal(err)
		}
	}
}
