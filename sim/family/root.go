package family

import "math"

// logNewtonRoot finds the root of a score g(x) that decreases through
// zero on x > 0, starting from x. It brackets the root by doubling x
// while g > 0 and halving it while g < 0 (at most 200 times each), then
// takes Newton steps in log x, Δlog x = −g/(x·g'), bisecting (in log x)
// whenever a step leaves the bracket or g' is not negative, to a
// relative change of 1e-13 or a bracket of relative width 1e-14, in at
// most maxIter steps. It reports false when the bracket or the steps run
// out. score returns g and g' at x; it is called O(maxIter) times and
// must not allocate. The negative binomial's dispersion and the Weibull's
// shape (whole or censored) are found by it.
func logNewtonRoot(x float64, maxIter int, score func(x float64) (g, dg float64)) (float64, bool) {
	g, dg := score(x)
	lo, hi := x, x
	for i := 0; g > 0; i++ {
		if i == 200 {
			return x, false
		}
		lo, x = x, 2*x
		g, dg = score(x)
		hi = x
	}
	for i := 0; g < 0 && x == lo; i++ {
		if i == 200 {
			return x, false
		}
		hi, x = x, x/2
		g, dg = score(x)
		lo = x
	}
	// Now g(lo) ≥ 0 ≥ g(hi) with x at one end.
	for range maxIter {
		if g == 0 {
			return x, true
		}
		if g > 0 {
			lo = x
		} else {
			hi = x
		}
		next := x * math.Exp(-g/(dg*x))
		if !(next > lo && next < hi) || dg >= 0 {
			next = math.Sqrt(lo * hi)
		}
		if math.Abs(next-x) <= 1e-13*x || hi-lo <= 1e-14*hi {
			return next, true
		}
		x = next
		g, dg = score(x)
	}
	return x, g == 0
}
