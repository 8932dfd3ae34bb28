package expr

import (
	"strconv"
	"strings"
)

// Limits on hostile input. Parsing recurses once per nesting level, so the
// depth cap is what keeps a pathological source from exhausting the stack;
// the length cap bounds the token list and everything built from it.
const (
	maxSourceBytes = 4096
	maxNesting     = 64
)

type nodeKind uint8

const (
	numNode nodeKind = iota
	varNode
	unaryNode  // op is opNeg or a builtin function
	binaryNode // op is opAdd, opSub, opMul, opDiv or opPow
)

type node struct {
	kind        nodeKind
	op          opcode
	num         float64 // numNode
	index       int     // varNode
	left, right *node   // operand(s); right is nil for unaryNode
}

// newUnary folds a constant operand right away, so that every numNode the
// code generator sees is a maximal constant subtree.
func newUnary(op opcode, operand *node) *node {
	if operand.kind == numNode {
		return &node{kind: numNode, num: applyUnary(op, operand.num, 0)}
	}
	return &node{kind: unaryNode, op: op, left: operand}
}

func newBinary(op opcode, left, right *node) *node {
	if left.kind == numNode && right.kind == numNode {
		return &node{kind: numNode, num: applyBinary(op, left.num, right.num)}
	}
	return &node{kind: binaryNode, op: op, left: left, right: right}
}

type parser struct {
	toks  []token
	pos   int
	depth int // current number of open parseUnary calls
	vars  []string
	used  []bool
}

func (p *parser) peek() token { return p.toks[p.pos] }

func (p *parser) advance() token {
	t := p.toks[p.pos]
	if t.kind != tokEnd {
		p.pos++
	}
	return t
}

// parse reads a whole expression and rejects anything left over.
func (p *parser) parse() (*node, error) {
	if p.peek().kind == tokEnd {
		return nil, errorAt(p.peek().pos, "the expression is empty; expected a number, a parameter name, a function call or \"(\"")
	}
	n, err := p.parseSum("at the start of the expression")
	if err != nil {
		return nil, err
	}
	if t := p.peek(); t.kind != tokEnd {
		return nil, p.leftoverError(t, "the end of the expression")
	}
	return n, nil
}

// leftoverError explains a token that follows a complete operand where only
// an operator or the closing token (named by closer) may come.
func (p *parser) leftoverError(t token, closer string) error {
	switch t.kind {
	case tokRParen:
		if closer == "the end of the expression" {
			return errorAt(t.pos, "found \")\" with no \"(\" to close; expected one of + - * / ^ or the end of the expression")
		}
	case tokComma:
		return errorAt(t.pos, "found \",\"; commas are not part of the language and every function takes exactly one argument")
	case tokName, tokNumber, tokLParen:
		return errorAt(t.pos, "expected one of + - * / ^ or %s, found %s; multiplication is never implied, write * between factors",
			closer, t.describe())
	}
	return errorAt(t.pos, "expected one of + - * / ^ or %s, found %s", closer, t.describe())
}

func (p *parser) parseSum(context string) (*node, error) {
	left, err := p.parseProduct(context)
	if err != nil {
		return nil, err
	}
	for {
		var op opcode
		switch p.peek().kind {
		case tokPlus:
			op = opAdd
		case tokMinus:
			op = opSub
		default:
			return left, nil
		}
		t := p.advance()
		right, err := p.parseProduct("after \"" + t.text + "\"")
		if err != nil {
			return nil, err
		}
		left = newBinary(op, left, right)
	}
}

func (p *parser) parseProduct(context string) (*node, error) {
	left, err := p.parseUnary(context)
	if err != nil {
		return nil, err
	}
	for {
		var op opcode
		switch p.peek().kind {
		case tokStar:
			op = opMul
		case tokSlash:
			op = opDiv
		default:
			return left, nil
		}
		t := p.advance()
		right, err := p.parseUnary("after \"" + t.text + "\"")
		if err != nil {
			return nil, err
		}
		left = newBinary(op, left, right)
	}
}

// parseUnary is the one recursive entry that every kind of nesting passes
// through (parentheses and function arguments via parseSum, unary minus
// directly, ^ via its exponent), so counting depth here caps them all.
func (p *parser) parseUnary(context string) (*node, error) {
	p.depth++
	defer func() { p.depth-- }()
	if p.depth > maxNesting+1 {
		return nil, errorAt(p.peek().pos,
			"nesting is deeper than %d levels (parentheses, unary minus, function calls and ^ chains all count); simplify the expression",
			maxNesting)
	}
	if p.peek().kind == tokMinus {
		p.advance()
		operand, err := p.parseUnary("after unary \"-\"")
		if err != nil {
			return nil, err
		}
		return newUnary(opNeg, operand), nil
	}
	base, err := p.parsePrimary(context)
	if err != nil {
		return nil, err
	}
	if p.peek().kind != tokCaret {
		return base, nil
	}
	p.advance()
	// The exponent is parsed at unary level: that makes ^ right-associative
	// and lets 2^-1 mean 2^(-1) while -x^2 still means -(x^2).
	exponent, err := p.parseUnary("after \"^\"")
	if err != nil {
		return nil, err
	}
	return newBinary(opPow, base, exponent), nil
}

func (p *parser) parsePrimary(context string) (*node, error) {
	t := p.peek()
	switch t.kind {
	case tokNumber:
		p.advance()
		return &node{kind: numNode, num: t.num}, nil
	case tokName:
		p.advance()
		if p.peek().kind == tokLParen {
			return p.parseCall(t)
		}
		if _, ok := lookupBuiltin(t.text); ok {
			return nil, errorAt(t.pos, "function %s needs its argument in parentheses, as in %s(x); found %s after it",
				t.text, t.text, p.peek().describe())
		}
		for i, v := range p.vars {
			if v == t.text {
				p.used[i] = true
				return &node{kind: varNode, index: i}, nil
			}
		}
		return nil, errorAt(t.pos, "%s", unknownNameMessage(t.text, p.vars))
	case tokLParen:
		p.advance()
		inner, err := p.parseSum("after \"(\"")
		if err != nil {
			return nil, err
		}
		if closing := p.peek(); closing.kind != tokRParen {
			return nil, p.leftoverError(closing, "\")\" to close the \"(\" at column "+strconv.Itoa(t.pos+1))
		}
		p.advance()
		return inner, nil
	}
	var sb strings.Builder
	sb.WriteString("expected a number, a parameter name, a function call or \"(\" ")
	sb.WriteString(context)
	sb.WriteString(", found ")
	sb.WriteString(t.describe())
	switch t.kind {
	case tokPlus:
		sb.WriteString(" (there is no unary \"+\")")
	case tokComma:
		sb.WriteString(" (commas are not part of the language)")
	case tokStar:
		// A "*" with nothing before it has no previous token.
		if p.pos > 0 && p.toks[p.pos-1].kind == tokStar && p.toks[p.pos-1].pos == t.pos-1 {
			sb.WriteString(" (\"**\" is not an operator; for a power write ^, as in x^2)")
		}
	}
	return nil, errorAt(t.pos, "%s", sb.String())
}

// parseCall parses name(argument); the "(" is the current token.
func (p *parser) parseCall(name token) (*node, error) {
	op, ok := lookupBuiltin(name.text)
	if !ok {
		for _, v := range p.vars {
			if v == name.text {
				return nil, errorAt(name.pos, "%q is a parameter, not a function; to multiply, write %s*(...)", name.text, name.text)
			}
		}
		return nil, errorAt(name.pos, "%s", unknownFunctionMessage(name.text))
	}
	open := p.advance()
	arg, err := p.parseSum("as the argument of " + name.text)
	if err != nil {
		return nil, err
	}
	switch closing := p.peek(); closing.kind {
	case tokRParen:
		p.advance()
	case tokComma:
		return nil, errorAt(closing.pos, "%s takes exactly one argument; commas are not part of the language", name.text)
	default:
		return nil, p.leftoverError(closing, "\")\" to close the \"(\" of "+name.text+" at column "+strconv.Itoa(open.pos+1))
	}
	return newUnary(op, arg), nil
}
