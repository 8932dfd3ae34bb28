package runner

import (
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
	"sync/atomic"
	"time"

	"deltaprobe/sim/study"
)

// Estimate is the work a run has left, and what it should cost here.
type Estimate struct {
	Draws       int64         // observations left to draw
	Replicates  int64         // replicates left
	PerDrawNS   float64       // expected nanoseconds per draw, fit and score included, from a calibration
	Time        time.Duration // expected wall time with the given workers
	MemoryBytes int64         // memory of the simulation's state, roughly (the report adds its own)
}

// EstimateWork counts the draws left to run of s, those of the blocks
// res does not hold yet (res nil: the whole study; a shard's result:
// its own blocks), and times a short calibration run (about calibrate
// long) so the estimate includes fitting and scoring as well as drawing.
// The memory is the simulation's state, which does not grow with the
// replicates (see reduce.go).
func EstimateWork(s *study.Study, res *Result, workers int, calibrate time.Duration) Estimate {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	var e Estimate
	// left[ni] is the number of replicates still to run at s.SampleSizes[ni].
	pending := pendingBlocks(s, res, nil)
	left := make([]int64, len(s.SampleSizes))
	for ni, n := range s.SampleSizes {
		for b, p := range pending[ni] {
			if p {
				left[ni] += int64(blockCount(s.Replicates, b))
			}
		}
		e.Draws += left[ni] * int64(s.DrawsPerReplicate(n))
		e.Replicates += left[ni]
	}
	// Per worker: two pivot histograms per transform and a block's
	// estimates; per result: two histograms per cell, its few nodes, and
	// a copy of it all while a checkpoint is encoded; per block of the
	// grid, one byte marking it pending. None of it grows with the
	// replicates but the last, 10⁵ bytes per n at 10⁸ replicates.
	cells := int64(len(s.Transforms) * len(s.SampleSizes))
	hist := int64(2 * PivotBins * 8)
	e.MemoryBytes = int64(workers)*int64(len(s.Transforms))*(hist+BlockSize*8) +
		2*cells*(hist+maxNodes*64) + int64(len(s.SampleSizes))*int64(Blocks(s.Replicates))

	if e.Replicates == 0 {
		return e
	}
	// A replicate costs a fixed part (fit's tail, transforms, accumulators)
	// plus a part per draw; timing the smallest and the largest n
	// separates the two, so a grid of small n is not underestimated.
	small, large := s.SampleSizes[0], s.SampleSizes[len(s.SampleSizes)-1]
	dSmall, dLarge := float64(s.DrawsPerReplicate(small)), float64(s.DrawsPerReplicate(large))
	tLarge := calibrateReplicate(s, large, workers, calibrate/2)
	perDraw, fixed := tLarge/dLarge, 0.0
	if dLarge > dSmall {
		tSmall := calibrateReplicate(s, small, workers, calibrate/2)
		perDraw = max((tLarge-tSmall)/(dLarge-dSmall), 0)
		fixed = max(tSmall-perDraw*dSmall, 0)
	}
	var ns float64
	for ni, n := range s.SampleSizes {
		ns += float64(left[ni]) * (fixed + perDraw*float64(s.DrawsPerReplicate(n)))
	}
	// The calibration ran the workers side by side, so ns is wall time
	// already: what the cores, their shared caches and the machine's
	// other load give all workers at once, not one worker times workers.
	// A block adds its flush (two histograms a transform merged under the
	// lock, one worker at a time) to what its replicates cost.
	e.PerDrawNS = ns * float64(workers) / float64(e.Draws)
	e.Time = time.Duration(ns + float64(countBlocks(pending))*flushNS(s))
	return e
}

// countBlocks counts the pending blocks.
func countBlocks(pending [][]bool) int {
	c := 0
	for _, row := range pending {
		for _, p := range row {
			if p {
				c++
			}
		}
	}
	return c
}

// flushNS is the rough cost of merging one block into the result: two
// histograms of PivotBins counts per transform, at about a nanosecond a
// count (it runs one worker at a time, under the lock).
func flushNS(s *study.Study) float64 {
	return float64(len(s.Transforms) * 2 * PivotBins)
}

// calibrateReplicate times replicates at n on workers goroutines side by
// side for about d and returns the wall nanoseconds a replicate takes
// with all of them at work (its cost divided by the workers, where they
// scale).
func calibrateReplicate(s *study.Study, n, workers int, d time.Duration) float64 {
	one := *s
	one.SampleSizes = []int{n}
	res := NewResult(&one)
	var wg sync.WaitGroup
	var reps atomic.Int64
	start := time.Now()
	for range workers {
		w := newWorker(&one, res)
		// The calibration's numbers are thrown away; any stream will do.
		w.rng.Seed(rand.Uint64(), rand.Uint64())
		for a := range s.Arms {
			w.sizes[a] = s.ArmSize(a, n)
		}
		for t := range w.accs {
			p := w.res.Predictions[t][0]
			w.accs[t].truth, w.accs[t].sdDelta = p.Truth, math.Sqrt(p.DeltaVar)
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			for first := true; first || time.Since(start) < d; first = false {
				for i := 0; i < 16; i++ {
					w.replicate()
				}
				reps.Add(16)
			}
		}()
	}
	wg.Wait()
	return float64(time.Since(start).Nanoseconds()) / float64(reps.Load())
}
