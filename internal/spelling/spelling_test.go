package spelling

import "testing"

func TestDistance(t *testing.T) {
	// Worked by hand (common practice: the textbook Levenshtein examples).
	cases := []struct {
		a, b string
		want int
	}{
		{"", "", 0}, {"kitten", "sitting", 3}, {"mean", "men", 1}, {"rate", "rate", 0}, {"", "abc", 3}, {"flaw", "lawn", 2},
	}
	for _, c := range cases {
		if got := Distance(c.a, c.b); got != c.want {
			t.Errorf("Distance(%q, %q) = %d, want %d", c.a, c.b, got, c.want)
		}
	}
}

func TestClosest(t *testing.T) {
	names := []string{"mean", "sd", "replicates", "seed"}
	cases := []struct {
		word, want string
		ok         bool
	}{
		{"men", "mean", true},
		{"replicate", "replicates", true},
		{"x", "", false},      // one byte: nothing would be left standing
		{"zzzzzz", "", false}, // too far from everything
		{"sed", "sd", true},   // ties go to the earlier candidate
	}
	for _, c := range cases {
		got, ok := Closest(c.word, names)
		if ok != c.ok || (ok && got != c.want) {
			t.Errorf("Closest(%q) = %q, %v; want %q, %v", c.word, got, ok, c.want, c.ok)
		}
	}
}
