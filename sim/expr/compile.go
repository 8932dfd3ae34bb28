package expr

import "fmt"

// instr is one step of a compiled program. Operands live in numbered slots:
// an instruction reads slot dst (and dst+1 for two-operand ops) and writes
// its result to slot dst, so the slot of every operand is fixed at compile
// time and evaluation needs no stack pointer.
type instr struct {
	op  opcode
	arg int32 // variable index, for opVar
	dst int32
	k   float64 // constant operand, for opConst and the ...K ops
}

// Program is a compiled transform. It is immutable, so one Program may serve
// any number of goroutines, each through its own Evaluator.
type Program struct {
	src   string
	dim   int
	used  []bool
	code  []instr
	slots int
}

// Compile parses src and compiles it against vars, the ordered parameter
// names; variable i of the compiled program reads x[i]. A malformed src
// yields a *SyntaxError; a malformed vars list yields an ordinary error.
func Compile(src string, vars []string) (*Program, error) {
	if err := checkParameterNames(vars); err != nil {
		return nil, err
	}
	if len(src) > maxSourceBytes {
		return nil, errorAt(maxSourceBytes, "the expression is %d bytes long; at most %d bytes are accepted",
			len(src), maxSourceBytes)
	}
	toks, err := tokenize(src)
	if err != nil {
		return nil, err
	}
	p := &parser{toks: toks, vars: vars, used: make([]bool, len(vars))}
	root, err := p.parse()
	if err != nil {
		return nil, err
	}
	prog := &Program{src: src, dim: len(vars), used: p.used}
	prog.emit(root, 0)
	return prog, nil
}

func checkParameterNames(vars []string) error {
	for i, v := range vars {
		if !validName(v) {
			return fmt.Errorf("expr: parameter %d, %q, is not a valid name: use a letter or \"_\", then letters, digits or \"_\", with parts joined by single dots", i, v)
		}
		if _, ok := lookupBuiltin(v); ok {
			return fmt.Errorf("expr: parameter %d, %q, is the name of a built-in function; choose another name", i, v)
		}
		for j := range i {
			if vars[j] == v {
				return fmt.Errorf("expr: parameter name %q is given twice, at positions %d and %d", v, j, i)
			}
		}
	}
	return nil
}

// emit appends the code computing n into slot dst. A constant operand is
// folded into the instruction that uses it, which saves a slot write and,
// in ValueGrad, a whole gradient row.
func (p *Program) emit(n *node, dst int) {
	p.slots = max(p.slots, dst+1)
	switch n.kind {
	case numNode:
		p.code = append(p.code, instr{op: opConst, dst: int32(dst), k: n.num})
	case varNode:
		p.code = append(p.code, instr{op: opVar, dst: int32(dst), arg: int32(n.index)})
	case unaryNode:
		p.emit(n.left, dst)
		p.code = append(p.code, instr{op: n.op, dst: int32(dst)})
	case binaryNode:
		if op, k, ok := foldRightConstant(n); ok {
			p.emit(n.left, dst)
			p.code = append(p.code, instr{op: op, dst: int32(dst), k: k})
			return
		}
		if op, k, ok := foldLeftConstant(n); ok {
			p.emit(n.right, dst)
			p.code = append(p.code, instr{op: op, dst: int32(dst), k: k})
			return
		}
		p.emit(n.left, dst)
		p.emit(n.right, dst+1)
		p.code = append(p.code, instr{op: n.op, dst: int32(dst)})
	default:
		panic(fmt.Sprintf("expr: emit met node kind %d", n.kind))
	}
}

// foldRightConstant maps "u op k" to a one-operand instruction.
func foldRightConstant(n *node) (opcode, float64, bool) {
	if n.right.kind != numNode {
		return 0, 0, false
	}
	k := n.right.num
	switch n.op {
	case opAdd:
		return opAddK, k, true
	case opSub:
		return opAddK, -k, true
	case opMul:
		return opMulK, k, true
	case opDiv:
		return opDivK, k, true
	case opPow:
		if k == 2 {
			return opSquare, 0, true
		}
		return opPowK, k, true
	}
	return 0, 0, false
}

// foldLeftConstant maps "k op u" to a one-operand instruction. k^u has none
// and keeps the general power rule.
func foldLeftConstant(n *node) (opcode, float64, bool) {
	if n.left.kind != numNode {
		return 0, 0, false
	}
	k := n.left.num
	switch n.op {
	case opAdd:
		return opAddK, k, true
	case opSub:
		return opRSubK, k, true
	case opMul:
		return opMulK, k, true
	case opDiv:
		return opRDivK, k, true
	}
	return 0, 0, false
}

// Source returns the text the program was compiled from.
func (p *Program) Source() string { return p.src }

// Dim returns the number of parameters, len(vars) at compile time.
func (p *Program) Dim() int { return p.dim }

// Uses reports whether parameter i appears in the source. Constant folding
// never removes a parameter, so this is also whether the compiled code reads
// x[i].
func (p *Program) Uses(i int) bool {
	if i < 0 || i >= p.dim {
		panic(fmt.Sprintf("expr: Uses(%d) on a program with %d parameters", i, p.dim))
	}
	return p.used[i]
}
