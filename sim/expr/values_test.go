package expr_test

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"deltaprobe/sim/expr"
)

// mustCompile is for sources a test knows to be valid.
func mustCompile(t testing.TB, src string, vars []string) *expr.Program {
	t.Helper()
	p, err := expr.Compile(src, vars)
	if err != nil {
		t.Fatalf("Compile(%q, %q): %v", src, vars, err)
	}
	return p
}

// closeTo reports whether got is within tol·max(1, |want|) of want, so tol is
// a relative bound for large values and an absolute one near zero.
func closeTo(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

// relClose reports whether got is within tol·|want| of want: a purely
// relative bound, for reference values far below 1 such as Φ(-8).
func relClose(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Abs(want)
}

// sameFloat is bit equality, except that any two NaNs match.
func sameFloat(a, b float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Float64bits(a) == math.Float64bits(b)
}

// literal renders x so that it parses back to the same float64; negative
// values become a unary minus, which constant folding then absorbs.
func literal(x float64) string {
	return "(" + strconv.FormatFloat(x, 'g', -1, 64) + ")"
}

func TestFunctionValues(t *testing.T) {
	e := math.E
	tests := []struct {
		call string // the function applied to z
		z    float64
		want float64
		tol  float64 // relative
	}{
		// from a standard normal table: the 97.5% quantile is 1.959963984540054
		{"Phi(z)", 1.959963984540054, 0.975, 1e-15},
		// derived: Φ(0) = 1/2 by symmetry
		{"Phi(z)", 0, 0.5, 0},
		// gonum distuv.UnitNormal.CDF, an independent implementation
		{"Phi(z)", -1, distuv.UnitNormal.CDF(-1), 1e-15},
		{"Phi(z)", 2.5, distuv.UnitNormal.CDF(2.5), 1e-15},
		{"Phi(z)", -8, distuv.UnitNormal.CDF(-8), 1e-15},
		// derived: logit(1/4) = log((1/4)/(3/4)) = -log 3
		{"logit(z)", 0.25, -math.Log(3), 1e-15},
		// derived: logit(1/2) = log 1 = 0
		{"logit(z)", 0.5, 0, 0},
		// derived: expit(log 3) = 1/(1 + 1/3) = 3/4
		{"expit(z)", math.Log(3), 0.75, 1e-15},
		{"expit(z)", 0, 0.5, 0},
		// derived: the tails saturate to 0 and 1 without overflow turning them into NaN
		{"expit(z)", -800, 0, 0},
		{"expit(z)", 800, 1, 0},
		// identity: tanh(1/2) = (e - 1)/(e + 1)
		{"tanh(z)", 0.5, (e - 1) / (e + 1), 1e-15},
		// identity: atanh(x) = ½ log((1+x)/(1-x)), so atanh(1/2) = ½ log 3
		{"atanh(z)", 0.5, 0.5 * math.Log(3), 1e-15},
		// derived (Taylor series): log1p(x) = x - x²/2 + …, expm1(x) = x + x²/2 + …
		{"log1p(z)", 1e-10, 1e-10 - 5e-21, 1e-15},
		{"expm1(z)", 1e-10, 1e-10 + 5e-21, 1e-15},
		// math identities
		{"sqrt(z)", 2, math.Sqrt2, 0},
		{"exp(z)", 1, math.E, 1e-16},
		{"log(z)", math.E, 1, 1e-16},
		{"log(z)", 1, 0, 0},
		// operators, checked by hand arithmetic
		{"z - 2.5", 7, 4.5, 0},
		{"z * 0.5", 3, 1.5, 0},
		{"1 / z", 8, 0.125, 0},
		{"z ^ 10", 2, 1024, 0},
		{"z ^ 0.5", 9, 3, 0},
		{"z + 1e-3", .5, 0.501, 1e-16},
		{"-z", 4, -4, 0},
		{"z / 4", 1, 0.25, 0},
		{"3 - z", 1, 2, 0},
		{"2 ^ z", 3, 8, 0},
		{"z ^ 2", -3, 9, 0},
	}
	for _, tt := range tests {
		// Once with z as a parameter (the run-time path) and once with x
		// written as a literal (the constant-folding path).
		runtime := mustCompile(t, tt.call, []string{"z"})
		got := runtime.NewEvaluator().Value([]float64{tt.z})
		if !relClose(got, tt.want, tt.tol) {
			t.Errorf("%s at z=%v = %v, want %v (tol %g)", tt.call, tt.z, got, tt.want, tt.tol)
		}
		folded := mustCompile(t, strings.ReplaceAll(tt.call, "z", literal(tt.z)), nil)
		if got := folded.NewEvaluator().Value(nil); !relClose(got, tt.want, tt.tol) {
			t.Errorf("%s = %v, want %v (tol %g)", folded.Source(), got, tt.want, tt.tol)
		}
	}
}

func TestPrecedence(t *testing.T) {
	// All wants are hand-derived from the precedence rules in the package
	// documentation.
	tests := []struct {
		src  string
		want float64
	}{
		{"-2^2", -4},
		{"2^3^2", 512},
		{"(2^3)^2", 64},
		{"8/4/2", 1},
		{"2-3-4", -5},
		{"2^-1", 0.5},
		{"2^-1^2", 0.5},
		{"-2^-2", -0.25},
		{"2*3^2", 18},
		{"1+2*3", 7},
		{"(1+2)*3", 9},
		{"6/2*3", 9},
		{"2^3*2", 16},
		{"1-2+3", 2},
		{"--3", 3},
		{"2 - -3", 5},
		{"-3*-2", 6},
		{"log(exp(2))^2", 4},
		{"  1\t+\n2  ", 3},
		{".5*4", 2},
		{"1e2/1E1", 10},
		{"2.5e-1*4", 1},
	}
	for _, tt := range tests {
		p := mustCompile(t, tt.src, nil)
		if got := p.NewEvaluator().Value(nil); !closeTo(got, tt.want, 1e-15) {
			t.Errorf("%q = %v, want %v", tt.src, got, tt.want)
		}
	}

	// The same shapes with parameters, so that no folding hides the order.
	vars := []string{"a", "b", "c"}
	x := []float64{2, 3, 2}
	withVars := []struct {
		src  string
		want float64
	}{
		{"-a^a", -4},
		{"a^b^c", 512},
		{"(a^b)^c", 64},
		{"b*a/b/c", 1},
		{"a-b-c", -3},
		{"a^-c", 0.25},
		{"-a^-c", -0.25},
		{"a*b^c", 18},
		{"a+b*c", 8},
		{"(a+b)*c", 10},
		{"b/a*c", 3},
		{"--b", 3},
		{"a - -b", 5},
		{"-b*-c", 6},
	}
	for _, tt := range withVars {
		p := mustCompile(t, tt.src, vars)
		if got := p.NewEvaluator().Value(x); !closeTo(got, tt.want, 1e-15) {
			t.Errorf("%q at a,b,c = 2,3,2: got %v, want %v", tt.src, got, tt.want)
		}
	}
}

func TestDomainErrorsAreNonFinite(t *testing.T) {
	tests := []struct {
		src string
		x   float64
	}{
		{"log(x)", -1},
		{"log(x)", 0},
		{"1/x", 0},
		{"sqrt(x)", -1},
		{"atanh(x)", 1},
		{"atanh(x)", 2},
		{"logit(x)", 1.5},
		{"logit(x)", 0},
		{"x^0.5", -4},
		{"x^x", -0.5},
		{"log1p(x)", -2},
		{"exp(x)", 1000},
		{"1/(x-x)", 3},
	}
	for _, tt := range tests {
		p := mustCompile(t, tt.src, []string{"x"})
		ev := p.NewEvaluator()
		x := []float64{tt.x}
		grad := make([]float64, 1)
		v := ev.ValueGrad(x, grad)
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			t.Errorf("%s at x=%v = %v, want NaN or ±Inf", tt.src, tt.x, v)
		}
		// Only the value is asserted: outside a domain the derivative formula
		// may still be finite (log'(-1) = 1/(-1)), and the caller keys
		// "undefined" on the value alone.
		if _, _, h := p.ValueGradHessian(x); len(h) != 1 {
			t.Errorf("%s: Hessian has %d entries, want 1", tt.src, len(h))
		}
	}
}

// TestEvaluationPathsAgree checks that Value, ValueGrad, ValueGradHessian and
// constant folding return the same bits: callers compare values across paths
// (e.g. the truth from ValueGradHessian against replicates from ValueGrad).
func TestEvaluationPathsAgree(t *testing.T) {
	sources := []string{
		"log(z)", "exp(z)", "sqrt(z)", "log1p(z)", "expm1(z)", "logit(z)",
		"expit(z)", "tanh(z)", "atanh(z)", "Phi(z)",
		"-z", "z+3", "z-3", "3-z", "z*3", "3*z", "z/3", "3/z", "z^3", "z^-0.5", "z^0",
		"3^z", "z^2", "z^z", "z*z/(z+1)", "z-z*z",
	}
	points := []float64{
		0, -0, 1, -1, 0.5, 0.999999, 1e-300, -1e-300, 3.7, -3.7, 40, -40, 800, -800,
		math.Inf(1), math.Inf(-1), math.NaN(),
	}
	for _, src := range sources {
		p := mustCompile(t, src, []string{"z"})
		ev := p.NewEvaluator()
		grad := make([]float64, 1)
		for _, x := range points {
			in := []float64{x}
			v1 := ev.Value(in)
			v2 := ev.ValueGrad(in, grad)
			v3, g3, _ := p.ValueGradHessian(in)
			if !sameFloat(v1, v2) || !sameFloat(v1, v3) {
				t.Errorf("%s at x=%v: Value %v, ValueGrad %v, ValueGradHessian %v", src, x, v1, v2, v3)
			}
			if !sameFloat(grad[0], g3[0]) {
				t.Errorf("%s at x=%v: ValueGrad gradient %v, ValueGradHessian gradient %v", src, x, grad[0], g3[0])
			}
			if math.IsInf(x, 0) || math.IsNaN(x) || strings.Contains(src, "^2") {
				// No literal spells these; and u^2 runs as u*u while a
				// folded 3^2 goes through math.Pow, which may round differently.
				continue
			}
			folded := mustCompile(t, strings.ReplaceAll(src, "z", literal(x)), nil)
			if v4 := folded.NewEvaluator().Value(nil); !sameFloat(v1, v4) {
				t.Errorf("%s at x=%v: run time %v, folded %v", src, x, v1, v4)
			}
		}
	}
}
