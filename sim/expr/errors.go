package expr

import (
	"fmt"
	"strings"

	"deltaprobe/internal/spelling"
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
	if s, ok := spelling.Closest(name, vars); ok {
		fmt.Fprintf(&sb, "; did you mean %q? known names: ", s)
	} else {
		sb.WriteString("; known names: ")
	}
	sb.WriteString(strings.Join(vars, ", "))
	return sb.String()
}

// otherNames are functions other notations name differently, with the
// name this language uses and what to know about it.
var otherNames = map[string]struct{ name, note string }{
	"ln": {"log", "log is the natural logarithm"},
}

func unknownFunctionMessage(name string) string {
	var sb strings.Builder
	fmt.Fprintf(&sb, "unknown function %q", name)
	names := builtinNames()
	if o, ok := otherNames[name]; ok {
		fmt.Fprintf(&sb, "; did you mean %q? %s; known functions: ", o.name, o.note)
	} else if s, ok := spelling.Closest(name, names); ok {
		fmt.Fprintf(&sb, "; did you mean %q? known functions: ", s)
	} else {
		sb.WriteString("; known functions: ")
	}
	sb.WriteString(strings.Join(names, ", "))
	return sb.String()
}
