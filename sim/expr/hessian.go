package expr

import "fmt"

// ValueGradHessian returns τ(x), its gradient and its Hessian (row-major,
// Dim()×Dim()) by second-order forward-mode differentiation: every slot
// carries a value, a gradient and a Hessian, and each instruction applies the
// second-order chain rule. It allocates fresh scratch on each call, which is
// fine for its intended use (once per sample size, at the truth) and makes it
// safe for concurrent use. Only the upper triangle is computed and then
// mirrored, so the result is exactly symmetric.
func (p *Program) ValueGradHessian(x []float64) (v float64, grad, hess []float64) {
	n := p.dim
	if len(x) != n {
		panic(fmt.Sprintf("expr: x has length %d, but %q has %d parameters", len(x), p.src, n))
	}
	nn := n * n
	val := make([]float64, p.slots)
	gs := make([]float64, p.slots*n)
	hs := make([]float64, p.slots*nn)
	for i := range p.code {
		in := &p.code[i]
		d := int(in.dst)
		g := gs[d*n : d*n+n]
		h := hs[d*nn : d*nn+nn]
		switch in.op {
		case opConst:
			val[d] = in.k
			clear(g)
			clear(h)
		case opVar:
			val[d] = x[in.arg]
			clear(g)
			clear(h)
			g[in.arg] = 1
		case opAdd, opSub, opMul, opDiv, opPow:
			w, du, dv, duu, duv, dvv := binaryPartials(in.op, val[d], val[d+1])
			gv := gs[d*n+n : d*n+2*n]
			hv := hs[d*nn+nn : d*nn+2*nn]
			// H_w = du·H_u + dv·H_v + duu·g_u g_uᵀ + duv·(g_u g_vᵀ + g_v g_uᵀ) + dvv·g_v g_vᵀ,
			// built before g is overwritten with g_w.
			for r := range n {
				for c := r; c < n; c++ {
					hrc := du*h[r*n+c] + dv*hv[r*n+c] +
						duu*g[r]*g[c] + duv*(g[r]*gv[c]+gv[r]*g[c]) + dvv*gv[r]*gv[c]
					h[r*n+c], h[c*n+r] = hrc, hrc
				}
			}
			val[d] = w
			combine(g, gv, du, dv)
		default:
			f, d1, d2 := unaryPartials(in.op, val[d], in.k)
			// H_f = f'·H_u + f''·g_u g_uᵀ, again before g becomes g_f.
			for r := range n {
				for c := r; c < n; c++ {
					hrc := d1*h[r*n+c] + d2*g[r]*g[c]
					h[r*n+c], h[c*n+r] = hrc, hrc
				}
			}
			val[d] = f
			scale(g, d1)
		}
	}
	grad = make([]float64, n)
	copy(grad, gs[:n])
	hess = make([]float64, nn)
	copy(hess, hs[:nn])
	return val[0], grad, hess
}
