package expr_test

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

func TestTmpMeasure(t *testing.T) {
	worstG, worstH, worstJ := 0.0, 0.0, 0.0
	var wg, wh, wj string
	for _, tt := range derivativeCases {
		p := mustCompile(t, tt.src, tt.vars)
		n := p.Dim()
		ev := p.NewEvaluator()
		for _, x := range tt.points {
			g := make([]float64, n)
			ev.ValueGrad(x, g)
			fg := fd.Gradient(nil, p.NewEvaluator().Value, x, &fd.Settings{Formula: fd.Central})
			_, _, h := p.ValueGradHessian(x)
			var fh mat.SymDense
			fd.Hessian(&fh, p.NewEvaluator().Value, x, &fd.Settings{Formula: fd.Central, Step: hessianStep})
			fj := mat.NewDense(n, n, nil)
			fd.Jacobian(fj, func(d, x []float64) { ev.ValueGrad(x, d) }, x, &fd.JacobianSettings{Formula: fd.Central})
			for i := range n {
				if e := math.Abs(g[i]-fg[i]) / math.Max(1, math.Abs(fg[i])); e > worstG {
					worstG, wg = e, tt.src
				}
				for j := range n {
					if e := math.Abs(h[i*n+j]-fh.At(i, j)) / math.Max(1, math.Abs(fh.At(i, j))); e > worstH {
						worstH, wh = e, tt.src
					}
					if e := math.Abs(h[i*n+j]-fj.At(i, j)) / math.Max(1, math.Abs(fj.At(i, j))); e > worstJ {
						worstJ, wj = e, tt.src
					}
				}
			}
		}
	}
	t.Logf("grad %.3g (%s) hess %.3g (%s) jac %.3g (%s)", worstG, wg, worstH, wh, worstJ, wj)
}
