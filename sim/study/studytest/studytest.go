// Package studytest holds what tests across the engine need to build a
// study from its text.
package studytest

import (
	"testing"

	"deltaprobe/sim/study"
)

// Parse parses a study file's text, named after the test, and fails the
// test when the text does not load.
func Parse(t testing.TB, src string) *study.Study {
	t.Helper()
	s, err := study.Parse(t.Name()+".toml", []byte(src))
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	return s
}
