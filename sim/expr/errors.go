package expr

import (
	"fmt"
	"strings"
)

// SyntaxError reports why a source could not be compiled. Col is the 1-based
// byte column in the source where the problem was found; Msg says what is
// wrong and what would have been accepted there.
type SyntaxError struct {
	Col int
	Msg string
}

func (e *SyntaxError) Error() string {
	return fmt.Sprintf("column %d: %s", e.Col, e.Msg)
}

// errorAt builds a SyntaxError at the 0-based byte offset pos.
func errorAt(pos int, format string, args ...any) *SyntaxError {
	return &SyntaxError{Col: pos + 1, Msg: fmt.Sprintf(format, args...)}
}

// maxSuggestionDistance bounds how far a misspelling may be from a known name
// before a suggestion stops being helpful and starts being a guess.
const maxSuggestionDistance = 2

// closestName returns the candidate nearest to name in edit distance, if it
// is within maxSuggestionDistance and leaves at least one byte of name
// standing (otherwise "x" would be "corrected" to any two-letter name). Ties
// go to the earlier candidate so the suggestion follows the caller's order.
func closestName(name string, candidates []string) (string, bool) {
	best, bestDist := "", maxSuggestionDistance+1
	for _, c := range candidates {
		if d := editDistance(name, c); d < bestDist {
			best, bestDist = c, d
		}
	}
	return best, bestDist <= maxSuggestionDistance && bestDist < len(name)
}

// editDistance is the Levenshtein distance over bytes, which is exact here
// because names are ASCII.
func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			cost := 1
			if a[i-1] == b[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

func builtinNames() []string {
	names := make([]string, len(builtins))
	for i, b := range builtins {
		names[i] = b.name
	}
	return names
}

func unknownNameMessage(name string, vars []string) string {
	var sb strings.Builder
	fmt.Fprintf(&sb, "unknown name %q", name)
	if len(vars) == 0 {
		sb.WriteString("; this transform has no parameters, so only numbers and functions are allowed")
		return sb.String()
	}
	if s, ok := closestName(name, vars); ok {
		fmt.Fprintf(&sb, "; did you mean %q? known names: ", s)
	} else {
		sb.WriteString("; known names: ")
	}
	sb.WriteString(strings.Join(vars, ", "))
	return sb.String()
}

func unknownFunctionMessage(name string) string {
	var sb strings.Builder
	fmt.Fprintf(&sb, "unknown function %q", name)
	names := builtinNames()
	if s, ok := closestName(name, names); ok {
		fmt.Fprintf(&sb, "; did you mean %q? known functions: ", s)
	} else {
		sb.WriteString("; known functions: ")
	}
	sb.WriteString(strings.Join(names, ", "))
	return sb.String()
}
