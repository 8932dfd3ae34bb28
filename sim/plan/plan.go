package plan

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"sort"
	"time"

	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// Step is one evaluation of one transform at one n: the last look
// taken there, and its verdict.
type Step struct {
	Transform  string      `json:"transform"`
	Step       int         `json:"step"` // evaluation order within the transform, from 1
	N          int         `json:"n"`
	Replicates int64       `json:"replicates"`
	Looks      int         `json:"looks"`  // looks taken at this n
	Row        measure.Row `json:"row"`    // measures and checks at the last look
	Budget     bool        `json:"budget"` // stopped because the budget ran out
}

// Result is the outcome of a plan, and all a report of it needs: it is
// saved as plan.json beside the plan's outputs (see Save), and `deltaprobe
// report` rebuilds them from it.
type Result struct {
	Layout   int                        `json:"layout"` // of plan.json: Layout
	Tool     string                     `json:"tool"`   // the deltaprobe version that ran it
	Build    runner.Build               `json:"build"`  // the generator and the build that ran it
	Study    study.Info                 `json:"study"`
	Spec     study.PlanSpec             `json:"spec"`   // the [plan] table as run
	Budget   int64                      `json:"budget"` // the cap on replicates in all; 0: none
	Steps    []Step                     `json:"steps"`
	Verdicts []measure.TransformVerdict `json:"verdicts"`
	// Per transform, in study order:
	Window       []int   `json:"window"`       // integers above the answer that were checked
	LargestFail  []int   `json:"largest_fail"` // largest n found failing above any candidate; 0 if none
	Oscillations [][]int `json:"oscillations"` // failing n found above a candidate, in order
	Undecided    [][]int `json:"undecided"`    // unclear n above the answer
	// DeltaPowerN holds, for each transform whose power decides, the
	// smallest n of the search range at which the delta method's
	// rejection rate reaches the target (0: not within the range): the
	// answer of the power formula, beside the plan's own.
	DeltaPowerN map[string]int        `json:"delta_power_n,omitempty"`
	Spent       map[int]int64         `json:"spent"` // replicates simulated per n
	Total       int64                 `json:"total"`
	Decisions   measure.PlanDecisions `json:"decisions"`   // the confidence of each decision and of each answer
	Method      string                `json:"method"`      // Decisions in words
	WindowRule  string                `json:"window_rule"` // how many integers above an answer are checked
	Z           float64               `json:"z"`
	Exhausted   bool                  `json:"exhausted"` // the -budget cap was reached
	Workers     int                   `json:"workers"`
	Elapsed     float64               `json:"elapsed_seconds"`
	Finished    string                `json:"finished"` // RFC 3339 UTC
	// Incomplete marks a plan stopped before its end (Ctrl-C, SIGTERM):
	// Steps hold every evaluation finished, the per-transform lists only
	// the transforms finished, and Cache what resuming needs (see Resume).
	// A complete plan has neither.
	Incomplete bool                   `json:"incomplete,omitempty"`
	Cache      map[int]*runner.Result `json:"cache,omitempty"` // per n: the one-point result simulated so far
}

// Progress is where a plan is: the transform and n being evaluated, the
// replicates held there and the most it may take, and the replicates
// simulated in all.
type Progress struct {
	Transform  string
	N          int
	Replicates int64 // held at N
	Max        int   // the most N may take (max_replicates)
	Total      int64 // simulated across the plan
	Evals      int   // evaluations finished, over all transforms
}

// Config is how a plan runs. None of it changes the plan's outcome.
type Config struct {
	Budget   int64 // cap on the replicates simulated across the whole plan (0: none)
	Options  runner.Options
	Progress func(Progress) // called as the plan goes; nil: none
}

// planner searches, for each transform, the smallest n from which this n
// and every larger n checked pass.
type planner struct {
	ctx    context.Context
	s      *study.Study
	spec   study.PlanSpec
	opt    runner.Options
	budget int64 // 0 means no cap
	z      float64
	cache  map[int]*runner.Result // per n: a one-point result, grown by batches
	out    *Result
	evals  map[[2]int]Step // (transform, n) → its evaluation
	steps  []int           // next step number per transform
	report func(Progress)  // nil: no progress
}

// Run runs the sequential search of s.Plan. budget caps the replicates
// simulated across the whole plan (0: no cap).
//
// Each criterion at each n is decided from a Monte Carlo interval that is
// widened for repeated looks and for the decisions an answer rests on
// (see measure.PlanRule), so every answer holds its stated family-wise
// confidence however many batches its decisions took.
func Run(ctx context.Context, s *study.Study, budget int64, opt runner.Options) (*Result, error) {
	return RunConfig(ctx, s, Config{Budget: budget, Options: opt})
}

// RunConfig is Run with progress reports. If ctx is cancelled it returns
// the plan so far, marked Incomplete, with ctx's error; Resume continues
// it.
func RunConfig(ctx context.Context, s *study.Study, cfg Config) (*Result, error) {
	if s.Plan == nil {
		return nil, fmt.Errorf("%s has no [plan] table", s.File)
	}
	spec := *s.Plan
	rule := measure.PlanRule(s.Info(), spec)
	p := newPlanner(ctx, s, spec, rule.Z, cfg)
	p.out = &Result{
		Layout: Layout, Tool: runner.Version, Build: runner.CurrentBuild(), Study: s.Info(), Spec: spec, Budget: cfg.Budget,
		Spent: map[int]int64{}, Z: rule.Z, WindowRule: windowRule(spec, s.Discrete()),
		Decisions: rule, Method: rule.Method(),
	}
	return p.run()
}

// Resume continues the incomplete plan prev of s (see ResumeStudy). The
// search is replayed from the start: evaluations prev holds return their
// stored verdicts, and an evaluation cut short continues from the blocks
// it had finished, so the plan ends as an uninterrupted one would. A
// complete prev is returned as it is.
func Resume(ctx context.Context, s *study.Study, prev *Result, cfg Config) (*Result, error) {
	if !prev.Incomplete {
		return prev, nil
	}
	if s.Plan == nil {
		return nil, fmt.Errorf("%s has no [plan] table", s.File)
	}
	p := newPlanner(ctx, s, prev.Spec, prev.Z, cfg)
	p.budget = prev.Budget
	p.out = prev
	if prev.Cache != nil {
		p.cache = prev.Cache
	}
	if p.out.Spent == nil {
		p.out.Spent = map[int]int64{}
	}
	index := map[string]int{}
	for t, tr := range s.Transforms {
		index[tr.Name] = t
	}
	for _, st := range prev.Steps {
		t, ok := index[st.Transform]
		if !ok {
			return nil, fmt.Errorf("the plan has a step of transform %q, which the study lacks", st.Transform)
		}
		p.evals[[2]int{t, st.N}] = st
		p.steps[t] = max(p.steps[t], st.Step)
	}
	for n, res := range p.cache {
		if res == nil || len(res.Cells) != len(s.Transforms) || len(res.Cells[0]) != 1 || res.Cells[0][0].N != n {
			return nil, fmt.Errorf("the plan's saved simulation at n=%d does not fit the study", n)
		}
	}
	// finish recomputes every transform's lists as the replay reaches it.
	p.out.Verdicts, p.out.Window, p.out.LargestFail, p.out.Oscillations, p.out.Undecided = nil, nil, nil, nil, nil
	p.out.DeltaPowerN = nil
	p.out.Build = p.out.Build.Join(runner.CurrentBuild())
	p.out.Tool = runner.Version
	return p.run()
}

// ResumeStudy rebuilds the study an incomplete plan was run from, out of
// the study text it carries, with the seed it ran with.
func ResumeStudy(r *Result) (*study.Study, error) {
	s, err := r.Study.Rebuild("plan")
	if err != nil {
		return nil, err
	}
	if s.Plan == nil {
		return nil, fmt.Errorf("the study stored in the plan has no [plan] table")
	}
	return s, nil
}

func newPlanner(ctx context.Context, s *study.Study, spec study.PlanSpec, z float64, cfg Config) *planner {
	return &planner{
		ctx: ctx, s: s, spec: spec, opt: cfg.Options, budget: cfg.Budget, z: z,
		cache: map[int]*runner.Result{}, evals: map[[2]int]Step{},
		steps: make([]int, len(s.Transforms)), report: cfg.Progress,
	}
}

// run searches every transform, from the start; evaluations already made
// are not repeated.
func (p *planner) run() (*Result, error) {
	start := time.Now()
	elapsed := p.out.Elapsed
	defer func() {
		p.out.Workers = p.opt.Workers
		if p.out.Workers <= 0 {
			p.out.Workers = runtime.GOMAXPROCS(0)
		}
		p.out.Elapsed = elapsed + time.Since(start).Seconds()
		p.out.Finished = time.Now().UTC().Format(time.RFC3339)
	}()
	for t := range p.s.Transforms {
		if err := p.search(t); err != nil {
			p.out.Incomplete = true
			p.out.Cache = p.cache
			return p.out, err
		}
	}
	p.out.Incomplete = false
	p.out.Cache = nil
	return p.out, nil
}

// window is how many integers above a candidate are checked, unless the
// study says: for discrete data 20% of it, from 10 to 60 integers, since
// coverage of a Wald interval for discrete data oscillates in n (Brown,
// Cai & DasGupta 2001), so a pass at one n says little about the next;
// for continuous data 10%, from 3 to 25, where the check guards against
// Monte Carlo luck rather than oscillation. The window bounds what the
// plan can vouch for, and is reported.
func (p *planner) window(c int) int {
	return windowSize(p.spec, p.s.Discrete(), c)
}

// windowSize is the window above candidate c; see planner.window.
func windowSize(spec study.PlanSpec, discrete bool, c int) int {
	if spec.Window > 0 {
		return spec.Window
	}
	if discrete {
		return min(60, max(10, int(math.Ceil(0.2*float64(c)))))
	}
	return min(25, max(3, int(math.Ceil(0.1*float64(c)))))
}

// windowRule says in words the rule windowSize follows.
func windowRule(spec study.PlanSpec, discrete bool) string {
	switch {
	case spec.Window > 0:
		return fmt.Sprintf("%d integers", spec.Window)
	case discrete:
		return "20% of the answer, at least 10 and at most 60 integers (discrete data, whose coverage oscillates in n)"
	}
	return "10% of the answer, at least 3 and at most 25 integers"
}

func (p *planner) search(t int) error {
	lo, hi := p.spec.NMin, p.spec.NMax
	window := 0
	// bracket returns the smallest passing n found by doubling from
	// start, and the last non-passing n before it (0 if none).
	bracket := func(start int) (pass, fail int, err error) {
		n := start
		for {
			v, err := p.eval(t, n)
			if err != nil {
				return 0, 0, err
			}
			if v == measure.Pass {
				return n, fail, nil
			}
			fail = n
			if n >= hi {
				return 0, fail, nil
			}
			n = min(hi, 2*n)
		}
	}
	pass, fail, err := bracket(lo)
	if err != nil {
		return err
	}
	for {
		if pass == 0 {
			p.finish(t, 0, window, false)
			return nil
		}
		// Bisect on integers between the last failure and the pass.
		for fail > 0 && pass-fail > 1 {
			mid := fail + (pass-fail)/2
			v, err := p.eval(t, mid)
			if err != nil {
				return err
			}
			if v == measure.Pass {
				pass = mid
			} else {
				fail = mid
			}
		}
		// Confirm: no integer in the window above may fail, and no n
		// already evaluated above may either. An undecided n there is
		// reported but does not move the answer: near the threshold the
		// budget cannot decide, and that is not evidence of a failure.
		window = p.window(pass)
		top := min(hi, pass+window)
		worst := 0
		for m := pass + 1; m <= top; m++ {
			v, err := p.eval(t, m)
			if err != nil {
				return err
			}
			if v == measure.Fail {
				worst = m
			}
		}
		for key, st := range p.evals {
			if key[0] == t && st.N > pass && st.Row.Verdict == measure.Fail && st.N > worst {
				worst = st.N
			}
		}
		if worst == 0 {
			// A window the budget could not look at vouches for nothing.
			for m := pass + 1; m <= top; m++ {
				if st := p.evals[[2]int{t, m}]; st.Budget && st.Row.Verdict == measure.Unclear {
					p.finish(t, pass, window, true)
					return nil
				}
			}
			if err := p.narrow(t, pass); err != nil {
				return err
			}
			p.finish(t, pass, window, false)
			return nil
		}
		if worst >= hi {
			p.finish(t, 0, window, false)
			return nil
		}
		// Search again above the failure.
		if pass, fail, err = bracket(worst + 1); err != nil {
			return err
		}
		if fail == 0 {
			fail = worst
		}
	}
}

// narrow tightens the lower bound below the answer pass. The answer
// lies above the largest n that decidedly fails; when an n between that
// failure and pass stayed undecided, bisection between the two (an
// undecided n counting as not failing) finds the largest failing n it
// can, so the bracket the plan reports is as tight as the replicates
// allow.
func (p *planner) narrow(t, pass int) error {
	fail := p.spec.NMin - 1
	for key, st := range p.evals {
		if key[0] == t && st.N < pass && st.Row.Verdict == measure.Fail && st.N > fail {
			fail = st.N
		}
	}
	open := pass // the smallest n above fail known not to fail
	for key, st := range p.evals {
		if key[0] == t && st.N > fail && st.N < open {
			open = st.N
		}
	}
	for open-fail > 1 {
		mid := fail + (open-fail)/2
		v, err := p.eval(t, mid)
		if err != nil {
			return err
		}
		if v == measure.Fail {
			fail = mid
		} else {
			open = mid
		}
	}
	return nil
}

// eval decides transform t at n, adding batches until its verdict is
// decided or the replicates per n (or the plan's budget) are spent.
func (p *planner) eval(t, n int) (measure.Verdict, error) {
	if st, ok := p.evals[[2]int{t, n}]; ok {
		return st.Row.Verdict, nil
	}
	res := p.cache[n]
	if res == nil {
		one := *p.s
		one.SampleSizes = []int{n}
		one.Replicates = 0
		res = runner.NewResult(&one)
		p.cache[n] = res
	}
	looks := p.spec.Looks()
	var st Step
	for k := 1; k <= looks; k++ {
		reps := min(k*p.spec.Batch, p.spec.MaxReplicates)
		have := res.Cells[0][0].Replicates
		if int64(reps) < have {
			// Other transforms already simulated more here; a look at a
			// count already held is one of the looks the split covers.
			continue
		}
		budgetHit := false
		p.progress(t, n, have, 0)
		if int64(reps) > have {
			if p.budget > 0 && p.out.Total+int64(reps)-have > p.budget {
				budgetHit = true
			} else {
				if err := p.grow(t, res, n, reps); err != nil {
					return "", err
				}
			}
		}
		row := measure.SummarizeCell(res, t, 0, p.z)
		st = Step{Transform: p.s.Transforms[t].Name, N: n, Replicates: res.Cells[t][0].Replicates, Looks: k, Row: row, Budget: budgetHit}
		if budgetHit {
			p.out.Exhausted = true
			if row.Count(measure.Replicates) == 0 {
				st.Row.Verdict = measure.Unclear
			}
			break
		}
		if row.Verdict != measure.Unclear {
			break
		}
	}
	p.steps[t]++
	st.Step = p.steps[t]
	p.evals[[2]int{t, n}] = st
	p.out.Steps = append(p.out.Steps, st)
	return st.Row.Verdict, nil
}

// grow simulates res up to reps replicates at n.
func (p *planner) grow(t int, res *runner.Result, n, reps int) error {
	one := *p.s
	one.SampleSizes = []int{n}
	one.Replicates = reps
	before := res.Cells[0][0].Replicates
	opt := p.opt
	if p.report != nil {
		// RunBlocks counts draws; its blocks at n are of equal draws a
		// replicate, so the share done is the share of replicates.
		opt.Progress = func(done, total int64) {
			if total > 0 {
				x := (int64(reps) - before) * done / total
				p.progress(t, n, before+x, x)
			}
		}
	}
	err := runner.RunBlocks(p.ctx, &one, res, nil, opt)
	// Blocks finished before an interruption are kept and counted.
	added := res.Cells[0][0].Replicates - before
	p.out.Spent[n] += added
	p.out.Total += added
	if err != nil {
		return err
	}
	res.Study.Replicates = reps
	return nil
}

// progress reports transform t at n holding have replicates, of which
// growing are simulated but not yet counted in the plan's total.
func (p *planner) progress(t, n int, have, growing int64) {
	if p.report == nil {
		return
	}
	p.report(Progress{
		Transform: p.s.Transforms[t].Name, N: n, Replicates: have, Max: p.spec.MaxReplicates,
		Total: p.out.Total + growing, Evals: len(p.out.Steps),
	})
}

// finish records the verdict of transform t from everything evaluated
// for it. answer is the search's smallest adequate n (0: none); budgetCut
// says the budget ran out before answer's window was checked, which makes
// the status unclear.
//
// measure.Conclude, the aggregation a grid run uses too, decides it, by
// the search's rule (Answer.Search): an undecided n above the answer is
// reported but does not move it.
func (p *planner) finish(t, answer, window int, budgetCut bool) {
	var steps []Step
	for key, st := range p.evals {
		if key[0] == t {
			steps = append(steps, st)
		}
	}
	sort.Slice(steps, func(i, j int) bool { return steps[i].N < steps[j].N })
	rows := make([]measure.Row, len(steps))
	for i, st := range steps {
		rows[i] = st.Row
	}
	tv := measure.Conclude(rows, measure.Answer{Search: true, N: answer, Undecided: budgetCut, Lowest: p.spec.NMin})
	// Oscillation: a failure above the smallest n that ever passed.
	firstPass := 0
	for _, st := range steps {
		if st.Row.Verdict == measure.Pass {
			firstPass = st.N
			break
		}
	}
	var osc, undecided []int
	largest := 0
	for _, st := range steps {
		if firstPass > 0 && st.N > firstPass && st.Row.Verdict == measure.Fail {
			osc = append(osc, st.N)
			largest = st.N
		}
		if tv.Status == measure.Adequate && st.N > answer && st.Row.Verdict == measure.Unclear {
			undecided = append(undecided, st.N)
		}
	}
	p.out.Undecided = append(p.out.Undecided, undecided)
	if tr := p.s.Transforms[t]; tr.Null != nil && p.s.Criteria.Decides("power") {
		if p.out.DeltaPowerN == nil {
			p.out.DeltaPowerN = map[string]int{}
		}
		p.out.DeltaPowerN[tr.Name] = deltaPowerN(p.s, t, p.spec)
	}
	p.out.Verdicts = append(p.out.Verdicts, tv)
	p.out.Window = append(p.out.Window, window)
	p.out.LargestFail = append(p.out.LargestFail, largest)
	p.out.Oscillations = append(p.out.Oscillations, osc)
}

// deltaPowerN is the smallest n in [NMin, NMax] at which the delta
// method's rejection rate for transform t, Φ(−q − δ) + 1 − Φ(q − δ) with
// δ = (τ0 − null)/√delta_var (measure.RejectRate), reaches the power
// target; 0 when it does not by NMax. The rate is taken to grow with n
// (δ grows like √n and q does not grow), so the search bisects.
func deltaPowerN(s *study.Study, t int, spec study.PlanSpec) int {
	null := *s.Transforms[t].Null
	target := s.Criteria.PowerTarget()
	reaches := func(n int) bool {
		p := s.Predict(t, n)
		return measure.RejectRate(s.Quantile(n), (p.Truth-null)/math.Sqrt(p.DeltaVar)) >= target
	}
	if !reaches(spec.NMax) {
		return 0
	}
	lo, hi := spec.NMin, spec.NMax // reaches(hi); the answer is in [lo, hi]
	for lo < hi {
		mid := lo + (hi-lo)/2
		if reaches(mid) {
			hi = mid
		} else {
			lo = mid + 1
		}
	}
	return hi
}
