package sim

import ("testing";"math";"fmt")

func TestZZExplore(t *testing.T) {
	for _, c := range []struct{a, b float64}{{0.5, 1}, {2, 1}, {20, 3}} {
		m := mustModel(t, "gamma", map[string]float64{"shape": c.a, "rate": c.b})
		var tr, bias [2]float64
		m.Truth(tr[:]); m.Bias(tr[:], bias[:])
		for _, n := range []int{25, 50, 100, 200} {
			rng := testRand(uint64(n))
			R := 200000
			var s0, s1, q0, q1 float64
			var th [2]float64
			for range R {
				m.Fit(rng, n, th[:])
				d0, d1 := th[0]-tr[0], th[1]-tr[1]
				s0 += d0; s1 += d1; q0 += d0*d0; q1 += d1*d1
			}
			fR := float64(R); fn := float64(n)
			m0, m1 := s0/fR, s1/fR
			se0 := math.Sqrt((q0/fR - m0*m0)/fR); se1 := math.Sqrt((q1/fR - m1*m1)/fR)
			fmt.Printf("a=%g n=%d  n*bias_a=%.4f±%.4f (b=%.4f)  n*bias_b=%.4f±%.4f (b=%.4f)\n", c.a, n, fn*m0, fn*se0, bias[0], fn*m1, fn*se1, bias[1])
		}
	}
}
