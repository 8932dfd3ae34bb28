package runner

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"runtime/debug"
	"slices"
	"sync"
	"sync/atomic"
	"time"
	"unsafe"

	"deltaprobe/sim/expr"
	"deltaprobe/sim/family"
	"deltaprobe/sim/stream"
	"deltaprobe/sim/study"
)

// BlockSize is the number of replicates in one block (study.BlockSize):
// the unit of work, seeding and merging.
const BlockSize = study.BlockSize

// Version is the tool version recorded in results.
var Version = "0.1.0"

// Options control how a study runs; none of them changes its numbers.
type Options struct {
	Workers int // goroutines; 0 means GOMAXPROCS
	// Progress, if set, is called after each block with the draws done
	// and the draws in all; calls come from worker goroutines, one at a time.
	Progress func(done, total int64)
	// Checkpoint, if set, is called after a block is merged, at most once
	// per CheckpointEvery, with a copy of the result taken under the
	// runner's lock, so the caller can save the state a hard kill would
	// otherwise lose. The copy is of a fixed size (the result keeps a few
	// nodes per cell, whatever the replicates), and it is encoded outside
	// the lock: the other workers go on merging meanwhile. Calls come one
	// at a time.
	Checkpoint      func(*Result) error
	CheckpointEvery time.Duration
}

// Blocks returns the number of blocks for r replicates.
func Blocks(r int) int { return (r + BlockSize - 1) / BlockSize }

// blockSeeds derives the two PCG seeds of a block from the study seed,
// the sample size and the block index by SplitMix64 finalisers (Steele,
// Lea & Flood 2014), so neighbouring blocks get unrelated streams. The
// sample size itself, not its place in the grid, enters, so adding a
// point to the grid changes no other point's numbers.
func blockSeeds(seed uint64, n, block int) (uint64, uint64) {
	a := splitMix(seed ^ splitMix(uint64(n)))
	b := splitMix(a ^ splitMix(uint64(block)+0x9e3779b97f4a7c15))
	return a, b
}

func splitMix(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

// NewResult returns an empty result for s: predictions filled in, no
// blocks yet.
func NewResult(s *study.Study) *Result {
	r := &Result{
		Layout:    ResultVersion,
		Tool:      Version,
		Build:     CurrentBuild(),
		Study:     s.Info(),
		BlockSize: BlockSize,
	}
	for t := range s.Transforms {
		var preds []study.Prediction
		var cells []*Cell
		for _, n := range s.SampleSizes {
			preds = append(preds, s.Predict(t, n))
			cells = append(cells, &Cell{N: n, Delta: newHistogram(), Wald: newHistogram()})
		}
		r.Predictions = append(r.Predictions, preds)
		r.Cells = append(r.Cells, cells)
	}
	return r
}

type job struct{ ni, block, count int }

// Run simulates every block of the study and returns the merged result.
// It stops early, returning ctx.Err() and the blocks finished so far, when
// ctx is cancelled.
func Run(ctx context.Context, s *study.Study, opt Options) (*Result, error) {
	res := NewResult(s)
	err := RunBlocks(ctx, s, res, nil, opt)
	return res, err
}

// RunBlocks simulates the blocks of s for which want(sample size index,
// block) is true (all blocks when want is nil) and adds them to res,
// which must have been made by NewResult for the same study. Blocks
// already in res are skipped.
func RunBlocks(ctx context.Context, s *study.Study, res *Result, want func(ni, block int) bool, opt Options) error {
	start := time.Now()
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	res.Workers = workers
	res.Build = res.Build.Join(CurrentBuild()) // a resumed run may be continued by another build

	per := Blocks(s.Replicates)
	pending := pendingBlocks(s, res, want)
	var total int64
	var count int
	for ni, n := range s.SampleSizes {
		for b, p := range pending[ni] {
			if p {
				count++
				total += int64(blockCount(s.Replicates, b)) * int64(s.DrawsPerReplicate(n))
			}
		}
	}
	// Job i runs block i mod per of the (i / per)-th largest sample size:
	// largest sample sizes first, so no worker is left with a long block
	// at the end.
	slots := len(s.SampleSizes) * per
	jobAt := func(i int) (job, bool) {
		ni := len(s.SampleSizes) - 1 - i/per
		b := i % per
		return job{ni, b, blockCount(s.Replicates, b)}, pending[ni][b]
	}

	lastCheckpoint := time.Now()
	var (
		next     atomic.Int64
		done     atomic.Int64
		mu       sync.Mutex // guards res.Cells and the progress callback
		saving   sync.Mutex // held by the one worker saving a checkpoint
		wg       sync.WaitGroup
		firstErr error
		errOnce  sync.Once
	)
	fail := func(err error) { errOnce.Do(func() { firstErr = err }) }
	for w := 0; w < min(workers, count); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			wk := newWorker(s, res)
			for {
				if ctx.Err() != nil {
					return
				}
				i := int(next.Add(1) - 1)
				if i >= slots {
					return
				}
				j, ok := jobAt(i)
				if !ok {
					continue
				}
				if err := wk.safeRun(j); err != nil {
					fail(err)
					next.Store(int64(slots))
					return
				}
				mu.Lock()
				if err := wk.flush(j); err != nil {
					mu.Unlock()
					fail(err)
					next.Store(int64(slots))
					return
				}
				d := done.Add(int64(j.count) * int64(s.DrawsPerReplicate(s.SampleSizes[j.ni])))
				if opt.Progress != nil {
					opt.Progress(d, total)
				}
				var snapshot *Result
				if opt.Checkpoint != nil && time.Since(lastCheckpoint) >= opt.CheckpointEvery && saving.TryLock() {
					lastCheckpoint = time.Now()
					snapshot = res.clone()
				}
				mu.Unlock()
				if snapshot != nil {
					if err := opt.Checkpoint(snapshot); err != nil {
						fail(fmt.Errorf("saving the state: %w", err))
						next.Store(int64(slots))
					}
					saving.Unlock()
				}
			}
		}()
	}
	wg.Wait()
	res.Elapsed += time.Since(start).Seconds()
	res.Finished = time.Now().UTC().Format(time.RFC3339)
	if res.Shard != nil {
		res.Complete = res.shardComplete(s)
	} else {
		res.Complete = res.missingBlocks(s.Replicates) == 0
	}
	if firstErr != nil {
		return firstErr
	}
	if res.Complete {
		// Every block finished: a cancellation that came after the last
		// one changes nothing, and the run is not reported interrupted.
		return nil
	}
	return ctx.Err()
}

// shardComplete reports whether res holds every block of its shard.
func (res *Result) shardComplete(s *study.Study) bool {
	per := Blocks(s.Replicates)
	for ni := range s.SampleSizes {
		lo, hi := res.Shard.Range(per)
		for b := lo; b < hi; b++ {
			if !holds(res.Cells[0][ni].Nodes, b) {
				return false
			}
		}
	}
	return true
}

// clone copies the result's state, for a checkpoint encoded outside the
// runner's lock: the cells (counts, nodes, histograms) are copied, the
// rest is shared, as nothing changes it during a run.
func (res *Result) clone() *Result {
	c := *res
	c.Cells = make([][]*Cell, len(res.Cells))
	for t, row := range res.Cells {
		c.Cells[t] = make([]*Cell, len(row))
		for ni, cell := range row {
			cc := &Cell{N: cell.N, Counts: cell.Counts, Nodes: slices.Clone(cell.Nodes)}
			cc.Delta = Histogram{Counts: slices.Clone(cell.Delta.Counts), Below: cell.Delta.Below, Above: cell.Delta.Above, NaN: cell.Delta.NaN}
			cc.Wald = Histogram{Counts: slices.Clone(cell.Wald.Counts), Below: cell.Wald.Below, Above: cell.Wald.Above, NaN: cell.Wald.NaN}
			c.Cells[t][ni] = cc
		}
	}
	return &c
}

// missingBlocks counts the blocks of r replicates per sample size that
// the result does not hold.
func (res *Result) missingBlocks(r int) int {
	if len(res.Cells) == 0 {
		return 0
	}
	missing := 0
	for _, c := range res.Cells[0] {
		missing += Blocks(r) - heldBlocks(c.Nodes)
	}
	return missing
}

// pendingBlocks marks, as pending[ni][b], the blocks of s still to run:
// those want accepts (nil: all, or a shard's own when res is a shard's)
// that res does not hold yet. Jobs are not listed: a list of 10⁶
// replicates' blocks, grown by append, is most of the memory a run would
// otherwise gain with its replicates.
func pendingBlocks(s *study.Study, res *Result, want func(ni, b int) bool) [][]bool {
	if want == nil && res != nil && res.Shard != nil {
		want = res.Shard.Want(s)
	}
	per := Blocks(s.Replicates)
	pending := make([][]bool, len(s.SampleSizes))
	for ni := range s.SampleSizes {
		pending[ni] = make([]bool, per)
		for b := range pending[ni] {
			pending[ni][b] = want == nil || want(ni, b)
		}
		if res != nil && len(res.Cells) > 0 {
			for _, nd := range res.Cells[0][ni].Nodes {
				for b := nd.Lo; b < min(nd.Hi(), per); b++ {
					pending[ni][b] = false
				}
			}
		}
	}
	return pending
}

// blockCount is the number of replicates in block b of r.
func blockCount(r, b int) int { return min(BlockSize, r-b*BlockSize) }

// pad is the room kept free on each side of a worker's hot state: two
// 64-byte cache lines, because x86 cores' adjacent-line prefetchers move
// lines in 128-byte pairs. Without it the allocator put two workers'
// small buffers side by side (their PCG states were 128 bytes apart, the
// rest of their 16-byte buffers between them), so a draw by one worker
// could invalidate a line the other was using: false sharing on every
// draw, which no amount of work on the replicate would recover.
const pad = 128

// padded returns n zero values of T with at least pad bytes of unused
// room before and after them, so nothing another goroutine writes can
// share their cache lines.
func padded[T any](n int) []T {
	var zero T
	size := max(int(unsafe.Sizeof(zero)), 1)
	p := (pad + size - 1) / size
	buf := make([]T, p+n+p)
	return buf[p : p+n : p+n]
}

// worker owns every buffer one goroutine needs, so a replicate allocates
// nothing, and keeps everything it writes per replicate inside its own
// padding (see pad).
type worker struct {
	_       [pad]byte
	rng     stream.PCG // by value: its state is written on every draw
	s       *study.Study
	res     *Result
	q       float64   // the interval's quantile at the block's n
	qs      []float64 // the quantile at each n of the grid, computed once
	theta   []float64 // θ̂, the first Dim() entries of sized
	sized   []float64 // θ̂ then the sizes (study.SizeNames): what se expressions read
	armN    []float64 // per arm: the observations its covariance is divided by
	grad    []float64
	covs    [][]float64              // per arm: the plug-in covariance of its θ̂
	samples []family.Sample          // per arm: the latest draw, read by its fitter
	fitters []family.Fitter          // per arm: this worker's own, with any buffers its fit keeps
	causes  []family.FailureReporter // per arm: the fitter, when it names its failures; else nil
	counter []family.EventCounter    // per arm: nil unless it draws lifetimes
	events  []int                    // per arm: the latest draw's events
	dims    []int                    // parameters per arm
	sizes   []int
	evals   []*expr.Evaluator
	seEvals []*expr.Evaluator      // per transform: the analyst's se, or nil
	halves  []family.HalfCorrector // per arm: the zero-cell correction, or nil
	addHalf bool                   // [interval] zero_cells = "add_half"
	accs    []cellAcc
	useArm  [][]bool // [transform][arm]: whether the transform reads the arm
	failed  []bool   // per arm: its fit failed in this replicate
	// The other plug-in variance (family.OtherVariance): per arm its
	// fitter (nil: none), its covariance and whether it has one this
	// replicate; per transform whether it is kept.
	others    []family.OtherVariance
	otherCovs [][]float64
	otherOK   []bool
	hasOther  []bool
	rep       int // replicate within the block, for panic reports
	stage     int // arm being fitted (< len(Arms)) or len(Arms)+transform being scored
	_         [pad]byte
}

// cellAcc accumulates one transform over one block. Counters and
// histograms are updated per replicate; the moments are not: the block's
// estimates are kept in vals (at most BlockSize of them, so memory does
// not grow with replicates) and reduced in one two-pass sweep when the
// block ends. Welford's per-value update is a dependent chain through a
// division; the sweep is a few independent multiply-adds per value.
type cellAcc struct {
	truth, sdDelta float64
	null           float64 // H0's value, when hasNull
	hasNull        bool
	Counts         // the block's tallies; Replicates is set when it is flushed
	pluginSum      float64
	otherSum       float64 // of the other plug-in variance (worker.hasOther)
	widthSum       float64
	vals           []float64 // estimates not yet in mom
	mom            Moments
	delta, wald    Histogram
}

func newWorker(s *study.Study, res *Result) *worker {
	w := &worker{s: s, res: res}
	for _, n := range s.SampleSizes {
		w.qs = append(w.qs, s.Quantile(n))
	}
	w.sizes = make([]int, len(s.Arms))
	w.addHalf = s.Interval.AddHalf()
	// θ̂, the gradient, the arms' covariances and their samples' data,
	// written per replicate, share one padded array; the samples'
	// headers, whose N is written per replicate, get one of their own.
	d := s.Dim()
	ns := len(s.SizeNames())
	floats := d + ns + d + len(s.Arms)
	sampleLens := make([]int, len(s.Arms))
	for ai, a := range s.Arms {
		k := len(a.Model.Truth)
		w.dims = append(w.dims, k)
		maxN := 0
		for _, n := range s.SampleSizes {
			size := s.ArmSize(ai, n)
			maxN = max(maxN, size)
			sampleLens[ai] = max(sampleLens[ai], a.Model.Sampler.SampleLen(size))
		}
		f := a.Model.Estimator.NewFitter(maxN)
		w.fitters = append(w.fitters, f)
		r, _ := f.(family.FailureReporter)
		w.causes = append(w.causes, r)
		// The other variance, beside the one the intervals use, wherever
		// the fit offers both (the fits that take variance = "robust").
		ov, _ := f.(family.OtherVariance)
		if ov != nil {
			ov.EnableOther()
		}
		w.others = append(w.others, ov)
		floats += k * k
		counter, _ := a.Model.Sampler.(family.EventCounter)
		w.counter = append(w.counter, counter)
		hc, _ := a.Model.Estimator.(family.HalfCorrector)
		w.halves = append(w.halves, hc)
		floats += k*k + sampleLens[ai]
	}
	buf := padded[float64](floats)
	w.sized, buf = buf[:d+ns:d+ns], buf[d+ns:]
	w.theta = w.sized[:d:d]
	w.armN, buf = buf[:len(s.Arms):len(s.Arms)], buf[len(s.Arms):]
	w.grad, buf = buf[:d:d], buf[d:]
	for _, k := range w.dims {
		w.covs = append(w.covs, buf[:k*k:k*k])
		buf = buf[k*k:]
	}
	for _, k := range w.dims {
		w.otherCovs = append(w.otherCovs, buf[:k*k:k*k])
		buf = buf[k*k:]
	}
	w.otherOK = padded[bool](len(s.Arms))
	w.samples = padded[family.Sample](len(s.Arms))
	w.events = padded[int](len(s.Arms))
	w.failed = padded[bool](len(s.Arms))
	for ai, l := range sampleLens {
		w.samples[ai].Data = buf[:l:l]
		buf = buf[l:]
	}
	w.accs = padded[cellAcc](len(s.Transforms))
	for ti, t := range s.Transforms {
		w.evals = append(w.evals, t.Program.NewEvaluator())
		var se *expr.Evaluator
		if t.SEProgram != nil {
			se = t.SEProgram.NewEvaluator()
		}
		w.seEvals = append(w.seEvals, se)
		w.accs[ti] = cellAcc{vals: padded[float64](BlockSize)[:0], delta: newHistogram(), wald: newHistogram()}
		use := make([]bool, len(s.Arms))
		for ai, a := range s.Arms {
			for i := range a.Model.Truth {
				if t.Program.Uses(a.Offset + i) {
					use[ai] = true
				}
			}
		}
		w.useArm = append(w.useArm, use)
		// The other plug-in variance of a transform exists when every arm
		// it reads has one and the analyst gave no standard error.
		other := t.SEProgram == nil
		for ai := range s.Arms {
			if use[ai] && w.others[ai] == nil {
				other = false
			}
		}
		w.hasOther = append(w.hasOther, other)
	}
	return w
}

func armLabel(a study.Arm) string {
	if a.Name == "" {
		return "[model] (" + a.Family + ")"
	}
	return a.Name + " (" + a.Family + ")"
}

// safeRun turns a panic in a family or transform into an error that names
// the cell, so one bad replicate fails the run instead of hanging it.
func (w *worker) safeRun(j job) (err error) {
	defer func() {
		if p := recover(); p != nil {
			where := ""
			if na := len(w.s.Arms); w.stage < na {
				where = "fitting arm " + armLabel(w.s.Arms[w.stage])
			} else if t := w.stage - na; t < len(w.s.Transforms) {
				where = "scoring transform " + w.s.Transforms[t].Name
			}
			err = fmt.Errorf("internal error at n=%d, block %d, replicate %d, %s: %v\n%s", w.s.SampleSizes[j.ni], j.block, w.rep, where, p, debug.Stack())
		}
	}()
	w.runBlock(j)
	return nil
}

func (w *worker) runBlock(j job) {
	s := w.s
	n := s.SampleSizes[j.ni]
	s1, s2 := blockSeeds(s.Seed, n, j.block)
	w.rng.Seed(s1, s2)
	for a := range s.Arms {
		w.sizes[a] = s.ArmSize(a, n)
		w.armN[a] = float64(w.sizes[a])
	}
	study.SetSizes(w.sized[len(w.theta):], n, w.sizes, len(w.sized)-len(w.theta) > 1)
	w.q = w.qs[j.ni]
	for t := range w.accs {
		acc := &w.accs[t]
		p := w.res.Predictions[t][j.ni]
		*acc = cellAcc{truth: p.Truth, sdDelta: math.Sqrt(p.DeltaVar), vals: acc.vals[:0], delta: acc.delta, wald: acc.wald}
		if null := s.Transforms[t].Null; null != nil {
			acc.null, acc.hasNull = *null, true
		}
		acc.delta.reset()
		acc.wald.reset()
	}
	for w.rep = 0; w.rep < j.count; w.rep++ {
		w.replicate()
	}
	// A block holds at most BlockSize replicates, so its estimates are
	// reduced here in one sweep and its moments come from vals alone.
	for t := range w.accs {
		w.accs[t].reduce()
	}
}

// replicate draws every arm, fits it, and scores every transform.
func (w *worker) replicate() {
	s := w.s
	anyFailed := false
	if w.addHalf {
		anyFailed = w.drawAndFitHalf()
	} else {
		// Arms by pointer: an Arm is several words, and this runs per replicate.
		for a := range s.Arms {
			arm := &s.Arms[a]
			w.stage = a
			sample := &w.samples[a]
			arm.Model.Sampler.Draw(&w.rng, w.sizes[a], sample)
			off := arm.Offset
			w.failed[a] = !w.fitters[a].Fit(sample, w.theta[off:off+w.dims[a]], w.covs[a])
			anyFailed = anyFailed || w.failed[a]
		}
	}
	for a := range s.Arms {
		if w.counter[a] != nil {
			w.events[a] = w.counter[a].Events(&w.samples[a])
		}
	}
	for a, ov := range w.others {
		if ov != nil {
			w.otherOK[a] = !w.failed[a] && ov.OtherCov(w.otherCovs[a])
		}
	}
	for t := range w.accs {
		acc := &w.accs[t]
		w.stage = len(s.Arms) + t
		use := w.useArm[t]
		for a := range s.Arms {
			if use[a] && w.counter[a] != nil {
				acc.Events += int64(w.events[a])
				acc.Lifetimes += int64(w.sizes[a])
			}
		}
		if anyFailed && w.readsFailed(use) {
			// A transform is undefined when an arm it reads has no fit;
			// arms it does not read leave it alone.
			if w.noEvents(use) {
				acc.Undefined++
				acc.NoEvents++
			} else {
				acc.failed(w.causeOf(use))
			}
			continue
		}
		v := w.evals[t].ValueGrad(w.theta, w.grad)
		var pv float64
		for a := range s.Arms {
			if !use[a] {
				continue
			}
			off, k := s.Arms[a].Offset, w.dims[a]
			pv += study.QuadForm(w.grad[off:off+k], w.covs[a]) / w.armN[a]
		}
		if e := w.seEvals[t]; e != nil {
			// The analyst's standard error replaces the plug-in one; a
			// negative or NaN value leaves pv undefined below.
			se := e.Value(w.sized)
			pv = se * se
			if !(se >= 0) {
				pv = math.NaN()
			}
		}
		if acc.add(v, pv, w.q) && w.hasOther[t] {
			acc.otherSum += w.otherVar(use)
		}
	}
}

// otherVar is the other plug-in delta variance of the transform whose
// gradient w.grad holds and which reads the arms in use; NaN when an arm
// has no other variance this replicate.
func (w *worker) otherVar(use []bool) float64 {
	var pv float64
	for a := range w.s.Arms {
		if !use[a] {
			continue
		}
		if !w.otherOK[a] {
			return math.NaN()
		}
		off, k := w.s.Arms[a].Offset, w.dims[a]
		pv += study.QuadForm(w.grad[off:off+k], w.otherCovs[a]) / w.armN[a]
	}
	return pv
}

// drawAndFitHalf draws every arm, then fits each, correcting every
// correctable arm by adding ½ to its cells when any of them is at its
// boundary (family.HalfCorrector); it marks each arm whose fit has no
// value in w.failed and reports whether any has none.
func (w *worker) drawAndFitHalf() (anyFailed bool) {
	s := w.s
	boundary := false
	for a := range s.Arms {
		w.stage = a
		s.Arms[a].Model.Sampler.Draw(&w.rng, w.sizes[a], &w.samples[a])
		if h := w.halves[a]; h != nil && h.AtBoundary(&w.samples[a]) {
			boundary = true
		}
	}
	for a := range s.Arms {
		w.stage = a
		off := s.Arms[a].Offset
		theta := w.theta[off : off+w.dims[a]]
		w.failed[a] = false
		if h := w.halves[a]; boundary && h != nil {
			w.armN[a] = h.FitAddHalf(&w.samples[a], theta, w.covs[a])
			continue
		}
		w.armN[a] = float64(w.sizes[a])
		w.failed[a] = !w.fitters[a].Fit(&w.samples[a], theta, w.covs[a])
		anyFailed = anyFailed || w.failed[a]
	}
	return anyFailed
}

// causeOf is why the first arm a transform reads whose fit failed in
// this replicate had no estimate: what its fitter names, else
// not_converged.
func (w *worker) causeOf(use []bool) family.Failure {
	for a, f := range w.failed {
		if f && use[a] && w.causes[a] != nil {
			return w.causes[a].LastFailure()
		}
		if f && use[a] {
			return family.NotConverged
		}
	}
	return family.NotConverged
}

// noEvents reports whether an arm in use whose fit failed had fewer
// events than its fit needs: the reason the replicate is undefined.
func (w *worker) noEvents(use []bool) bool {
	for a, f := range w.failed {
		if f && use[a] && w.counter[a] != nil && w.events[a] < w.counter[a].MinEvents() {
			return true
		}
	}
	return false
}

// readsFailed reports whether a transform reading the arms in use reads
// one whose fit failed in this replicate.
func (w *worker) readsFailed(use []bool) bool {
	for a, f := range w.failed {
		if f && use[a] {
			return true
		}
	}
	return false
}

// add scores one replicate's estimate v and the variance pv its interval
// uses, with quantile q, and reports whether the replicate is defined.
func (acc *cellAcc) add(v, pv, q float64) bool {
	// |x| <= MaxFloat64 is false for NaN and ±Inf alike: one compare each.
	if !(math.Abs(v) <= math.MaxFloat64 && pv >= 0 && pv <= math.MaxFloat64 && q <= math.MaxFloat64) {
		acc.Undefined++
		return false
	}
	se := math.Sqrt(pv)
	if se == 0 {
		acc.ZeroSE++
	}
	lo, hi := v-q*se, v+q*se
	switch {
	case hi < acc.truth:
		acc.MissBelow++
	case lo > acc.truth:
		acc.MissAbove++
	default:
		acc.Covered++
	}
	if acc.hasNull && (hi < acc.null || lo > acc.null) {
		acc.Rejected++
	}
	acc.widthSum += hi - lo
	if len(acc.vals) == cap(acc.vals) {
		// Only when replicate is driven past a block's worth without
		// runBlock (a benchmark): fold early rather than allocate.
		acc.reduce()
	}
	acc.vals = append(acc.vals, v)
	acc.pluginSum += pv
	dev := v - acc.truth
	acc.delta.Add(dev / acc.sdDelta)
	acc.wald.Add(dev / se)
	return true
}

// reduce folds the pending estimates into the moments.
func (acc *cellAcc) reduce() {
	acc.mom.Merge(momentsOf(acc.vals))
	acc.vals = acc.vals[:0]
}

// flush merges the worker's block into the result; the caller holds the
// result's lock.
func (w *worker) flush(j job) error {
	for t := range w.accs {
		acc := &w.accs[t]
		c := w.res.Cells[t][j.ni]
		acc.Replicates = int64(j.count)
		c.add(acc.Counts)
		c.Delta.Merge(&acc.delta)
		c.Wald.Merge(&acc.wald)
		nd := Node{Lo: j.block, N: acc.mom.N, Mean: acc.mom.Mean, M2: acc.mom.M2, M3: acc.mom.M3, M4: acc.mom.M4}
		if acc.mom.N > 0 {
			nd.PluginVar = acc.pluginSum / float64(acc.mom.N)
			nd.Width = acc.widthSum / float64(acc.mom.N)
		}
		nd.PluginOther = math.NaN()
		if w.hasOther[t] && acc.mom.N > 0 {
			nd.PluginOther = acc.otherSum / float64(acc.mom.N)
		}
		if err := c.addNode(nd); err != nil {
			return fmt.Errorf("n=%d: %w", c.N, err)
		}
	}
	return nil
}
