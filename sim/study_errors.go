package sim

import (
	"fmt"
	"sort"
	"strings"
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

func (es StudyErrors) sorted() StudyErrors {
	sort.SliceStable(es, func(i, j int) bool { return es[i].Line < es[j].Line })
	return es
}

// suggest returns the candidate closest to word by edit distance, when it
// is close enough to be a plausible typo.
func suggest(word string, candidates []string) string {
	best, bestDist := "", 3
	for _, c := range candidates {
		if d := editDistance(word, c); d < bestDist {
			best, bestDist = c, d
		}
	}
	return best
}

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

// didYouMean formats an optional suggestion and the accepted names.
func didYouMean(word string, accepted []string) string {
	s := ""
	if g := suggest(word, accepted); g != "" {
		s = fmt.Sprintf("; did you mean %q?", g)
		return s + " accepted: " + strings.Join(accepted, ", ")
	}
	return s + "; accepted: " + strings.Join(accepted, ", ")
}
