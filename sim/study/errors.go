package study

import (
	"fmt"
	"sort"
	"strings"

	"deltaprobe/internal/spelling"
)

// StudyError is one problem found in a study file, located by line (and
// column where the TOML decoder knows it).
type StudyError struct {
	File string
	Line int // 0 when the problem belongs to the whole file
	Col  int // 0 when unknown
	Msg  string
}

func (e *StudyError) Error() string {
	switch {
	case e.Line > 0 && e.Col > 0:
		return fmt.Sprintf("%s:%d:%d: %s", e.File, e.Line, e.Col, e.Msg)
	case e.Line > 0:
		return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg)
	}
	return fmt.Sprintf("%s: %s", e.File, e.Msg)
}

// StudyErrors lists every problem found in one study file, in line order.
type StudyErrors []*StudyError

func (es StudyErrors) Error() string {
	msgs := make([]string, len(es))
	for i, e := range es {
		msgs[i] = e.Error()
	}
	return strings.Join(msgs, "\n")
}

// sorted orders the errors by line, then column, keeping the order they
// were found in otherwise. Errors without a line (a key missing from the
// top of the file, a problem with the whole file) have no place in the
// file to sit beside, so they come last rather than before line 1.
func (es StudyErrors) sorted() StudyErrors {
	sort.SliceStable(es, func(i, j int) bool {
		a, b := es[i], es[j]
		if (a.Line == 0) != (b.Line == 0) {
			return b.Line == 0
		}
		if a.Line != b.Line {
			return a.Line < b.Line
		}
		return a.Col < b.Col
	})
	return es
}

// didYouMean formats an optional suggestion and the accepted names.
func didYouMean(word string, accepted []string) string {
	s := ""
	if g, ok := spelling.Closest(word, accepted); ok {
		s = fmt.Sprintf("; did you mean %q?", g)
		return s + " accepted: " + strings.Join(accepted, ", ")
	}
	return s + "; accepted: " + strings.Join(accepted, ", ")
}
