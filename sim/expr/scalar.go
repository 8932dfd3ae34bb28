package expr

import "math"

// opcode names one instruction of a compiled program. The same values label
// the operator of an AST node, so code generation needs no translation table.
type opcode uint8

const (
	opConst opcode = iota // slot = k
	opVar                 // slot = x[arg]

	// Two operands: the left one in slot dst, the right one in dst+1.
	opAdd
	opSub
	opMul
	opDiv
	opPow // non-constant exponent

	// One operand, in place in slot dst; k is a folded constant operand.
	opNeg
	opAddK  // u + k (u - k is emitted as u + (-k), which IEEE 754 defines identically)
	opMulK  // u * k
	opDivK  // u / k
	opRSubK // k - u
	opRDivK // k / u
	opSquare
	opPowK // u ^ k

	// The built-in functions, one operand in place.
	opLog
	opExp
	opSqrt
	opLog1p
	opExpm1
	opLogit
	opExpit
	opTanh
	opAtanh
	opPhi
)

// builtins lists the functions of the language in the order error messages
// present them.
var builtins = []struct {
	name string
	op   opcode
}{
	{"log", opLog},
	{"exp", opExp},
	{"sqrt", opSqrt},
	{"log1p", opLog1p},
	{"expm1", opExpm1},
	{"logit", opLogit},
	{"expit", opExpit},
	{"tanh", opTanh},
	{"atanh", opAtanh},
	{"Phi", opPhi},
}

func lookupBuiltin(name string) (opcode, bool) {
	for _, b := range builtins {
		if b.name == name {
			return b.op, true
		}
	}
	return 0, false
}

// The helpers below are the single source of each function's value and first
// derivative. Value, ValueGrad, ValueGradHessian and constant folding all call
// them, so the three evaluation paths agree to the last bit.

// logit is log(u/(1-u)); 1-u is exact for u in [0.5, 1], and u/(1-u) loses
// nothing for small u, so no log1p split is needed.
func logit(u float64) float64 { return math.Log(u / (1 - u)) }

// expitPair returns s = 1/(1+exp(-u)) and its complement 1-s, each computed
// from exp(-|u|) so that neither is formed by a cancelling subtraction; the
// derivative s(1-s) then keeps full relative accuracy in both tails.
func expitPair(u float64) (s, complement float64) {
	if u >= 0 {
		t := math.Exp(-u)
		return 1 / (1 + t), t / (1 + t)
	}
	t := math.Exp(u)
	return t / (1 + t), 1 / (1 + t)
}

func expit(u float64) float64 {
	s, _ := expitPair(u)
	return s
}

// phi is the standard normal CDF written through erfc, which keeps relative
// accuracy in the lower tail where 1+erf would cancel.
func phi(u float64) float64 { return 0.5 * math.Erfc(-u/math.Sqrt2) }

// normalDensity is the standard normal density, the derivative of phi.
func normalDensity(u float64) float64 {
	return math.Exp(-0.5*u*u) / math.Sqrt(2*math.Pi)
}

// tanhDeriv is sech²(u), taken from cosh rather than 1-tanh² because the
// latter rounds to zero once |u| exceeds about 19.
func tanhDeriv(u float64) float64 {
	c := math.Cosh(u)
	return 1 / (c * c)
}

// atanhDeriv is 1/(1-u²) with the factored denominator, which is exact near
// |u| = 1 where 1-u*u would cancel.
func atanhDeriv(u float64) float64 { return 1 / ((1 - u) * (1 + u)) }

func logitDeriv(u float64) float64 { return 1 / (u * (1 - u)) }

// powKDeriv is k·u^(k-1). The k == 0 case is separate because u^0 is the
// constant 1 everywhere, while 0·u^(-1) would be NaN at u = 0.
func powKDeriv(u, k float64) float64 {
	if k == 0 {
		return 0
	}
	return k * math.Pow(u, k-1)
}

// powKDeriv2 is k(k-1)·u^(k-2), zero for the exponents 0 and 1 for the same
// reason as in powKDeriv.
func powKDeriv2(u, k float64) float64 {
	if k == 0 || k == 1 {
		return 0
	}
	return k * (k - 1) * math.Pow(u, k-2)
}

// applyUnary is the value of a one-operand instruction. Constant folding uses
// it for every opcode and Value for the built-in functions; the derivative
// paths compute the same values inline through the helpers above, and a test
// checks that all of them agree bit for bit.
func applyUnary(op opcode, u, k float64) float64 {
	switch op {
	case opNeg:
		return -u
	case opAddK:
		return u + k
	case opMulK:
		return u * k
	case opDivK:
		return u / k
	case opRSubK:
		return k - u
	case opRDivK:
		return k / u
	case opSquare:
		return u * u
	case opPowK:
		return math.Pow(u, k)
	case opLog:
		return math.Log(u)
	case opExp:
		return math.Exp(u)
	case opSqrt:
		return math.Sqrt(u)
	case opLog1p:
		return math.Log1p(u)
	case opExpm1:
		return math.Expm1(u)
	case opLogit:
		return logit(u)
	case opExpit:
		return expit(u)
	case opTanh:
		return math.Tanh(u)
	case opAtanh:
		return math.Atanh(u)
	case opPhi:
		return phi(u)
	}
	panic("expr: applyUnary called with a non-unary opcode")
}

// applyBinary is the value of a two-operand instruction.
func applyBinary(op opcode, u, v float64) float64 {
	switch op {
	case opAdd:
		return u + v
	case opSub:
		return u - v
	case opMul:
		return u * v
	case opDiv:
		return u / v
	case opPow:
		return math.Pow(u, v)
	}
	panic("expr: applyBinary called with a non-binary opcode")
}

// unaryPartials returns the value and the first and second derivatives of a
// one-operand instruction with respect to its operand u.
func unaryPartials(op opcode, u, k float64) (f, d1, d2 float64) {
	switch op {
	case opNeg:
		return -u, -1, 0
	case opAddK:
		return u + k, 1, 0
	case opMulK:
		return u * k, k, 0
	case opDivK:
		return u / k, 1 / k, 0
	case opRSubK:
		return k - u, -1, 0
	case opRDivK:
		// derived: d/du k/u = -k/u², d²/du² k/u = 2k/u³
		f = k / u
		d1 = -f / u
		return f, d1, -2 * d1 / u
	case opSquare:
		return u * u, 2 * u, 2
	case opPowK:
		return math.Pow(u, k), powKDeriv(u, k), powKDeriv2(u, k)
	case opLog:
		d1 = 1 / u
		return math.Log(u), d1, -d1 * d1
	case opExp:
		f = math.Exp(u)
		return f, f, f
	case opSqrt:
		// derived: (√u)' = 1/(2√u), (√u)'' = -1/(4u√u) = -(√u)'/(2u)
		f = math.Sqrt(u)
		d1 = 0.5 / f
		return f, d1, -0.5 * d1 / u
	case opLog1p:
		d1 = 1 / (1 + u)
		return math.Log1p(u), d1, -d1 * d1
	case opExpm1:
		d1 = math.Exp(u)
		return math.Expm1(u), d1, d1
	case opLogit:
		// derived: logit'(u) = 1/(u(1-u)), logit''(u) = (2u-1)/(u(1-u))²
		d1 = logitDeriv(u)
		return logit(u), d1, (2*u - 1) * d1 * d1
	case opExpit:
		// derived: s' = s(1-s), s'' = s(1-s)(1-2s), and 1-2s = (1-s) - s
		s, c := expitPair(u)
		d1 = s * c
		return s, d1, d1 * (c - s)
	case opTanh:
		// derived: tanh'' = -2 tanh · sech²
		f = math.Tanh(u)
		d1 = tanhDeriv(u)
		return f, d1, -2 * f * d1
	case opAtanh:
		// derived: atanh'' = 2u/(1-u²)²
		d1 = atanhDeriv(u)
		return math.Atanh(u), d1, 2 * u * d1 * d1
	case opPhi:
		// derived: Φ' = φ, Φ'' = φ' = -uφ
		d1 = normalDensity(u)
		return phi(u), d1, -u * d1
	}
	panic("expr: unaryPartials called with a non-unary opcode")
}

// binaryPartials returns w = u op v, its first partials (du, dv) and its
// second partials (duu, duv, dvv). The first partials are formed exactly as
// in ValueGrad so that both paths give identical gradients.
func binaryPartials(op opcode, u, v float64) (w, du, dv, duu, duv, dvv float64) {
	switch op {
	case opAdd:
		return u + v, 1, 1, 0, 0, 0
	case opSub:
		return u - v, 1, -1, 0, 0, 0
	case opMul:
		return u * v, v, u, 0, 1, 0
	case opDiv:
		// derived: ∂(u/v)/∂v = -u/v², ∂²/∂u∂v = -1/v², ∂²/∂v² = 2u/v³
		w = u / v
		du = 1 / v
		dv = -w * du
		return w, du, dv, 0, -du * du, -2 * dv * du
	case opPow:
		// derived: for w = u^v, ∂w/∂u = v·u^(v-1), ∂w/∂v = w·log u,
		// ∂²w/∂u² = v(v-1)u^(v-2), ∂²w/∂u∂v = u^(v-1)(1 + v log u),
		// ∂²w/∂v² = w·(log u)²
		w = math.Pow(u, v)
		logU := math.Log(u)
		pm1 := math.Pow(u, v-1)
		du = v * pm1
		dv = w * logU
		return w, du, dv, v * (v - 1) * math.Pow(u, v-2), pm1 * (1 + v*logU), dv * logU
	}
	panic("expr: binaryPartials called with a non-binary opcode")
}
