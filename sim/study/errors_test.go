package study

import (
	"errors"
	"strings"
	"testing"
)

func TestStudyErrorsSorted(t *testing.T) {
	e := func(line, col int, msg string) *StudyError {
		return &StudyError{File: "s.toml", Line: line, Col: col, Msg: msg}
	}
	tests := []struct {
		name string
		in   StudyErrors
		want string
	}{
		{"line-less last",
			StudyErrors{e(0, 0, "seed is missing"), e(7, 0, "b"), e(3, 0, "a")},
			"s.toml:3: a\ns.toml:7: b\ns.toml: seed is missing"},
		{"line-less keep their order",
			StudyErrors{e(0, 0, "first"), e(2, 0, "x"), e(0, 0, "second")},
			"s.toml:2: x\ns.toml: first\ns.toml: second"},
		{"column breaks a tie, finding order otherwise",
			StudyErrors{e(4, 9, "c"), e(4, 0, "a"), e(4, 0, "b"), e(4, 2, "d")},
			"s.toml:4: a\ns.toml:4: b\ns.toml:4:2: d\ns.toml:4:9: c"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := tt.in.sorted().Error(); got != tt.want {
				t.Errorf("got\n%s\nwant\n%s", got, tt.want)
			}
		})
	}
}

// A study file with a missing top-level key and an error on a line lists
// the line's error first.
func TestParseErrorOrder(t *testing.T) {
	src := `title = "Order"
replicates = 200
sample_sizes = [10, 20]
level = 2.0

[model]
family = "normal"
mean = 5.0
sd = 2.0

[[transform]]
name = "inverse"
expr = "1 / mean"
`
	_, err := Parse("s.toml", []byte(src))
	var es StudyErrors
	if !errors.As(err, &es) || len(es) != 2 {
		t.Fatalf("Parse: %v, want two StudyErrors", err)
	}
	if !strings.HasPrefix(es[0].Error(), "s.toml:4: level = 2 is out of range") || !strings.HasPrefix(es[1].Error(), "s.toml: seed is missing") {
		t.Errorf("errors in the wrong order:\n%v", err)
	}
}
