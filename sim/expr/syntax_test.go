package expr_test

import (
	"errors"
	"strings"
	"testing"

	"deltaprobe/sim/expr"
)

func TestSyntaxErrors(t *testing.T) {
	vars := []string{"mean", "sd"}
	tests := []struct {
		src  string
		col  int
		want string // a substring of Msg
	}{
		{"", 1, "the expression is empty"},
		{"   ", 4, "the expression is empty"},
		{"mean +", 7, `after "+", found the end of the expression`},
		{"mean * * sd", 8, `after "*", found "*"`},
		{"mean**2", 6, `after "*", found "*" ("**" is not an operator; for a power write ^, as in x^2)`},
		{"2*mean ** 2", 9, `("**" is not an operator; for a power write ^`},
		{"2^", 3, `after "^"`},
		{"-", 2, `after unary "-"`},
		{"sd ^ ^ 2", 6, `after "^", found "^"`},
		{"+mean", 1, `there is no unary "+"`},
		{"mean )", 6, `found ")" with no "(" to close`},
		{"mean mean", 6, "multiplication is never implied"},
		{"2(mean)", 2, "multiplication is never implied"},
		{"2 mean", 3, `found name "mean"; multiplication is never implied`},
		{"(mean", 6, `expected one of + - * / ^ or ")" to close the "(" at column 1, found the end`},
		{"((mean)", 8, `")" to close the "(" at column 1`},
		{"(mean sd)", 7, "multiplication is never implied"},
		{"log", 1, "function log needs its argument in parentheses, as in log(x)"},
		{"2*exp mean", 3, "function exp needs its argument in parentheses"},
		{"log(mean", 9, `")" to close the "(" of log at column 4`},
		{"log()", 5, `as the argument of log, found ")"`},
		{"log(mean, sd)", 9, "log takes exactly one argument; commas are not part of the language"},
		{"mean, sd", 5, "commas are not part of the language"},
		{",", 1, "commas are not part of the language"},
		{"frob(mean)", 1, `unknown function "frob"; known functions: log, exp, sqrt, log1p, expm1, logit, expit, tanh, atanh, Phi`},
		{"ln(mean)", 1, `unknown function "ln"; did you mean "log"? log is the natural logarithm; known functions: log, exp,`},
		{"phi(mean)", 1, `unknown function "phi"; did you mean "Phi"?`},
		{"foo(mean)", 1, `unknown function "foo"; did you mean "log"?`}, // distance 2, the documented reach
		{"x", 1, `unknown name "x"; known names: mean, sd`},             // "sd" is 2 edits away, but that is every letter of "x"
		{"men", 1, `unknown name "men"; did you mean "mean"? known names: mean, sd`},
		{"2*sdd", 3, `unknown name "sdd"; did you mean "sd"?`},
		{"zzzz", 1, `unknown name "zzzz"; known names: mean, sd`},
		{"mean(2)", 1, `"mean" is a parameter, not a function; to multiply, write mean*(...)`},
		{"1e", 1, `malformed number "1e": an exponent needs at least one digit`},
		{"2*1e+", 3, `malformed number "1e+"`},
		{"1.2.3", 1, `malformed number "1.2.3": a number has at most one decimal point`},
		{"1e5.5", 1, `malformed number "1e5.5"`},
		{"1e999", 1, "outside the range of a float64"},
		{"mean.1", 5, `a "." in a name must be followed by a letter or "_"`},
		{"mean.", 5, `found the end of the expression after "mean."`},
		{"a..b", 2, `a "." in a name must be followed by a letter or "_"`},
		{"mean $ sd", 6, "unexpected character '$'"},
		{".", 1, "unexpected character '.'"},
		{"μ", 1, "names use ASCII letters"},
		{"mean\xff", 5, "unexpected byte 0xff"},
	}
	for _, tt := range tests {
		_, err := expr.Compile(tt.src, vars)
		var se *expr.SyntaxError
		if !errors.As(err, &se) {
			t.Errorf("Compile(%q): error %v, want a *SyntaxError", tt.src, err)
			continue
		}
		if se.Col != tt.col || !strings.Contains(se.Msg, tt.want) {
			t.Errorf("Compile(%q):\n got column %d: %s\nwant column %d, message containing %q", tt.src, se.Col, se.Msg, tt.col, tt.want)
		}
		if want := "column " + itoa(se.Col) + ": " + se.Msg; err.Error() != want {
			t.Errorf("Compile(%q).Error() = %q, want %q", tt.src, err.Error(), want)
		}
	}
}

func itoa(n int) string {
	var b []byte
	for {
		b = append([]byte{byte('0' + n%10)}, b...)
		n /= 10
		if n == 0 {
			return string(b)
		}
	}
}

func TestCompileRejectsBadParameterNames(t *testing.T) {
	tests := []struct {
		vars []string
		want string
	}{
		{[]string{""}, "not a valid name"},
		{[]string{"1a"}, "not a valid name"},
		{[]string{"a b"}, "not a valid name"},
		{[]string{"a..b"}, "not a valid name"},
		{[]string{"a."}, "not a valid name"},
		{[]string{".a"}, "not a valid name"},
		{[]string{"a", "log"}, `parameter 1, "log", is the name of a built-in function`},
		{[]string{"p", "q", "p"}, `parameter name "p" is given twice, at positions 0 and 2`},
	}
	for _, tt := range tests {
		_, err := expr.Compile("1", tt.vars)
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("Compile with vars %q: error %v, want one containing %q", tt.vars, err, tt.want)
		}
		var se *expr.SyntaxError
		if errors.As(err, &se) {
			t.Errorf("Compile with vars %q: a bad parameter list is not a syntax error of the source, got %v", tt.vars, err)
		}
	}
	// And names in the grammar are accepted.
	if _, err := expr.Compile("mean + treated.p + arm_2.rate + _x9", []string{"mean", "treated.p", "arm_2.rate", "_x9"}); err != nil {
		t.Errorf("valid names rejected: %v", err)
	}
}

func TestLimitsOnHostileInput(t *testing.T) {
	nest := func(open, core, closing string, depth int) string {
		return strings.Repeat(open, depth) + core + strings.Repeat(closing, depth)
	}
	chain := func(depth int) string { return "x" + strings.Repeat("^x", depth) }
	tests := []struct {
		name string
		src  string
		ok   bool
	}{
		{"64 parentheses", nest("(", "x", ")", 64), true},
		{"65 parentheses", nest("(", "x", ")", 65), false},
		{"64 unary minus", nest("-", "x", "", 64), true},
		{"65 unary minus", nest("-", "x", "", 65), false},
		{"64 function calls", nest("exp(", "x", ")", 64), true},
		{"65 function calls", nest("exp(", "x", ")", 65), false},
		{"^ chain of 64", chain(64), true},
		{"^ chain of 65", chain(65), false},
		{"2000 parentheses", nest("(", "x", ")", 2000), false},
		{"2000 unclosed parentheses", strings.Repeat("(", 2000), false},
	}
	for _, tt := range tests {
		_, err := expr.Compile(tt.src, []string{"x"})
		if tt.ok && err != nil {
			t.Errorf("%s: %v", tt.name, err)
		}
		if !tt.ok && (err == nil || !strings.Contains(err.Error(), "nesting is deeper than 64 levels")) {
			t.Errorf("%s: error %v, want the nesting limit", tt.name, err)
		}
	}

	// A long flat sum is not nested and must work right up to the size cap.
	flat := "x" + strings.Repeat("+x", 2047)
	if len(flat) != 4095 {
		t.Fatalf("test setup: flat has %d bytes", len(flat))
	}
	p, err := expr.Compile(flat+" ", []string{"x"}) // exactly 4096 bytes
	if err != nil {
		t.Fatalf("4096-byte sum: %v", err)
	}
	// derived: 2048 terms of x
	if got := p.NewEvaluator().Value([]float64{0.5}); got != 1024 {
		t.Errorf("4096-byte sum at x=0.5 = %v, want 1024", got)
	}
	_, err = expr.Compile(flat+"  ", []string{"x"})
	var se *expr.SyntaxError
	if !errors.As(err, &se) || se.Col != 4097 || !strings.Contains(se.Msg, "4097 bytes long; at most 4096") {
		t.Errorf("4097-byte source: error %v, want the size limit at column 4097", err)
	}
}

func TestProgramAccessors(t *testing.T) {
	src := "a*2 + c - 0*d"
	p := mustCompile(t, src, []string{"a", "b", "c", "d"})
	if p.Source() != src {
		t.Errorf("Source() = %q, want %q", p.Source(), src)
	}
	if p.Dim() != 4 {
		t.Errorf("Dim() = %d, want 4", p.Dim())
	}
	// d is multiplied by zero but still appears, and Uses is about appearing.
	for i, want := range []bool{true, false, true, true} {
		if got := p.Uses(i); got != want {
			t.Errorf("Uses(%d) = %v, want %v", i, got, want)
		}
	}
	constant := mustCompile(t, "log(2) * 3", []string{"a"})
	if constant.Uses(0) {
		t.Error("a constant program reports that it uses a")
	}
	g := []float64{7}
	// derived: ln 2 · 3
	if v := constant.NewEvaluator().ValueGrad([]float64{1}, g); !closeTo(v, 3*0.6931471805599453, 1e-15) || g[0] != 0 {
		t.Errorf("constant program: value %v, gradient %v; want 3 ln 2 and 0", v, g)
	}
}

func TestWrongLengthsPanicWithPrefix(t *testing.T) {
	p := mustCompile(t, "a + b", []string{"a", "b"})
	ev := p.NewEvaluator()
	calls := map[string]func(){
		"Value":            func() { ev.Value([]float64{1}) },
		"ValueGrad x":      func() { ev.ValueGrad([]float64{1}, make([]float64, 2)) },
		"ValueGrad grad":   func() { ev.ValueGrad([]float64{1, 2}, make([]float64, 3)) },
		"ValueGradHessian": func() { p.ValueGradHessian([]float64{1, 2, 3}) },
		"Uses":             func() { p.Uses(2) },
	}
	for name, call := range calls {
		func() {
			defer func() {
				r := recover()
				msg, _ := r.(string)
				if !strings.HasPrefix(msg, "expr: ") {
					t.Errorf("%s: recovered %v, want a panic message starting with \"expr: \"", name, r)
				}
			}()
			call()
		}()
	}
}
