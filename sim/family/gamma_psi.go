package family

import "math"

// The gamma family needs log x − ψ(x), ψ1 and ψ2 to full relative accuracy
// for every shape from 10⁻³ to 10¹⁰ and beyond: the profile score of the
// shape is log α − ψ(α), which for large α is ≈ 1/(2α) and so cannot be
// formed as the difference of log α and a separately computed ψ(α) without
// losing most of its digits. Each function below therefore shifts x up with
// the recurrence ψ⁽ᵐ⁾(x) = ψ⁽ᵐ⁾(x+1) − (−1)ᵐ m!/x^(m+1) (DLMF 5.15.5) until
// x ≥ psiShift and then sums the asymptotic series of DLMF 5.11.2 and
// 5.15.8, whose terms are Bernoulli numbers B₂ₖ = 1/6, −1/30, 1/42, −1/30,
// 5/66, −691/2730, 7/6. At x = 10 the first omitted term is below 10⁻¹⁶
// relative for ψ1 and below 10⁻¹⁴ for ψ2.
const psiShift = 10

// logMinusDigamma returns log x − ψ(x) for x > 0, which decreases from +∞
// to 0 and satisfies 1/(2x) < log x − ψ(x) < 1/x. Its series is
//
//	log x − ψ(x) ~ 1/(2x) + Σₖ B₂ₖ/(2k x²ᵏ)
//	             = 1/(2x) + 1/(12x²) − 1/(120x⁴) + 1/(252x⁶) − ...
//
// and for x < psiShift the shift by k gives
// log x − ψ(x) = Σ_{j<k} 1/(x+j) − log1p(k/x) + [log(x+k) − ψ(x+k)].
func logMinusDigamma(x float64) float64 {
	if !(x > 0) {
		return math.NaN()
	}
	var acc float64
	x0, k := x, 0
	for x < psiShift {
		acc += 1 / x
		x++
		k++
	}
	if k > 0 {
		acc -= math.Log1p(float64(k) / x0)
	}
	r := 1 / x
	r2 := r * r
	return acc + r/2 + r2*(1.0/12+r2*(-1.0/120+r2*(1.0/252+r2*(-1.0/240+
		r2*(1.0/132+r2*(-691.0/32760+r2/12))))))
}

// trigamma returns ψ1(x) = d²/dx² log Γ(x) for x > 0 (NaN otherwise), from
//
//	ψ1(x) ~ 1/x + 1/(2x²) + Σₖ B₂ₖ/x^(2k+1)   (DLMF 5.15.8)
//
// after shifting with ψ1(x) = ψ1(x+1) + 1/x².
func trigamma(x float64) float64 {
	if !(x > 0) {
		return math.NaN()
	}
	var acc float64
	for x < psiShift {
		acc += 1 / (x * x)
		x++
	}
	r := 1 / x
	r2 := r * r
	return acc + r + r2/2 + r*r2*(1.0/6+r2*(-1.0/30+r2*(1.0/42+r2*(-1.0/30+
		r2*(5.0/66+r2*(-691.0/2730+r2*7.0/6))))))
}

// trigammaExcess returns x·ψ1(x) − 1 > 0 for x > 0, the determinant factor
// of the gamma family's Fisher information. For x ≥ psiShift it sums the
// series x·ψ1(x) − 1 ~ 1/(2x) + Σₖ B₂ₖ/x²ᵏ directly, since the difference
// itself is ≈ 1/(2x) and would lose digits to cancellation. Below, it uses
// x·ψ1(x) = 1/x + x·ψ1(x+1), which stays finite where ψ1(x) ≈ 1/x²
// overflows (x < 10⁻¹⁵⁴).
func trigammaExcess(x float64) float64 {
	if !(x > 0) {
		return math.NaN()
	}
	if x < psiShift {
		return 1/x + x*trigamma(x+1) - 1
	}
	r := 1 / x
	r2 := r * r
	return r/2 + r2*(1.0/6+r2*(-1.0/30+r2*(1.0/42+r2*(-1.0/30+
		r2*(5.0/66+r2*(-691.0/2730+r2*7.0/6))))))
}

// tetragamma returns ψ2(x) = d³/dx³ log Γ(x) < 0 for x > 0 (NaN
// otherwise), from the derivative of the ψ1 series,
//
//	ψ2(x) ~ −1/x² − 1/x³ − Σₖ (2k+1)B₂ₖ/x^(2k+2)
//	      = −1/x² − 1/x³ − 1/(2x⁴) + 1/(6x⁶) − 1/(6x⁸) + 3/(10x¹⁰) − ...
//
// after shifting with ψ2(x) = ψ2(x+1) − 2/x³.
func tetragamma(x float64) float64 {
	if !(x > 0) {
		return math.NaN()
	}
	var acc float64
	for x < psiShift {
		acc -= 2 / (x * x * x)
		x++
	}
	r := 1 / x
	r2 := r * r
	return acc - r2 - r*r2 + r2*r2*(-1.0/2+r2*(1.0/6+r2*(-1.0/6+r2*(3.0/10+
		r2*(-5.0/6+r2*(691.0/210-r2*35.0/2))))))
}

// pentagamma returns ψ3(x) = d⁴/dx⁴ log Γ(x) > 0 for x > 0 (NaN
// otherwise), from the derivative of the ψ2 series,
//
//	ψ3(x) ~ 2/x³ + 3/x⁴ + Σₖ (2k+1)(2k+2)B₂ₖ/x^(2k+3)
//	      = 2/x³ + 3/x⁴ + 2/x⁵ − 1/x⁷ + 4/(3x⁹) − 3/x¹¹ + 10/x¹³ − ...
//
// after shifting with ψ3(x) = ψ3(x+1) + 6/x⁴ (DLMF 5.15.5) until
// x ≥ psiShift; there the first omitted term, 17·18·B₁₆/x¹⁹ with
// B₁₆ = −3617/510, is about 10⁻¹³ of the sum. Below x ≈ 10⁻⁷⁷ the value
// overflows to +Inf, as ψ3(x) ≈ 6/x⁴ itself does.
func pentagamma(x float64) float64 {
	if !(x > 0) {
		return math.NaN()
	}
	var acc float64
	for x < psiShift {
		x2 := x * x
		acc += 6 / (x2 * x2)
		x++
	}
	r := 1 / x
	r2 := r * r
	return acc + 2*r*r2 + 3*r2*r2 + r*r2*r2*(2+r2*(-1+r2*(4.0/3+r2*(-3+
		r2*(10+r2*(-691.0/15+r2*280))))))
}
