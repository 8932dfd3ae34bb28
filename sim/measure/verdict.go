package measure

import "math"

// Verdict is the outcome of a criterion or of all of them.
type Verdict string

// The three outcomes of a check against its band.
const (
	Pass    Verdict = "pass"
	Fail    Verdict = "fail"
	Unclear Verdict = "unclear"
)

// Status of a transform over the whole grid.
type Status string

// The three statuses of verdicts.csv.
const (
	Adequate      Status = "adequate"
	NotReached    Status = "not_reached"
	StatusUnclear Status = "unclear"
)

// TransformVerdict is one line of verdicts.csv.
type TransformVerdict struct {
	Transform string `json:"transform"`
	SmallestN int    `json:"smallest_n"` // 0 unless adequate; then Low = High = SmallestN
	// Low and High bound the smallest adequate n: Low is the smallest n
	// above the largest n that decidedly fails (the smallest n if none
	// does), High the smallest n from which every larger n decidedly
	// passes (0 when the largest n does not pass).
	Low      int    `json:"n_low"`
	High     int    `json:"n_high"`
	Status   Status `json:"status"`
	Limiting string `json:"limiting"` // the criterion that sets SmallestN, or blocks adequacy at the largest n
	// PerCriterion holds, by criterion in table order, the smallest
	// adequate n of each criterion alone by the same rule; 0 where its
	// bounds do not meet.
	PerCriterion []int `json:"per_criterion"`
	// Undecided lists the n between Low and High that are unclear, with
	// roughly the replicates that would decide them.
	Undecided []UndecidedN `json:"undecided,omitempty"`
}

// UndecidedN is an n whose verdict the replicates did not decide.
type UndecidedN struct {
	N int `json:"n"`
	// Need is roughly the replicates at which the unclear criteria's
	// intervals would shrink clear of the band's edges, if their values
	// stayed where they are: R·(half-width / distance to the edge)²,
	// the largest over the unclear criteria; 0 when that cannot be said
	// (a value on an edge, an interval without an end).
	Need int64 `json:"need"`
}

// Verdicts decides, for every transform of a grid run, the bounds on the
// smallest n of the grid from which this n and every larger one pass.
func Verdicts(rows []Row) []TransformVerdict {
	var out []TransformVerdict
	for start := 0; start < len(rows); {
		end := start
		for end < len(rows) && rows[end].Transform == rows[start].Transform {
			end++
		}
		out = append(out, Conclude(rows[start:end], Answer{Lowest: rows[start].N}))
		start = end
	}
	return out
}

// Answer is what a search adds to the rows it evaluated, for Conclude.
type Answer struct {
	// Search says the rows come from a plan's search, whose own rule
	// (a pass with a decided failure just below it and no failure in a
	// window above) found N, the smallest adequate n (0: none).
	Search bool
	N      int
	// Undecided: what would vouch for an answer could not be looked at
	// (a plan's budget ran out before its window was checked).
	Undecided bool
	Lowest    int // the smallest n that could have been the answer
}

// Conclude is the one verdict aggregation of run and plan: from the rows
// of one transform, sorted by n, it gives the bounds on the smallest
// adequate n, the status, the limiting criterion and each criterion's
// own smallest n, by one rule.
//
// Only decided verdicts count: Low is the smallest n above the largest n
// that fails, High the smallest n from which every larger n passes. The
// status is adequate when they meet (SmallestN = Low = High), not_reached
// when the largest n fails, and unclear otherwise. The limiting criterion
// of an adequate answer is the first whose own n is the answer ("none"
// when the answer is the lowest n possible); when the largest n fails, the
// first criterion that fails there; when undecided, the first criterion
// unclear at the smallest undecided n.
func Conclude(rows []Row, a Answer) TransformVerdict {
	tv := TransformVerdict{Transform: rows[0].Transform, PerCriterion: make([]int, len(criteria))}
	if a.Search {
		return searched(rows, a)
	}
	tv.Low, tv.High = bounds(rows, func(r Row) Verdict { return r.Verdict })
	for c := range criteria {
		lo, hi := bounds(rows, func(r Row) Verdict { return r.Checks[c].Verdict })
		if lo > 0 && lo == hi {
			tv.PerCriterion[c] = lo
		}
	}
	top := rows[len(rows)-1]
	switch {
	case tv.Low > 0 && tv.Low == tv.High && !a.Undecided:
		tv.Status, tv.SmallestN, tv.Limiting = Adequate, tv.Low, "none"
		if tv.SmallestN > a.Lowest {
			for c, cr := range criteria {
				if tv.PerCriterion[c] == tv.SmallestN && !decidesNothing(rows, c) {
					tv.Limiting = cr.Name
					break
				}
			}
		}
		return tv
	case top.Verdict == Fail && !a.Undecided:
		tv.Status = NotReached
	default:
		tv.Status = StatusUnclear
		tv.Undecided = undecided(rows, tv.Low, tv.High)
	}
	// What blocks adequacy: the failure at the largest n, or the first
	// undecided n's unclear criterion.
	at, want := top, top.Verdict
	if tv.Status == StatusUnclear {
		want = Unclear
		for _, r := range rows {
			if len(tv.Undecided) > 0 && r.N == tv.Undecided[0].N {
				at = r
			}
		}
	}
	tv.Limiting = firstWith(at, want)
	return tv
}

// firstWith names the first criterion whose check at row r has verdict
// v, or "" if none has.
func firstWith(r Row, v Verdict) string {
	for c, cr := range criteria {
		if r.Checks[c].Verdict == v && !r.Checks[c].Advisory {
			return cr.Name
		}
	}
	return ""
}

// searched concludes a plan's search. The search's rule found a.N: the
// smallest evaluated n that passes with no decided failure evaluated
// above it and the window above it checked. That is the upper bound
// High. The lower bound Low is one above the largest n that decidedly
// fails (a.Lowest if none does): every integer was open to the search,
// so the answer lies in [Low, High]. The status is adequate only when
// they meet and the budget left nothing unchecked. Each criterion's own
// n is the start of its final run of passes among the evaluated n (an
// undecided n neither ending nor extending it) when the n just below it
// decidedly fails that criterion (or it is a.Lowest), and 0 otherwise.
func searched(rows []Row, a Answer) TransformVerdict {
	tv := TransformVerdict{Transform: rows[0].Transform, PerCriterion: make([]int, len(criteria))}
	for c := range criteria {
		high := 0
		for i := len(rows) - 1; i >= 0; i-- {
			v := rows[i].Checks[c].Verdict
			if v == Fail {
				break
			}
			if v == Pass {
				high = rows[i].N
			}
		}
		if high > 0 && integerLow(rows, a.Lowest, func(r Row) Verdict { return r.Checks[c].Verdict }) == high {
			tv.PerCriterion[c] = high
		}
	}
	top := rows[len(rows)-1]
	tv.Low = integerLow(rows, a.Lowest, func(r Row) Verdict { return r.Verdict })
	if top.Verdict == Fail {
		tv.Low = 0
	}
	tv.High = a.N
	switch {
	case a.N > 0 && tv.Low == a.N && !a.Undecided:
		tv.Status, tv.SmallestN, tv.Limiting = Adequate, a.N, "none"
		if a.N > a.Lowest {
			best := 0
			for c, cr := range criteria {
				if tv.PerCriterion[c] > best && !decidesNothing(rows, c) {
					best, tv.Limiting = tv.PerCriterion[c], cr.Name
				}
			}
			if best < a.N {
				// No criterion's own n is the answer: the one that failed
				// just below it limits it.
				for _, r := range rows {
					if r.N == a.N-1 {
						tv.Limiting = firstWith(r, Fail)
					}
				}
			}
		}
		return tv
	case a.N == 0 && top.Verdict == Fail:
		tv.Status = NotReached
		tv.Limiting = firstWith(top, Fail)
		return tv
	}
	tv.Status = StatusUnclear
	tv.Undecided = undecided(rows, tv.Low, tv.High)
	at, want := top, Unclear
	if len(tv.Undecided) > 0 {
		for _, r := range rows {
			if r.N == tv.Undecided[0].N {
				at = r
			}
		}
	} else if top.Verdict == Pass {
		// The budget left the window above the answer unchecked.
		at, want = top, Pass
	}
	tv.Limiting = firstWith(at, want)
	return tv
}

// integerLow is one above the largest n of rows that decidedly fails by
// v, or lowest if none fails: the lower bound of a search over integers.
func integerLow(rows []Row, lowest int, v func(Row) Verdict) int {
	low := lowest
	for _, r := range rows {
		if v(r) == Fail {
			low = r.N + 1
		}
	}
	return low
}

// decidesNothing reports whether criterion c is advisory in rows: not
// in the study's decide list, so it may not be named as limiting.
func decidesNothing(rows []Row, c int) bool { return rows[0].Checks[c].Advisory }

// bounds returns Low and High (see TransformVerdict) of rows sorted by n,
// reading each row's verdict with v; 0 where a bound does not exist.
func bounds(rows []Row, v func(Row) Verdict) (low, high int) {
	lastFail := -1
	for i, r := range rows {
		if v(r) == Fail {
			lastFail = i
		}
	}
	if lastFail+1 < len(rows) {
		low = rows[lastFail+1].N
	}
	for i := len(rows) - 1; i >= 0 && v(rows[i]) == Pass; i-- {
		high = rows[i].N
	}
	return low, high
}

// undecided lists the unclear n from low up to high (or to the largest n
// when high is 0), each with the replicates that would roughly decide it.
func undecided(rows []Row, low, high int) []UndecidedN {
	var out []UndecidedN
	for _, r := range rows {
		if r.N < low || (high > 0 && r.N >= high) || r.Verdict != Unclear {
			continue
		}
		u := UndecidedN{N: r.N}
		reps := float64(r.Count(Replicates))
		for c, cr := range criteria {
			ch := r.Checks[c]
			if ch.Verdict != Unclear || ch.Advisory {
				continue
			}
			v, half := r.Get(cr.Measure), (ch.High-ch.Low)/2
			d := math.Min(math.Abs(v-ch.Band[0]), math.Abs(v-ch.Band[1]))
			if !(d > 0) || math.IsNaN(half) || math.IsInf(half, 0) {
				u.Need = 0
				break
			}
			need := int64(math.Ceil(reps * (half / d) * (half / d)))
			if need > u.Need {
				u.Need = need
			}
		}
		out = append(out, u)
	}
	return out
}
