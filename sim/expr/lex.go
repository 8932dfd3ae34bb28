package expr

import (
	"fmt"
	"strconv"
	"unicode/utf8"
)

type tokenKind uint8

const (
	tokEnd tokenKind = iota
	tokNumber
	tokName
	tokPlus
	tokMinus
	tokStar
	tokSlash
	tokCaret
	tokLParen
	tokRParen
	tokComma // not part of the language; lexed only to explain why it is rejected
)

type token struct {
	kind tokenKind
	pos  int    // 0-based byte offset of the first byte
	text string // the source bytes of the token
	num  float64
}

// describe renders a token for the "found ..." half of an error message.
func (t token) describe() string {
	switch t.kind {
	case tokEnd:
		return "the end of the expression"
	case tokNumber:
		return "number " + t.text
	case tokName:
		return fmt.Sprintf("name %q", t.text)
	}
	return strconv.Quote(t.text)
}

// tokenize splits src into tokens, ending with a tokEnd at len(src). The
// caller has already bounded len(src), so the token slice is bounded too.
func tokenize(src string) ([]token, error) {
	var toks []token
	i := 0
	for i < len(src) {
		c := src[i]
		switch {
		case c == ' ' || c == '\t' || c == '\n' || c == '\r':
			i++
		case isDigit(c) || (c == '.' && i+1 < len(src) && isDigit(src[i+1])):
			t, err := scanNumber(src, i)
			if err != nil {
				return nil, err
			}
			toks = append(toks, t)
			i += len(t.text)
		case isNameStart(c):
			t, err := scanName(src, i)
			if err != nil {
				return nil, err
			}
			toks = append(toks, t)
			i += len(t.text)
		default:
			kind, ok := punctuation(c)
			if !ok {
				return nil, unexpectedCharacter(src, i)
			}
			toks = append(toks, token{kind: kind, pos: i, text: src[i : i+1]})
			i++
		}
	}
	return append(toks, token{kind: tokEnd, pos: len(src)}), nil
}

func punctuation(c byte) (tokenKind, bool) {
	switch c {
	case '+':
		return tokPlus, true
	case '-':
		return tokMinus, true
	case '*':
		return tokStar, true
	case '/':
		return tokSlash, true
	case '^':
		return tokCaret, true
	case '(':
		return tokLParen, true
	case ')':
		return tokRParen, true
	case ',':
		return tokComma, true
	}
	return 0, false
}

func unexpectedCharacter(src string, i int) error {
	r, size := utf8.DecodeRuneInString(src[i:])
	if r == utf8.RuneError && size <= 1 {
		return errorAt(i, "unexpected byte 0x%02x, which is not valid UTF-8; expected a number, a name, one of + - * / ^ or a parenthesis", src[i])
	}
	shown := strconv.QuoteRune(r)
	if r >= utf8.RuneSelf {
		return errorAt(i, "unexpected character %s; names use ASCII letters, digits, \"_\" and \".\" only", shown)
	}
	return errorAt(i, "unexpected character %s; expected a number, a name, one of + - * / ^ or a parenthesis", shown)
}

// scanNumber reads digits [. digits] [e [+-] digits] or . digits [exponent],
// the decimal forms and nothing else, so that strconv never sees hex, "inf"
// or underscores.
func scanNumber(src string, start int) (token, error) {
	i := start
	for i < len(src) && isDigit(src[i]) {
		i++
	}
	if i < len(src) && src[i] == '.' {
		i++
		for i < len(src) && isDigit(src[i]) {
			i++
		}
	}
	if i < len(src) && (src[i] == 'e' || src[i] == 'E') {
		j := i + 1
		if j < len(src) && (src[j] == '+' || src[j] == '-') {
			j++
		}
		if j >= len(src) || !isDigit(src[j]) {
			return token{}, errorAt(start, "malformed number %q: an exponent needs at least one digit, as in 1e-3",
				src[start:j])
		}
		for j < len(src) && isDigit(src[j]) {
			j++
		}
		i = j
	}
	if i < len(src) && src[i] == '.' {
		j := i + 1
		for j < len(src) && (isDigit(src[j]) || src[j] == '.') {
			j++
		}
		return token{}, errorAt(start, "malformed number %q: a number has at most one decimal point and none in its exponent",
			src[start:j])
	}
	text := src[start:i]
	v, err := strconv.ParseFloat(text, 64)
	if err != nil {
		// Only overflow can get here: the scan above admits well-formed
		// decimals only, and underflow rounds to zero without an error.
		return token{}, errorAt(start, "number %s is outside the range of a float64 (magnitude up to about 1.8e308)", text)
	}
	return token{kind: tokNumber, pos: start, text: text, num: v}, nil
}

// scanName reads identifier parts joined by single dots.
func scanName(src string, start int) (token, error) {
	i := start
	for {
		i++ // the first byte of a part is known to be a name start
		for i < len(src) && isNamePart(src[i]) {
			i++
		}
		if i >= len(src) || src[i] != '.' {
			break
		}
		if i+1 >= len(src) || !isNameStart(src[i+1]) {
			return token{}, errorAt(i, "a \".\" in a name must be followed by a letter or \"_\", as in treated.p; found %s after %q",
				describeNext(src, i+1), src[start:i+1])
		}
		i++
	}
	return token{kind: tokName, pos: start, text: src[start:i]}, nil
}

func describeNext(src string, i int) string {
	if i >= len(src) {
		return "the end of the expression"
	}
	r, size := utf8.DecodeRuneInString(src[i:])
	if r == utf8.RuneError && size <= 1 {
		return fmt.Sprintf("byte 0x%02x", src[i])
	}
	return strconv.QuoteRune(r)
}

func isDigit(c byte) bool     { return '0' <= c && c <= '9' }
func isNameStart(c byte) bool { return c == '_' || ('a' <= c && c <= 'z') || ('A' <= c && c <= 'Z') }
func isNamePart(c byte) bool  { return isNameStart(c) || isDigit(c) }

// validName reports whether name is a parameter name in the language's
// grammar; Compile uses it to vet the caller's parameter list.
func validName(name string) bool {
	if name == "" || !isNameStart(name[0]) {
		return false
	}
	t, err := scanName(name, 0)
	return err == nil && len(t.text) == len(name)
}
