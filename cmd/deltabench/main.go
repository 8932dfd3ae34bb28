// Command deltabench times runner.Run on the reference study against the
// floor: the plain loop a user would write by hand for the same study. It
// alternates the two in one process, one and two workers, prints
// nanoseconds per draw, their ratio and the scaling from one worker to
// two, and re-executes itself as child processes to measure peak memory at
// a small and a large number of replicates.
//
//	go run ./cmd/deltabench [-study FILE] [-rounds N] [-cli ./deltaprobe] [-o bench.txt]
//
// `make bench` runs it and appends the parts' benchmarks; DEVELOPERS.md
// explains the figures and keeps the measured ones.
package main

import (
	"bufio"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"time"

	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// The project's performance targets. The program reports against them but
// never fails on them: on a shared machine a target can be missed by bad
// luck, and the figures, not an exit status, are what to read.
const (
	maxRatio   = 1.25
	minScaling = 1.8
	maxRSSGrow = 1.10
)

func main() {
	studyPath := flag.String("study", "studies/bench_reference.toml", "the reference study: one normal arm, one transform k / mean")
	var cfg config
	flag.IntVar(&cfg.rounds, "rounds", 11, "timing rounds, each floor and sim at two workers and at one")
	out := flag.String("o", "", "also write the figures to this file")
	flag.IntVar(&cfg.small, "rss-small", 10_000, "replicates per n of the small memory run")
	flag.IntVar(&cfg.large, "rss-large", 1_000_000, "replicates per n of the large memory run")
	flag.StringVar(&cfg.cli, "cli", "", "a built deltaprobe binary: also measure the memory of `deltaprobe run` on the study")
	child := flag.Int("child", 0, "internal: run the study once with this many replicates per n and print its memory figures")
	flag.Parse()

	s, err := loadReference(*studyPath)
	if err != nil {
		fmt.Fprintln(os.Stderr, "deltabench:", err)
		os.Exit(2)
	}
	if *child > 0 {
		if err := runChild(s, *child); err != nil {
			fmt.Fprintln(os.Stderr, "deltabench:", err)
			os.Exit(1)
		}
		return
	}

	var report strings.Builder
	w := io.MultiWriter(os.Stdout, &report)
	cfg.path = *studyPath
	if err := bench(w, s, cfg); err != nil {
		fmt.Fprintln(os.Stderr, "deltabench:", err)
		os.Exit(1)
	}
	if *out != "" {
		// Write then rename, so an interrupted run leaves the last
		// complete file in place.
		tmp := *out + ".tmp"
		if err := os.WriteFile(tmp, []byte(report.String()), 0o644); err != nil {
			fmt.Fprintln(os.Stderr, "deltabench:", err)
			os.Exit(1)
		}
		if err := os.Rename(tmp, *out); err != nil {
			fmt.Fprintln(os.Stderr, "deltabench:", err)
			os.Exit(1)
		}
	}
}

// reference is what the floor needs to know of the study.
type reference struct {
	mean, sd float64 // the normal model
	k        float64 // the transform is k / mean
}

// loadReference loads the study and checks that it has the one shape the
// floor is written for, so the two can never time different work.
func loadReference(path string) (*study.Study, error) {
	s, err := study.Load(path)
	if err != nil {
		return nil, err
	}
	if _, err := floorModel(s); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return s, nil
}

func floorModel(s *study.Study) (reference, error) {
	if len(s.Arms) != 1 || s.Arms[0].Family != "normal" || s.Arms[0].Allocation != 1 {
		return reference{}, errors.New("the reference study must have one normal arm with allocation 1")
	}
	if len(s.Transforms) != 1 {
		return reference{}, errors.New("the reference study must have exactly one transform")
	}
	// The transform must be k / mean; read k by evaluating at mean = 1.
	t := s.Transforms[0]
	ev := t.Program.NewEvaluator()
	x := []float64{1, 1}
	k := ev.Value(x)
	for _, m := range []float64{0.5, 2, 7} {
		x[0] = m
		if got := ev.Value(x); math.Abs(got-k/m) > 1e-12*math.Abs(k/m) || t.Program.Uses(1) {
			return reference{}, fmt.Errorf("transform %q is not of the form k / mean", t.Expr)
		}
	}
	v := s.Arms[0].Values
	return reference{mean: v["mean"], sd: v["sd"], k: k}, nil
}

func draws(s *study.Study) int64 {
	var d int64
	for _, n := range s.SampleSizes {
		d += int64(s.Replicates) * int64(n)
	}
	return d
}

// floorChunk is the floor's unit of work. The floor hands out chunks of
// the same size as sim's blocks through an atomic counter, as a careful
// hand-written loop would, so that on a shared machine both adapt to a
// busy core in the same way.
const floorChunk = study.BlockSize

// floor is the hand-written loop the target is set against: for every
// sample size and replicate, draw n normals with math/rand/v2's PCG, sum
// them and their squares, form the reciprocal of the mean and its
// delta-method standard error from the sample sd (divisor n, as sim's
// estimator), and count the Wald intervals that cover the truth. It
// returns the covered count per sample size.
func floor(s *study.Study, ref reference, workers int) []int64 {
	z := math.Sqrt2 * math.Erfinv(s.Level)
	chunksPer := (s.Replicates + floorChunk - 1) / floorChunk
	total := chunksPer * len(s.SampleSizes)
	covered := make([]atomic.Int64, len(s.SampleSizes))
	var next atomic.Int64
	var wg sync.WaitGroup
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			st := new(floorState)
			pcg, rng := &st.pcg, &st.rng
			*rng = *rand.New(pcg)
			for {
				c := int(next.Add(1) - 1)
				if c >= total {
					return
				}
				// Largest n first, like sim, so neither ends on a long chunk.
				ni := len(s.SampleSizes) - 1 - c/chunksPer
				chunk := c % chunksPer
				n := s.SampleSizes[ni]
				pcg.Seed(s.Seed^uint64(n)<<32, uint64(chunk))
				count := min(floorChunk, s.Replicates-chunk*floorChunk)
				covered[ni].Add(floorReplicates(rng, ref, n, count, z))
			}
		}()
	}
	wg.Wait()
	out := make([]int64, len(covered))
	for i := range covered {
		out[i] = covered[i].Load()
	}
	return out
}

// floorState is one goroutine's generator, padded so that the two
// goroutines' generators, allocated at the same moment, cannot share a
// cache line: without it, each draw by one can invalidate the other's
// PCG state, and the floor would be slow for a reason no careful
// hand-written loop has.
type floorState struct {
	_   [128]byte
	pcg rand.PCG
	rng rand.Rand
	_   [128]byte
}

// floorReplicates runs count replicates at sample size n and returns how
// many intervals covered. It draws standard normals and scales the two
// sums once, as sim's normal family does: the fastest honest way to write
// it.
func floorReplicates(rng *rand.Rand, ref reference, n, count int, z float64) int64 {
	truth := ref.k / ref.mean
	fn := float64(n)
	rootN := math.Sqrt(fn)
	var covered int64
	for range count {
		s1, s2 := sumNormals(rng, n)
		mean := ref.mean + ref.sd*s1/fn
		sd := ref.sd * math.Sqrt(max(s2-s1*s1/fn, 0)/fn)
		tau := ref.k / mean
		se := math.Abs(tau/mean) * sd / rootN // |dτ/dμ| = |k|/μ²
		if math.Abs(tau-truth) <= z*se {
			covered++
		}
	}
	return covered
}

// timing is one timed run: wall and CPU nanoseconds per draw. The wall
// figure is the one that counts; the CPU figure (this process's user and
// system time) leaves out time spent waiting for a CPU, so when the two
// ratios part, other processes were in the way.
type timing struct {
	nsPerDraw, cpuNsPerDraw float64
	covered                 []int64
}

func timed(s *study.Study, run func() ([]int64, error)) (timing, error) {
	runtime.GC()
	cpu0 := cpuTime()
	start := time.Now()
	cov, err := run()
	el := time.Since(start)
	cpu := cpuTime() - cpu0
	d := float64(draws(s))
	return timing{float64(el.Nanoseconds()) / d, float64(cpu.Nanoseconds()) / d, cov}, err
}

func timeFloor(s *study.Study, ref reference, workers int) timing {
	t, _ := timed(s, func() ([]int64, error) { return floor(s, ref, workers), nil })
	return t
}

func timeSim(s *study.Study, workers int) (timing, error) {
	return timed(s, func() ([]int64, error) {
		res, err := runner.Run(context.Background(), s, runner.Options{Workers: workers})
		if err != nil {
			return nil, err
		}
		var cov []int64
		for _, c := range res.Cells[0] {
			cov = append(cov, c.Covered)
		}
		return cov, nil
	})
}

// cpuTime is the user and system time this process has used.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// machineBusy reads the busy time of all CPUs from /proc/stat, so that the
// share used by other processes during the timings can be reported, and
// the steal time, the share the hypervisor gave to other machines.
func machineBusy() (busy, steal time.Duration, ok bool) {
	b, err := os.ReadFile("/proc/stat")
	if err != nil {
		return 0, 0, false
	}
	line, _, _ := strings.Cut(string(b), "\n")
	f := strings.Fields(line)
	if len(f) < 9 || f[0] != "cpu" {
		return 0, 0, false
	}
	// user nice system idle iowait irq softirq steal, in USER_HZ ticks
	// (100 a second on every Linux the project runs on).
	var t [8]int64
	for i := range t {
		if t[i], err = strconv.ParseInt(f[i+1], 10, 64); err != nil {
			return 0, 0, false
		}
	}
	const tick = 10 * time.Millisecond
	return time.Duration(t[0]+t[1]+t[2]+t[5]+t[6]) * tick, time.Duration(t[7]) * tick, true
}

func median(x []float64) float64 {
	y := slices.Clone(x)
	slices.Sort(y)
	m := len(y) / 2
	if len(y)%2 == 1 {
		return y[m]
	}
	return (y[m-1] + y[m]) / 2
}

func list(x []float64, format string) string {
	parts := make([]string, len(x))
	for i, v := range x {
		parts[i] = fmt.Sprintf(format, v)
	}
	return strings.Join(parts, " ")
}

// config is what the command line asks of one benchmark run.
type config struct {
	path         string // the study file
	rounds       int
	small, large int    // replicates per n of the two memory runs
	cli          string // deltaprobe binary, or "" to skip its memory runs
}

func bench(w io.Writer, s *study.Study, cfg config) error {
	path, rounds := cfg.path, cfg.rounds
	ref, _ := floorModel(s)
	fmt.Fprintf(w, "# deltabench: runner.Run against the hand-written floor loop, same process\n")
	fmt.Fprintf(w, "date: %s\n", time.Now().Format(time.RFC3339))
	fmt.Fprintf(w, "machine: %s/%s, %d CPUs, %s, GOMAXPROCS %d\n", runtime.GOOS, runtime.GOARCH, runtime.NumCPU(), cpuModel(), runtime.GOMAXPROCS(0))
	fmt.Fprintf(w, "go: %s\n", runtime.Version())
	fmt.Fprintf(w, "load_average_start: %s\n", loadAverage())
	fmt.Fprintf(w, "study: %s (%d replicates per n, n = %v, %d draws per run)\n", path, s.Replicates, s.SampleSizes, draws(s))
	fmt.Fprintf(w, "rounds: %d, each floor and sim at 2 and 1 workers in a turning order; ratios and scaling are medians over rounds\n", rounds)

	// One untimed run of each, so neither pays for first-touch page
	// faults or a cold cache in the timings.
	warm := *s
	warm.Replicates = min(s.Replicates, 10*study.BlockSize)
	floor(&warm, ref, 2)
	if _, err := runner.Run(context.Background(), &warm, runner.Options{Workers: 2}); err != nil {
		return err
	}

	busy0, steal0, busyOK := machineBusy()
	cpu0, wall0 := cpuTime(), time.Now()
	// Rounds of four runs, floor and sim at two workers and at one, so a
	// slow spell of the machine falls on all four alike; the order turns
	// round by round so that neither program always runs first.
	type series struct{ floor, sim, ratio, cpuRatio []float64 }
	by := map[int]*series{2: {}, 1: {}}
	var simScaling, floorScaling []float64
	var coverFloor, coverSim []int64
	orders := [][4]int{{0, 1, 2, 3}, {3, 2, 1, 0}, {1, 0, 3, 2}, {2, 3, 0, 1}}
	for r := range rounds {
		var got [4]timing // floor 2, sim 2, floor 1, sim 1
		for _, k := range orders[r%len(orders)] {
			workers := 2 - k/2
			if k%2 == 0 {
				got[k] = timeFloor(s, ref, workers)
				continue
			}
			m, err := timeSim(s, workers)
			if err != nil {
				return err
			}
			got[k] = m
		}
		for k, workers := range []int{2, 1} {
			f, m := got[2*k], got[2*k+1]
			b := by[workers]
			b.floor = append(b.floor, f.nsPerDraw)
			b.sim = append(b.sim, m.nsPerDraw)
			b.ratio = append(b.ratio, m.nsPerDraw/f.nsPerDraw)
			b.cpuRatio = append(b.cpuRatio, m.cpuNsPerDraw/f.cpuNsPerDraw)
		}
		simScaling = append(simScaling, got[3].nsPerDraw/got[1].nsPerDraw)
		floorScaling = append(floorScaling, got[2].nsPerDraw/got[0].nsPerDraw)
		coverFloor, coverSim = got[0].covered, got[1].covered
	}
	for _, workers := range []int{2, 1} {
		b := by[workers]
		fmt.Fprintf(w, "workers=%d floor_ns_per_draw: median %.3f (runs %s)\n", workers, median(b.floor), list(b.floor, "%.3f"))
		fmt.Fprintf(w, "workers=%d sim_ns_per_draw: median %.3f (runs %s)\n", workers, median(b.sim), list(b.sim, "%.3f"))
		fmt.Fprintf(w, "workers=%d ratio_sim_to_floor: median %.3f (pairs %s)\n", workers, median(b.ratio), list(b.ratio, "%.3f"))
		fmt.Fprintf(w, "workers=%d cpu_ratio_sim_to_floor: median %.3f (pairs %s)\n", workers, median(b.cpuRatio), list(b.cpuRatio, "%.3f"))
	}
	if busy1, steal1, ok := machineBusy(); ok && busyOK {
		all := time.Since(wall0).Seconds() * float64(runtime.NumCPU())
		foreign := (busy1 - busy0 - (cpuTime() - cpu0)).Seconds() / all
		fmt.Fprintf(w, "other_processes_cpu_share: %.3f (of all CPUs, during the timings; steal %.3f)\n", max(foreign, 0), (steal1-steal0).Seconds()/all)
	}
	ratio2, ratio1 := median(by[2].ratio), median(by[1].ratio)
	scaling := median(simScaling)
	fmt.Fprintf(w, "scaling_sim_1_to_2_workers: median %.3f (rounds %s)\n", scaling, list(simScaling, "%.3f"))
	fmt.Fprintf(w, "scaling_floor_1_to_2_workers: median %.3f (rounds %s)\n", median(floorScaling), list(floorScaling, "%.3f"))

	// The floor and sim must be doing the same statistics: their coverage
	// agrees to Monte Carlo error (the streams differ, so not exactly).
	var cf, cs []float64
	for i := range coverFloor {
		cf = append(cf, float64(coverFloor[i])/float64(s.Replicates))
		cs = append(cs, float64(coverSim[i])/float64(s.Replicates))
	}
	fmt.Fprintf(w, "coverage_floor_by_n: %s\n", list(cf, "%.4f"))
	fmt.Fprintf(w, "coverage_sim_by_n: %s\n", list(cs, "%.4f"))

	// Allocations: the mallocs of a whole runner.Run, at the study's
	// replicates and at a tenth of them. What a replicate costs is the
	// growth of the count with the replicates, not the count over them,
	// which is mostly setup.
	var mallocs [2]uint64
	tenth := *s
	tenth.Replicates = max(s.Replicates/10, study.MinReplicates)
	for i, st := range []*study.Study{&tenth, s} {
		var before, after runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&before)
		if _, err := runner.Run(context.Background(), st, runner.Options{Workers: 2}); err != nil {
			return err
		}
		runtime.ReadMemStats(&after)
		mallocs[i] = after.Mallocs - before.Mallocs
	}
	dReps := float64(s.Replicates-tenth.Replicates) * float64(len(s.SampleSizes))
	perRep := max(float64(mallocs[1])-float64(mallocs[0]), 0) / dReps
	fmt.Fprintf(w, "allocs_per_replicate: %.6f (runner.Run at 2 workers: %d mallocs at %d replicates per n, %d at %d; the replicate itself: see BenchmarkReplicate)\n",
		perRep, mallocs[0], tenth.Replicates, mallocs[1], s.Replicates)

	// Memory: a fresh process per size, so each peak is its own. The
	// strict figure is runner.Run alone in a small process; `deltaprobe run`
	// (with -cli) adds the report, as users run it.
	mem := map[int]childFigures{}
	for _, r := range []int{cfg.small, cfg.large} {
		f, err := spawnChild(path, r)
		if err != nil {
			return err
		}
		mem[r] = f
		fmt.Fprintf(w, "sim_run replicates=%d peak_rss_kib: %d peak_heap_kib: %d\n", r, f.rssKiB, f.heapKiB)
	}
	rssRatio := float64(mem[cfg.large].rssKiB) / float64(mem[cfg.small].rssKiB)
	fmt.Fprintf(w, "sim_run rss_ratio_large_to_small: %.3f\n", rssRatio)
	cliRatio := math.NaN()
	if cfg.cli != "" {
		// The report's figures dominate this process's peak, and the
		// collector's pacing while they render moves it by several MiB
		// from run to run at any replicate count; so take medians of five.
		var kib [2]int64
		for i, r := range []int{cfg.small, cfg.large} {
			var runs []int64
			for range 5 {
				k, err := cliPeakRSS(cfg.cli, path, r)
				if err != nil {
					return err
				}
				runs = append(runs, k)
			}
			slices.Sort(runs)
			kib[i] = runs[len(runs)/2]
			fmt.Fprintf(w, "deltaprobe_run replicates=%d peak_rss_kib: median %d (runs %v)\n", r, kib[i], runs)
		}
		cliRatio = float64(kib[1]) / float64(kib[0])
		fmt.Fprintf(w, "deltaprobe_run rss_ratio_large_to_small: %.3f\n", cliRatio)
	}
	fmt.Fprintf(w, "load_average_end: %s\n", loadAverage())

	check := func(ok bool) string {
		if ok {
			return "met"
		}
		return "NOT met"
	}
	fmt.Fprintf(w, "target ratio<=%.2f (2 workers): %s\n", maxRatio, check(ratio2 <= maxRatio))
	fmt.Fprintf(w, "target ratio<=%.2f (1 worker): %s\n", maxRatio, check(ratio1 <= maxRatio))
	fmt.Fprintf(w, "target scaling>=%.1f: %s\n", minScaling, check(scaling >= minScaling))
	// A malloc per block would be 0.001 a replicate; what may remain below
	// that is bookkeeping that grows with the logarithm of the blocks.
	fmt.Fprintf(w, "target allocs_per_replicate<0.0001 (none per replicate, none per block): %s\n", check(perRep < 1e-4))
	fmt.Fprintf(w, "target rss_ratio<=%.2f (runner.Run alone): %s\n", maxRSSGrow, check(rssRatio <= maxRSSGrow))
	if !math.IsNaN(cliRatio) {
		fmt.Fprintf(w, "target rss_ratio<=%.2f (deltaprobe run): %s\n", maxRSSGrow, check(cliRatio <= maxRSSGrow))
	}
	return nil
}

// cliPeakRSS runs `deltaprobe run` on the study with the given replicates
// into a temporary directory and returns the child's peak RSS.
func cliPeakRSS(cli, path string, replicates int) (int64, error) {
	dir, err := os.MkdirTemp("", "deltabench-")
	if err != nil {
		return 0, err
	}
	defer os.RemoveAll(dir)
	cmd := exec.Command(cli, "run", path, "-replicates", strconv.Itoa(replicates), "-o", filepath.Join(dir, "out"), "-quiet")
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		return 0, fmt.Errorf("%s run with %d replicates: %w", cli, replicates, err)
	}
	ru, ok := cmd.ProcessState.SysUsage().(*syscall.Rusage)
	if !ok {
		return 0, errors.New("no resource usage for the deltaprobe child")
	}
	return ru.Maxrss, nil // KiB on Linux
}

// childFigures are what a memory child reports.
type childFigures struct{ rssKiB, heapKiB int64 }

func spawnChild(path string, replicates int) (childFigures, error) {
	self, err := os.Executable()
	if err != nil {
		return childFigures{}, err
	}
	cmd := exec.Command(self, "-study", path, "-child", strconv.Itoa(replicates))
	cmd.Stderr = os.Stderr
	outb, err := cmd.Output()
	if err != nil {
		return childFigures{}, fmt.Errorf("memory run with %d replicates: %w", replicates, err)
	}
	var f childFigures
	if _, err := fmt.Sscanf(string(outb), "%d %d", &f.rssKiB, &f.heapKiB); err != nil {
		return childFigures{}, fmt.Errorf("memory run with %d replicates printed %q: %w", replicates, outb, err)
	}
	return f, nil
}

// runChild runs the study once with the given replicates and prints its
// peak RSS and peak heap in KiB.
func runChild(s *study.Study, replicates int) error {
	s.Replicates = replicates
	stop := make(chan struct{})
	peak := make(chan int64)
	// The heap is sampled from runtime/metrics, which does not stop the
	// world, every few milliseconds; the peak between samples can only be
	// missed by a short-lived spike, which the RSS figure still catches.
	go func() {
		sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		var top int64
		t := time.NewTicker(2 * time.Millisecond)
		defer t.Stop()
		for {
			metrics.Read(sample)
			top = max(top, int64(sample[0].Value.Uint64()))
			select {
			case <-stop:
				peak <- top
				return
			case <-t.C:
			}
		}
	}()
	_, err := runner.Run(context.Background(), s, runner.Options{})
	close(stop)
	heap := <-peak
	if err != nil {
		return err
	}
	fmt.Printf("%d %d\n", peakRSSKiB(), heap/1024)
	return nil
}

// peakRSSKiB reads VmHWM, the resident set's high-water mark, falling back
// to getrusage's ru_maxrss (KiB on Linux).
func peakRSSKiB() int64 {
	if f, err := os.Open("/proc/self/status"); err == nil {
		defer f.Close()
		sc := bufio.NewScanner(f)
		for sc.Scan() {
			if rest, ok := strings.CutPrefix(sc.Text(), "VmHWM:"); ok {
				if v, err := strconv.ParseInt(strings.Fields(rest)[0], 10, 64); err == nil {
					return v
				}
			}
		}
	}
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err == nil {
		return ru.Maxrss
	}
	return -1
}

func cpuModel() string {
	b, err := os.ReadFile("/proc/cpuinfo")
	if err != nil {
		return "unknown CPU"
	}
	for _, line := range strings.Split(string(b), "\n") {
		if k, v, ok := strings.Cut(line, ":"); ok && strings.TrimSpace(k) == "model name" {
			return strings.TrimSpace(v)
		}
	}
	return "unknown CPU"
}

func loadAverage() string {
	b, err := os.ReadFile("/proc/loadavg")
	if err != nil {
		return "unknown"
	}
	f := strings.Fields(string(b))
	if len(f) < 3 {
		return "unknown"
	}
	return strings.Join(f[:3], " ")
}

// sumNormals draws n standard normals and returns their sum and sum of
// squares. The draw loop is a function of its own, as the normal
// sampler's is (sumStdNormals in sim/family/normal.go), because every register is caller-saved in Go's calling convention:
// inside the replicate loop, each draw would reload that loop's dozen live
// values after the call. (The compiler would inline it back, hence the
// directive.)
//
//go:noinline
func sumNormals(rng *rand.Rand, n int) (s1, s2 float64) {
	for range n {
		x := rng.NormFloat64()
		s1 += x
		s2 += x * x
	}
	return s1, s2
}
