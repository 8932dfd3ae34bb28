package runner

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"sync/atomic"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/stream"
	"deltaprobe/sim/study"
	"deltaprobe/sim/study/studytest"
)

const twoArmStudy = `seed = 9
replicates = 2500
sample_sizes = [20, 60]

[[arm]]
name = "a"
family = "normal"
mean = 3.0
sd = 1.5

[[arm]]
name = "b"
family = "normal"
mean = 2.0
sd = 1.0
allocation = 2

[[transform]]
name = "ratio"
expr = "a.mean / b.mean"

[[transform]]
name = "log_sd_ratio"
expr = "log(a.sd) - log(b.sd)"
`

// One replicate (draw, fit, every transform, every accumulator) allocates
// nothing: the hot path's buffers belong to the worker.
func TestReplicateAllocatesNothing(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 0, block: 0, count: 10})
	if allocs := testing.AllocsPerRun(200, w.replicate); allocs != 0 {
		t.Errorf("a replicate allocates %v times, want 0", allocs)
	}
}

// normalObservations is a normal sampler that keeps every observation,
// y_i = mean + sd·z_i, drawing the same z_i as the normal family does.
type normalObservations struct{ mean, sd float64 }

func (normalObservations) SampleLen(n int) int { return n }

func (m normalObservations) Draw(rng *stream.PCG, n int, s *family.Sample) {
	s.N = n
	for i := range n {
		s.Data[i] = m.mean + m.sd*rng.NormFloat64()
	}
}

// normalFromObservations makes fitters of the normal MLE for kept
// observations, each with a buffer of its own for the deviations from the
// mean, and counts the fitters it makes and the largest n asked for.
type normalFromObservations struct {
	made, maxN *atomic.Int64
}

func (e normalFromObservations) NewFitter(maxN int) family.Fitter {
	e.made.Add(1)
	e.maxN.Store(int64(maxN))
	return &deviationsFitter{dev: make([]float64, maxN)}
}

type deviationsFitter struct{ dev []float64 }

func (f *deviationsFitter) Fit(s *family.Sample, theta, cov []float64) bool {
	y := s.Data[:s.N]
	var sum float64
	for _, v := range y {
		sum += v
	}
	mean := sum / float64(s.N)
	var ss float64
	for i, v := range y {
		f.dev[i] = v - mean
		ss += f.dev[i] * f.dev[i]
	}
	theta[0], theta[1] = mean, math.Sqrt(ss/float64(s.N))
	v := theta[1] * theta[1]
	cov[0], cov[1], cov[2], cov[3] = v, 0, 0, v/2
	return true
}

// keepObservations swaps every arm of a normal study for a sampler that
// keeps its observations and a fitter with a buffer, and returns the
// counters of fitters made and of the largest n each arm's were made for.
func keepObservations(s *study.Study) (made, maxN []*atomic.Int64) {
	for a := range s.Arms {
		m := &s.Arms[a].Model
		made = append(made, new(atomic.Int64))
		maxN = append(maxN, new(atomic.Int64))
		m.Sampler = normalObservations{mean: m.Truth[0], sd: m.Truth[1]}
		m.Estimator = normalFromObservations{made: made[a], maxN: maxN[a]}
	}
	return made, maxN
}

// A sampler that keeps all n observations and a fitter that keeps a
// buffer run through the worker allocation-free, each fitter made once
// for the arm's largest n, and agree with the normal family's
// sufficient statistics to rounding (the same draws, summed in other
// units).
func TestWorkerKeepsObservationsAndFitBuffers(t *testing.T) {
	// Both draw every observation: by default the normal family draws its
	// sums from their exact law instead, which are other numbers.
	eachDraw := strings.ReplaceAll(twoArmStudy, `family = "normal"`, "family = \"normal\"\ndraws = \"each\"")
	sums, obs := studytest.Parse(t, eachDraw), studytest.Parse(t, eachDraw)
	made, maxN := keepObservations(obs)
	ws, wo := newWorker(sums, NewResult(sums)), newWorker(obs, NewResult(obs))
	for a := range obs.Arms {
		if got, want := maxN[a].Load(), int64(obs.ArmSize(a, 60)); made[a].Load() != 1 || got != want {
			t.Errorf("arm %d: %d fitters made for n ≤ %d, want 1 for n ≤ %d", a, made[a].Load(), got, want)
		}
		if got, want := len(wo.samples[a].Data), obs.ArmSize(a, 60); got != want {
			t.Errorf("arm %d: sample data has room for %d values, want %d", a, got, want)
		}
	}
	for _, w := range []*worker{ws, wo} {
		w.runBlock(job{ni: 1, block: 0, count: 1})
	}
	for r := range 200 {
		ws.replicate()
		wo.replicate()
		for i, want := range ws.theta {
			if got := wo.theta[i]; math.Abs(got-want) > 1e-12*math.Abs(want) {
				t.Fatalf("replicate %d: θ̂[%d] = %v from observations, %v from sums", r, i, got, want)
			}
		}
		for a := range ws.covs {
			for i, want := range ws.covs[a] {
				if got := wo.covs[a][i]; math.Abs(got-want) > 1e-12*math.Abs(want) {
					t.Fatalf("replicate %d: arm %d cov[%d] = %v from observations, %v from sums", r, a, i, got, want)
				}
			}
		}
	}
	if allocs := testing.AllocsPerRun(200, wo.replicate); allocs != 0 {
		t.Errorf("a replicate with kept observations allocates %v times, want 0", allocs)
	}
}

// Each worker makes its own fitter for every arm, once (run with -race:
// the fitters' buffers are written per replicate).
func TestRunMakesOneFitterPerWorker(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy)
	made, _ := keepObservations(s)
	if _, err := Run(context.Background(), s, Options{Workers: 2}); err != nil {
		t.Fatal(err)
	}
	for a := range s.Arms {
		if got := made[a].Load(); got != 2 {
			t.Errorf("arm %d: %d fitters made by 2 workers, want 2", a, got)
		}
	}
}

func TestRunCountsEveryReplicate(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy)
	res, err := Run(context.Background(), s, Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if !res.Complete {
		t.Error("result not marked complete")
	}
	for tr := range res.Cells {
		for _, c := range res.Cells[tr] {
			if c.Replicates != 2500 || c.Covered+c.MissBelow+c.MissAbove+c.Undefined != 2500 {
				t.Errorf("n=%d: replicates %d, covered+missed+undefined %d", c.N, c.Replicates, c.Covered+c.MissBelow+c.MissAbove+c.Undefined)
			}
			// 3 blocks: the nodes [0, 2) and [2, 3), one per set bit of 3.
			if heldBlocks(c.Nodes) != Blocks(2500) || len(c.Nodes) != 2 {
				t.Errorf("n=%d: %d nodes holding %d blocks, want 2 holding %d", c.N, len(c.Nodes), heldBlocks(c.Nodes), Blocks(2500))
			}
			if c.Delta.Total() != c.Replicates-c.Undefined {
				t.Errorf("n=%d: histogram holds %d, want %d", c.N, c.Delta.Total(), c.Replicates-c.Undefined)
			}
		}
	}
}

func TestRunStopsWhenCancelled(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	res, err := Run(ctx, s, Options{Workers: 2})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
	if res == nil || res.Complete {
		t.Fatal("a cancelled run must return its partial result, marked incomplete")
	}
}

// panicEstimator makes fitters that panic on their third fit.
type panicEstimator struct{ family.Estimator }

func (e panicEstimator) NewFitter(maxN int) family.Fitter {
	return &panicFitter{Fitter: e.Estimator.NewFitter(maxN)}
}

type panicFitter struct {
	family.Fitter
	fits int
}

func (p *panicFitter) Fit(s *family.Sample, theta, cov []float64) bool {
	p.fits++
	if p.fits == 3 {
		panic("boom")
	}
	return p.Fitter.Fit(s, theta, cov)
}

// A panic inside a worker fails the run with the cell named, instead of
// killing the process or hanging the pool.
func TestRunRecoversWorkerPanic(t *testing.T) {
	s := studytest.Parse(t, twoArmStudy)
	s.Arms[0].Model.Estimator = panicEstimator{s.Arms[0].Model.Estimator}
	_, err := Run(context.Background(), s, Options{Workers: 1})
	if err == nil || !strings.Contains(err.Error(), "boom") || !strings.Contains(err.Error(), "n=60, block 0, replicate 2, fitting arm a (normal)") {
		t.Fatalf("err = %v, want the panic reported with its cell", err)
	}
}

func TestBlockSeedsDiffer(t *testing.T) {
	seen := map[[2]uint64]bool{}
	for _, n := range []int{2, 3, 10, 11} {
		for b := 0; b < 50; b++ {
			a, c := blockSeeds(7, n, b)
			if seen[[2]uint64{a, c}] {
				t.Fatalf("repeated seeds at n=%d block %d", n, b)
			}
			seen[[2]uint64{a, c}] = true
		}
	}
}

func BenchmarkReplicate(b *testing.B) {
	s := studytest.Parse(b, twoArmStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 1, block: 0, count: 1})
	b.ReportAllocs()
	for b.Loop() {
		w.replicate()
	}
}

// misfitStudy draws from the new families and fits others and their own,
// with both variances, so every new fitter is on the worker's hot path.
const misfitStudy = `seed = 3
replicates = 1000
sample_sizes = [40]
[[arm]]
name = "nbp"
family = "negative_binomial"
mean = 4.0
dispersion = 0.5
fit = "poisson"
variance = "robust"
[[arm]]
name = "nb"
family = "negative_binomial"
mean = 4.0
dispersion = 0.5
variance = "robust"
[[arm]]
name = "wb"
family = "weibull"
shape = 1.5
scale = 2.0
[[arm]]
name = "we"
family = "weibull"
shape = 1.5
scale = 2.0
fit = "exponential"
[[arm]]
name = "tn"
family = "student_t"
location = 0.0
scale = 1.0
df = 5.0
fit = "normal"
variance = "robust"
[[arm]]
name = "zp"
family = "zero_inflated_poisson"
mean = 3.0
zero_share = 0.2
fit = "poisson"
[[transform]]
name = "all"
expr = "log(nbp.mean) + nb.dispersion + wb.shape + we.rate + tn.sd + zp.mean"
`

// A replicate of fits of other families' data, numerical MLEs and
// sandwiches included, allocates nothing either.
func TestMisfitReplicateAllocatesNothing(t *testing.T) {
	s := studytest.Parse(t, misfitStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 0, block: 0, count: 10})
	if allocs := testing.AllocsPerRun(200, w.replicate); allocs != 0 {
		t.Errorf("a replicate allocates %v times, want 0", allocs)
	}
}

// BenchmarkMisfitReplicate times one replicate of misfitStudy (six arms of
// 40 observations each); run it with -benchmem to see 0 allocs/op.
func BenchmarkMisfitReplicate(b *testing.B) {
	s := studytest.Parse(b, misfitStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 0, block: 0, count: 10})
	b.ReportAllocs()
	for b.Loop() {
		w.replicate()
	}
}

// Checkpoints get a copy of the result, taken under the lock and encoded
// outside it while the workers go on (run with -race): every copy saved
// loads back, holds no more blocks than the next, and the copies do not
// change once handed over. The last run's result is the same bits as a
// run without checkpoints.
func TestCheckpointsAreCopies(t *testing.T) {
	// Drawing every observation makes blocks slow enough for several
	// checkpoints; how many there are depends on timing, so the test asks
	// for one at least and checks the order of whatever number it gets.
	src := strings.Replace(twoArmStudy, "replicates = 2500", "replicates = 9000", 1)
	src = strings.ReplaceAll(src, "family = \"normal\"", "family = \"normal\"\ndraws = \"each\"")
	s := studytest.Parse(t, src)
	var saved []*Result
	var encoded [][]byte
	opt := Options{Workers: 2, CheckpointEvery: 0, Checkpoint: func(r *Result) error {
		b, err := json.Marshal(r)
		if err != nil {
			return err
		}
		saved, encoded = append(saved, r), append(encoded, b)
		return nil
	}}
	res, err := Run(context.Background(), s, opt)
	if err != nil {
		t.Fatal(err)
	}
	if len(saved) == 0 {
		t.Fatalf("no checkpoint for %d blocks", 2*Blocks(9000))
	}
	t.Logf("%d checkpoints for %d blocks", len(saved), 2*Blocks(9000))
	held := -1
	for i, r := range saved {
		if again, _ := json.Marshal(r); !bytes.Equal(again, encoded[i]) {
			t.Fatalf("checkpoint %d changed after it was handed over", i)
		}
		h := heldBlocks(r.Cells[0][0].Nodes) + heldBlocks(r.Cells[0][1].Nodes)
		if h < held {
			t.Errorf("checkpoint %d holds %d blocks, fewer than the one before (%d)", i, h, held)
		}
		held = h
		if r == res {
			t.Fatal("a checkpoint was handed the live result")
		}
	}
	plain, err := Run(context.Background(), s, Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	for tr := range res.Cells {
		for ni := range res.Cells[tr] {
			// Printed, so that a NaN (no other plug-in variance) equals itself;
			// %v prints each float exactly (shortest round-trip form).
			if fmt.Sprint(res.Cells[tr][ni].Merged()) != fmt.Sprint(plain.Cells[tr][ni].Merged()) {
				t.Errorf("transform %d, n index %d: checkpointed run differs from a plain one", tr, ni)
			}
		}
	}
}

// A replicate of censored arms (exponential and Weibull, model and
// robust variances, entry, end and dropout) allocates nothing either.
func TestCensoredReplicateAllocatesNothing(t *testing.T) {
	s := studytest.Parse(t, `seed = 1
replicates = 1000
sample_sizes = [50]
[[arm]]
name = "a"
family = "exponential"
rate = 0.3
[arm.censoring]
entry = 2
end = 5
dropout_rate = 0.05
[[arm]]
name = "b"
family = "exponential"
rate = 0.3
variance = "robust"
[arm.censoring]
end = 4
[[arm]]
name = "c"
family = "weibull"
shape = 1.5
scale = 4
variance = "robust"
[arm.censoring]
entry = 2
end = 6
[[transform]]
name = "t"
expr = "log(a.rate / b.rate) + c.shape"
`)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 0, block: 0, count: 10})
	if allocs := testing.AllocsPerRun(200, w.replicate); allocs != 0 {
		t.Errorf("a replicate allocates %v times, want 0", allocs)
	}
}
