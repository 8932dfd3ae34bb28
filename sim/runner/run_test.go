package runner

import (
	"context"
	"errors"
	"strings"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/study"
)

func mustParse(t testing.TB, src string) *study.Study {
	t.Helper()
	s, err := study.Parse("test.toml", []byte(src))
	if err != nil {
		t.Fatalf("parse: %v", err)
	}
	return s
}

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
	s := mustParse(t, twoArmStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 0, block: 0, count: 10})
	if allocs := testing.AllocsPerRun(200, w.replicate); allocs != 0 {
		t.Errorf("a replicate allocates %v times, want 0", allocs)
	}
}

func TestRunCountsEveryReplicate(t *testing.T) {
	s := mustParse(t, twoArmStudy)
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
			if len(c.Blocks) != Blocks(2500) {
				t.Errorf("n=%d: %d blocks, want %d", c.N, len(c.Blocks), Blocks(2500))
			}
			if c.Delta.Total() != c.Replicates-c.Undefined {
				t.Errorf("n=%d: histogram holds %d, want %d", c.N, c.Delta.Total(), c.Replicates-c.Undefined)
			}
		}
	}
}

func TestRunStopsWhenCancelled(t *testing.T) {
	s := mustParse(t, twoArmStudy)
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
	s := mustParse(t, twoArmStudy)
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
	s := mustParse(b, twoArmStudy)
	w := newWorker(s, NewResult(s))
	w.runBlock(job{ni: 1, block: 0, count: 1})
	b.ReportAllocs()
	for b.Loop() {
		w.replicate()
	}
}
