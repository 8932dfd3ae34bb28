package spelling

// maxDistance bounds how far a misspelling may be from a known name before
// a suggestion stops being helpful and starts being a guess.
const maxDistance = 2

// Closest returns the candidate nearest to word in edit distance, if it is
// within two edits and leaves at least one byte of word standing
// (otherwise "x" would be "corrected" to any two-letter name). Ties go to
// the earlier candidate, so the suggestion follows the caller's order.
func Closest(word string, candidates []string) (string, bool) {
	best, bestDist := "", maxDistance+1
	for _, c := range candidates {
		if d := Distance(word, c); d < bestDist {
			best, bestDist = c, d
		}
	}
	return best, bestDist <= maxDistance && bestDist < len(word)
}

// Distance is the Levenshtein distance over bytes, exact for the ASCII
// names it is used on.
func Distance(a, b string) int {
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
