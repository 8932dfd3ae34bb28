package measure

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
	SmallestN int    `json:"smallest_n"` // 0 unless adequate
	Status    Status `json:"status"`
	Limiting  string `json:"limiting"` // the criterion that sets SmallestN, or fails at the largest n
	// PerCriterion holds, by criterion in table order, the smallest
	// adequate n of each criterion alone; 0 where there is none.
	PerCriterion []int `json:"per_criterion"`
}

// Verdicts decides, for every transform of a grid run, the smallest n of
// the grid from which this n and every larger one pass.
func Verdicts(rows []Row) []TransformVerdict {
	var out []TransformVerdict
	for start := 0; start < len(rows); {
		end := start
		for end < len(rows) && rows[end].Transform == rows[start].Transform {
			end++
		}
		g := rows[start:end]
		answer := 0
		if i := finalPasses(g, func(r Row) Verdict { return r.Verdict }, false); i >= 0 {
			answer = g[i].N
		}
		out = append(out, Conclude(g, Answer{N: answer, Lowest: g[0].N}))
		start = end
	}
	return out
}

// Answer is what a search found for one transform, for Conclude.
type Answer struct {
	N         int  // the smallest adequate n found; 0 if none
	Undecided bool // N was found, but what vouches for it could not be decided
	Lowest    int  // the smallest n that could have been the answer
	// SkipUnclear: an undecided n neither supports nor refutes a
	// criterion's own smallest n (the plan's rule); otherwise it ends the
	// run of passes (the grid's rule).
	SkipUnclear bool
}

// Conclude is the one verdict aggregation of run and plan: from the rows
// of one transform, sorted by n, and the answer its search found, it
// gives the status, the limiting criterion and each criterion's own
// smallest n.
//
// The status is adequate when an answer was found and decided,
// not_reached when the largest n fails, and unclear otherwise. Each
// criterion's n is the start of the final run of n where it passes (see
// Answer.SkipUnclear). The limiting criterion of an adequate answer is
// the one that needs the largest n ("none" when the answer is the lowest
// n possible); otherwise it is the first criterion whose check at the
// largest n has the verdict that prevents adequacy.
func Conclude(rows []Row, a Answer) TransformVerdict {
	tv := TransformVerdict{Transform: rows[0].Transform, PerCriterion: make([]int, len(criteria))}
	for c := range criteria {
		if i := finalPasses(rows, func(r Row) Verdict { return r.Checks[c].Verdict }, a.SkipUnclear); i >= 0 {
			tv.PerCriterion[c] = rows[i].N
		}
	}
	top := rows[len(rows)-1]
	switch {
	case a.N > 0 && !a.Undecided:
		tv.Status, tv.SmallestN, tv.Limiting = Adequate, a.N, "none"
		if a.N > a.Lowest {
			best := 0
			for c, cr := range criteria {
				if tv.PerCriterion[c] > best {
					best, tv.Limiting = tv.PerCriterion[c], cr.Name
				}
			}
		}
		return tv
	case a.Undecided || top.Verdict != Fail:
		tv.Status = StatusUnclear
	default:
		tv.Status = NotReached
	}
	want := top.Verdict
	if tv.Status == StatusUnclear && want == Pass {
		want = Unclear
	}
	for c, cr := range criteria {
		if top.Checks[c].Verdict == want {
			tv.Limiting = cr.Name
			break
		}
	}
	return tv
}

// finalPasses returns the index where the final run of passes of rows
// starts, reading the verdict with v, or −1 when there is none. With
// skipUnclear an unclear row neither ends nor extends the run; without
// it, the run must reach the largest n and an unclear row ends it.
func finalPasses(rows []Row, v func(Row) Verdict, skipUnclear bool) int {
	start := -1
	for i := len(rows) - 1; i >= 0; i-- {
		switch v(rows[i]) {
		case Pass:
			start = i
			continue
		case Unclear:
			if skipUnclear {
				continue
			}
		}
		break
	}
	return start
}
