package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"time"

	"deltaprobe/report"
	"deltaprobe/sim/family"
	"deltaprobe/sim/plan"
	"deltaprobe/sim/regress"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study"
)

// Exit statuses.
const (
	exitOK          = 0
	exitFailure     = 1
	exitUsage       = 2
	exitInterrupted = 130
)

const usage = `deltaprobe checks whether the delta-method approximation holds at your n.

usage:
  deltaprobe run STUDY.toml [-o DIR] [-workers N] [-replicates R] [-seed S] [-force] [-quiet]
                            [-dry-run] [-checkpoint 5s] [-shard K/N | -shard auto [-shards N]]
                            [-figures png,svg,pdf]
                                    simulate the study's grid of sample sizes
  deltaprobe run -resume DIR [-figures png,svg,pdf]
                                    continue an interrupted run (or shard)
  deltaprobe merge -o DIR [-partial] [-force] [-figures png,svg,pdf] PART...
                                    merge shards' result.json files (or their folders)
  deltaprobe plan STUDY.toml [-o DIR] [-budget R] [-workers N] [-seed S] [-force] [-quiet]
                             [-figures png,svg,pdf]
                                    search for the smallest adequate n ([plan] table)
  deltaprobe plan -resume DIR [-workers N] [-quiet] [-figures png,svg,pdf]
                                    continue an interrupted plan
  deltaprobe predict STUDY.toml     delta-method predictions per n, no simulation
                                    (a study with only a [plan]: over its range)
  deltaprobe report DIR [-figures png,svg,pdf]
                                    rewrite the tables, figures and page of a run folder
                                    (DIR/result.json) or a plan folder (DIR/plan.json)

-figures writes each figure as PNG (the default), SVG and/or PDF, e.g. -figures png,pdf.
  deltaprobe families               the families: parameters, estimators, which data each fit accepts
  deltaprobe version

Run "deltaprobe COMMAND -h" for a command's flags.
`

// run is the whole command, taking its arguments and writers so that tests
// drive it in-process.
func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return exitUsage
	}
	switch args[0] {
	case "run":
		return cmdRun(args[1:], stdout, stderr)
	case "predict":
		return cmdPredict(args[1:], stdout, stderr)
	case "plan":
		return cmdPlan(args[1:], stdout, stderr)
	case "families":
		return cmdFamilies(args[1:], stdout, stderr)
	case "report":
		return cmdReport(args[1:], stdout, stderr)
	case "merge":
		return cmdMerge(args[1:], stdout, stderr)
	case "version":
		fmt.Fprintln(stdout, "deltaprobe", runner.Version)
		return exitOK
	case "help", "-h", "-help", "--help":
		fmt.Fprint(stdout, usage)
		return exitOK
	}
	fmt.Fprintf(stderr, "deltaprobe: unknown command %q; accepted: run, plan, merge, predict, report, families, version\n", args[0])
	return exitUsage
}

// parseInterspersed parses flags that may come before or after the
// positional arguments: Go's flag package stops at the first
// non-flag, so parse again after each one.
func parseInterspersed(fs *flag.FlagSet, args []string) ([]string, error) {
	var positional []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return positional, nil
		}
		if rest[0] == "--" {
			return append(positional, rest[1:]...), nil
		}
		positional = append(positional, rest[0])
		args = rest[1:]
	}
}

func newFlagSet(name, synopsis string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintf(stderr, "usage: deltaprobe %s\n", synopsis)
		fs.PrintDefaults()
	}
	return fs
}

// loadStudy loads one study file named as the only positional argument.
func loadStudy(cmd string, positional []string, stderr io.Writer) (*study.Study, int) {
	if len(positional) != 1 {
		fmt.Fprintf(stderr, "deltaprobe %s: give exactly one study file (got %d arguments)\n", cmd, len(positional))
		return nil, exitUsage
	}
	s, err := study.Load(positional[0])
	if err != nil {
		fmt.Fprintln(stderr, err)
		return nil, exitUsage
	}
	return s, exitOK
}

// Limits above which run refuses a study unless -force is given.
const (
	maxEstimatedTime = time.Hour
	checkpointEvery  = 5 * time.Second
)

func cmdRun(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet("run", "run STUDY.toml [flags] | run -resume DIR [flags]", stderr)
	out := fs.String("o", "", "output folder (default out/<study name>)")
	workers := fs.Int("workers", 0, "worker goroutines (default: all cores)")
	replicates := fs.Int("replicates", 0, "replicates per sample size, overriding the study file's")
	var seed seedFlag
	fs.Var(&seed, "seed", "seed `S` ≥ 0, overriding the study file's seed (default: the file's)")
	force := fs.Bool("force", false, "write into a non-empty output folder, removing what an earlier run or plan wrote there; run past the time and memory limits")
	quiet := fs.Bool("quiet", false, "no progress on stderr")
	resume := fs.String("resume", "", "continue the interrupted run saved in this folder")
	dryRun := fs.Bool("dry-run", false, "print the work estimate and stop")
	every := fs.Duration("checkpoint", checkpointEvery, "save the state this often while running")
	shardFlag := fs.String("shard", "", "run only shard K/N of the blocks (0 ≤ K < N), or auto from the job array's environment")
	shards := fs.Int("shards", 0, "with -shard auto under an indexed job: the number of shards")
	figures := addFiguresFlag(fs)
	positional, err := parseInterspersed(fs, args)
	if err != nil {
		return flagErr(err)
	}
	if *workers < 0 {
		fmt.Fprintf(stderr, "deltaprobe run: -workers %d is out of range: give 1 or more (0 means all cores)\n", *workers)
		return exitUsage
	}
	given := givenFlags(fs)
	if given["replicates"] && *replicates == 0 {
		fmt.Fprintf(stderr, "deltaprobe run: -replicates 0 is out of range: accepted are %d to %d\n", study.MinReplicates, study.MaxReplicates)
		return exitUsage
	}
	if code := seed.check("run", stderr); code != exitOK {
		return code
	}
	var (
		s   *study.Study
		res *runner.Result
		dir string
	)
	if *resume != "" && *shardFlag != "" {
		fmt.Fprintln(stderr, "deltaprobe run: -resume continues the shard it was started with; it takes no -shard")
		return exitUsage
	}
	if *resume != "" {
		var code int
		if s, res, code = loadForResume(*resume, positional, *replicates != 0 || seed.set || *out != "", stderr); s == nil {
			return code
		}
		dir = *resume
		removeStaleTemps(dir)
	} else {
		var code int
		if s, code = loadStudy("run", positional, stderr); s == nil {
			return code
		}
		if code := applyOverrides(s, *replicates, seed, stderr); code != exitOK {
			return code
		}
		if len(s.SampleSizes) == 0 {
			fmt.Fprintf(stderr, "%s: the study has a [plan] but no sample_sizes; use deltaprobe plan, or add sample_sizes to run a grid\n", s.File)
			return exitUsage
		}
		dir = *out
		if dir == "" {
			dir = filepath.Join("out", strings.TrimSuffix(filepath.Base(s.File), filepath.Ext(s.File)))
		}
		if err := checkOutDir(dir, *force); err != nil {
			fmt.Fprintf(stderr, "deltaprobe run: %v\n", err)
			return exitUsage
		}
		res = runner.NewResult(s)
		if *shardFlag != "" {
			sh, err := parseShard(*shardFlag, *shards, os.Getenv)
			if err != nil {
				fmt.Fprintf(stderr, "deltaprobe run: %v\n", err)
				return exitUsage
			}
			if most := runner.MaxShards(s.Replicates); sh.Count > most {
				fmt.Fprintf(stderr, "deltaprobe run: -shard %s: %d replicates per n make %d blocks of %d, and a shard owns whole blocks; use at most %d shards\n", sh, s.Replicates, most, runner.BlockSize, most)
				return exitUsage
			}
			res.Shard = &sh
		}
	}

	est := runner.EstimateWork(s, res, *workers, 50*time.Millisecond)
	if *dryRun || !*quiet {
		printEstimate(stderr, est, *workers, *resume != "")
	}
	if *dryRun {
		return exitOK
	}
	if limit := halfMemory(); !*force && (est.Time > maxEstimatedTime || (limit > 0 && est.MemoryBytes+reportMemory > limit)) {
		fmt.Fprintf(stderr, "deltaprobe run: the estimate exceeds the limits (%s, half the memory); reduce replicates or sample sizes, or add -force\n", maxEstimatedTime)
		return exitUsage
	}

	if *resume == "" && *force {
		if code := clearOutDir("run", dir, *quiet, stderr); code != exitOK {
			return code
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		fmt.Fprintf(stderr, "deltaprobe run: creating output folder: %v\n", err)
		return exitFailure
	}
	resultPath := filepath.Join(dir, "result.json")
	if err := runner.SaveResult(resultPath, res); err != nil {
		fmt.Fprintf(stderr, "deltaprobe run: %v\n", err)
		return exitFailure
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	opt := runner.Options{
		Workers:         *workers,
		Checkpoint:      func(r *runner.Result) error { return runner.SaveResult(resultPath, r) },
		CheckpointEvery: *every,
	}
	if !*quiet {
		opt.Progress = progressPrinter(stderr)
	}
	runErr := runner.RunBlocks(ctx, s, res, nil, opt)
	if !*quiet {
		fmt.Fprintln(stderr)
	}
	if err := runner.SaveResult(resultPath, res); err != nil {
		fmt.Fprintf(stderr, "deltaprobe run: %v\n", err)
		return exitFailure
	}
	switch {
	case errors.Is(runErr, context.Canceled):
		fmt.Fprintf(stderr, "deltaprobe run: interrupted; the finished blocks are saved in %s; continue with: deltaprobe run -resume %s\n", resultPath, dir)
		return exitInterrupted
	case runErr != nil:
		fmt.Fprintf(stderr, "deltaprobe run: %v\n", runErr)
		return exitFailure
	}
	if res.Shard != nil {
		fmt.Fprintf(stderr, "shard %s done: its blocks are in %s; merge every shard with deltaprobe merge\n", res.Shard, resultPath)
		return exitOK
	}
	if err := report.Write(dir, res, *figures...); err != nil {
		fmt.Fprintf(stderr, "deltaprobe run: %v\n", err)
		return exitFailure
	}
	report.VerdictTable(stdout, res)
	// Elapsed is the simulation's wall-clock time, summed over resumed
	// sessions; writing the report is not in it.
	fmt.Fprintf(stderr, "simulated in %s; wrote %s (summary.csv, verdicts.csv, result.json, figures, index.html)\n", seconds(res.Elapsed), dir)
	return exitOK
}

// givenFlags names the flags that were set on the command line, so a
// value equal to a flag's "not given" default is still checked.
func givenFlags(fs *flag.FlagSet) map[string]bool {
	given := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { given[f.Name] = true })
	return given
}

func applyOverrides(s *study.Study, replicates int, seed seedFlag, stderr io.Writer) int {
	if replicates != 0 {
		if replicates < study.MinReplicates || replicates > study.MaxReplicates {
			fmt.Fprintf(stderr, "deltaprobe run: -replicates %d is out of range: accepted are %d to %d\n", replicates, study.MinReplicates, study.MaxReplicates)
			return exitUsage
		}
		s.Replicates = replicates
	}
	if code := seed.check("run", stderr); code != exitOK {
		return code
	}
	seed.apply(s)
	return exitOK
}

// seedFlag is -seed: unset unless given, so that the help shows no
// default (the study file's seed is the default), and checked after
// parsing so that a negative seed gets the same message as other
// out-of-range values.
type seedFlag struct {
	seed int64
	set  bool
}

func (f *seedFlag) String() string {
	if f == nil || !f.set {
		return ""
	}
	return strconv.FormatInt(f.seed, 10)
}

func (f *seedFlag) Set(v string) error {
	n, err := strconv.ParseInt(v, 0, 64)
	if err != nil {
		if errors.Is(err, strconv.ErrRange) {
			return errors.New("value out of range")
		}
		return errors.New("parse error")
	}
	f.seed, f.set = n, true
	return nil
}

// check refuses a negative seed.
func (f seedFlag) check(cmd string, stderr io.Writer) int {
	if f.set && f.seed < 0 {
		fmt.Fprintf(stderr, "deltaprobe %s: -seed %d is out of range: accepted are whole numbers ≥ 0\n", cmd, f.seed)
		return exitUsage
	}
	return exitOK
}

// apply puts a given seed into the study.
func (f seedFlag) apply(s *study.Study) {
	if f.set {
		s.Seed = uint64(f.seed)
	}
}

// loadForResume reads DIR/result.json and the study it was run from; a
// study file named beside -resume must be the same file.
func loadForResume(dir string, positional []string, overrides bool, stderr io.Writer) (*study.Study, *runner.Result, int) {
	if overrides {
		fmt.Fprintln(stderr, "deltaprobe run: -resume continues a run as it was started; it takes no -o, -replicates or -seed")
		return nil, nil, exitUsage
	}
	if len(positional) > 1 {
		fmt.Fprintf(stderr, "deltaprobe run: -resume takes at most one study file (got %d arguments)\n", len(positional))
		return nil, nil, exitUsage
	}
	res, err := runner.LoadResult(filepath.Join(dir, "result.json"))
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe run: cannot resume: %v\n", err)
		return nil, nil, exitUsage
	}
	s, err := runner.ResumeStudy(res)
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe run: cannot resume %s: %v\n", dir, err)
		return nil, nil, exitUsage
	}
	if code := sameStudy("run", dir, res.Study, positional, stderr); code != exitOK {
		return nil, nil, code
	}
	if res.Complete {
		fmt.Fprintf(stderr, "deltaprobe run: %s is already complete; nothing left to simulate\n", dir)
	}
	return s, res, exitOK
}

// removeStaleTemps deletes temporary files a hard kill left behind.
func removeStaleTemps(dir string) {
	matches, _ := filepath.Glob(filepath.Join(dir, ".*.tmp*"))
	for _, m := range matches {
		os.Remove(m)
	}
}

// reportMemory is what the report adds to a run's peak memory: the
// figures are drawn on 1600-pixel RGBA canvases, two at a time (measured
// 2026-12-01: `deltaprobe run` peaks near 49 MiB on the reference study,
// of which the simulation is under 5 MiB).
const reportMemory = 48 << 20

// printEstimate prints the work estimate; a resumed run's is of the work
// left.
func printEstimate(w io.Writer, e runner.Estimate, workers int, resumed bool) {
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	label := "work"
	if resumed {
		label = "work left"
	}
	fmt.Fprintf(w, "%s: %d replicates, %.3g draws; about %.1f ns a draw here, so about %s with %d workers; memory about %.0f MiB\n",
		label, e.Replicates, float64(e.Draws), e.PerDrawNS, roughDuration(e.Time), workers, float64(e.MemoryBytes+reportMemory)/(1<<20))
}

// roughDuration rounds an estimate to what it can claim.
func roughDuration(d time.Duration) string {
	switch {
	case d < time.Second:
		return d.Round(10 * time.Millisecond).String()
	case d < time.Minute:
		return d.Round(100 * time.Millisecond).String()
	}
	return d.Round(time.Second).String()
}

// halfMemory is half the machine's memory as /proc/meminfo reports it, or
// 0 where that cannot be read.
func halfMemory() int64 {
	b, err := os.ReadFile("/proc/meminfo")
	if err != nil {
		return 0
	}
	for _, line := range strings.Split(string(b), "\n") {
		var kb int64
		if _, err := fmt.Sscanf(line, "MemTotal: %d kB", &kb); err == nil {
			return kb * 1024 / 2
		}
	}
	return 0
}

func flagErr(err error) int {
	if errors.Is(err, flag.ErrHelp) {
		return exitOK
	}
	return exitUsage
}

// checkOutDir refuses to write into a folder that already holds files,
// unless forced, so an earlier run is never overwritten by accident.
func checkOutDir(dir string, force bool) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
		return nil
	case err != nil:
		st, statErr := os.Stat(dir)
		if statErr == nil && !st.IsDir() {
			return fmt.Errorf("output path %s exists and is not a folder", dir)
		}
		return fmt.Errorf("reading output folder: %w", err)
	case len(entries) > 0 && !force:
		return fmt.Errorf("output folder %s is not empty; choose another with -o, or add -force to overwrite", dir)
	}
	return nil
}

// clearOutDir removes the files an earlier run, plan or merge left in
// dir (report.RemoveOutputs), and nothing else, before a forced command
// writes there: no stale figure of another transform or format is left
// beside the new results. Unless quiet, it says what it removed.
func clearOutDir(cmd, dir string, quiet bool, stderr io.Writer) int {
	removed, err := report.RemoveOutputs(dir)
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe %s: %v\n", cmd, err)
		return exitFailure
	}
	if len(removed) > 0 && !quiet {
		fmt.Fprintf(stderr, "-force: removed %d files an earlier deltaprobe run or plan left in %s\n", len(removed), dir)
	}
	return exitOK
}

// progressPrinter reports progress at most a few times a second.
func progressPrinter(w io.Writer) func(done, total int64) {
	var last time.Time
	start := time.Now()
	return func(done, total int64) {
		now := time.Now()
		if done < total && now.Sub(last) < 250*time.Millisecond {
			return
		}
		last = now
		fmt.Fprintf(w, "\rsimulating: %5.1f%% of %.3g draws, %s", 100*float64(done)/float64(total), float64(total), now.Sub(start).Round(100*time.Millisecond))
	}
}

func cmdPredict(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet("predict", "predict STUDY.toml", stderr)
	positional, err := parseInterspersed(fs, args)
	if err != nil {
		return flagErr(err)
	}
	s, code := loadStudy("predict", positional, stderr)
	if s == nil {
		return code
	}
	if len(s.SampleSizes) == 0 {
		if s.Plan == nil {
			fmt.Fprintf(stderr, "%s: predict needs sample_sizes, or a [plan] table whose range it can cover\n", s.File)
			return exitUsage
		}
		s.SampleSizes = s.Plan.Grid()
		fmt.Fprintf(stderr, "%s gives no sample_sizes: predicting over its [plan] range, n_min = %d doubling up to n_max = %d\n", s.File, s.Plan.NMin, s.Plan.NMax)
	}
	report.PredictTable(stdout, runner.NewResult(s))
	return exitOK
}

func cmdFamilies(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet("families", "families", stderr)
	positional, err := parseInterspersed(fs, args)
	if err != nil {
		return flagErr(err)
	}
	if len(positional) > 0 {
		fmt.Fprintf(stderr, "deltaprobe families: takes no arguments (got %q)\n", positional)
		return exitUsage
	}
	for _, f := range family.All() {
		fmt.Fprintf(stdout, "%s — %s\n", f.Name, f.Summary)
		for _, p := range f.Params {
			fmt.Fprintf(stdout, "    %-10s %s\n", p.Name, p.Accepts)
		}
		fmt.Fprintf(stdout, "    data:      %s\n", f.Support)
		if !f.Fittable() {
			fmt.Fprintf(stdout, "    fit:       data only, cannot be fitted; fit it with %s\n\n", strings.Join(f.FitsFor(), " or "))
			continue
		}
		fmt.Fprintf(stdout, "    estimates: %s\n", strings.Join(f.Estimates, ", "))
		fmt.Fprintf(stdout, "    estimator: %s\n", f.Estimator)
		fmt.Fprintf(stdout, "    fits data: %s\n", strings.Join(f.FitsData(), ", "))
		variances := "model (inverse observed information)"
		if f.Robust() {
			variances += ", robust (sandwich)"
		}
		fmt.Fprintf(stdout, "    variance:  %s\n", variances)
		if f.Censor != nil {
			fmt.Fprintf(stdout, "    censoring: [model.censoring] or [arm.censoring]: entry (uniform entry over [0, entry]),\n")
			fmt.Fprintf(stdout, "               end (calendar end of study), dropout_rate (exponential loss to follow-up)\n")
			fmt.Fprintf(stdout, "               %s\n", f.CensoredEstimator)
			fmt.Fprintf(stdout, "               censored %s lifetimes can be fitted by %s\n", f.Name, strings.Join(family.CensoredFitsFor(f), " or "))
		}
		fmt.Fprintln(stdout)
	}
	fmt.Fprintln(stdout, "A study draws from family and fits fit (default: the same family); θ holds the fitted family's estimates.")
	fmt.Fprintln(stdout)
	fmt.Fprintln(stdout, "Regression families, in [model] with [[model.covariate]] tables (distribution = levels, bernoulli, normal, uniform, or expr = ... derived from covariates above), or as [[model.equation]] tables of a chain (parameters then OUTCOME.COEF); n counts rows:")
	fmt.Fprintln(stdout)
	for _, f := range regress.Families {
		fmt.Fprintf(stdout, "%s — %s\n", f.Name, f.Summary)
		fmt.Fprintf(stdout, "    %-12s %s\n", "coefficients", "a table of numbers: intercept (required) and one per covariate or earlier outcome")
		if f.Kind == regress.Linear {
			fmt.Fprintf(stdout, "    %-12s %s\n", "sd", "a number > 0, the error sd")
		}
		est := "intercept, each coefficient"
		if f.Kind == regress.Linear {
			est += ", sd"
		}
		fmt.Fprintf(stdout, "    estimates: %s\n", est)
		fmt.Fprintf(stdout, "    estimator: %s\n", f.Estimator)
		fmt.Fprintf(stdout, "    variance:  model (inverse information), robust (HC0 sandwich; a chain's of its stacked estimating equations)\n\n")
	}
	return exitOK
}

func cmdReport(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet("report", "report DIR [-figures png,svg,pdf]", stderr)
	figures := addFiguresFlag(fs)
	positional, err := parseInterspersed(fs, args)
	if err != nil {
		return flagErr(err)
	}
	if len(positional) != 1 {
		fmt.Fprintf(stderr, "deltaprobe report: give exactly one output folder holding result.json or plan.json (got %d arguments)\n", len(positional))
		return exitUsage
	}
	dir := positional[0]
	if _, err := os.Stat(filepath.Join(dir, plan.File)); err == nil {
		return reportPlan(dir, *figures, stdout, stderr)
	}
	if _, err := os.Stat(filepath.Join(dir, "result.json")); errors.Is(err, os.ErrNotExist) {
		fmt.Fprintf(stderr, "deltaprobe report: %s holds neither result.json (a run's state) nor %s (a plan's): give the folder a run or plan wrote\n", dir, plan.File)
		return exitUsage
	}
	res, err := runner.LoadResult(filepath.Join(dir, "result.json"))
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe report: %v\n", err)
		return exitUsage
	}
	if err := report.Write(dir, res, *figures...); err != nil {
		fmt.Fprintf(stderr, "deltaprobe report: %v\n", err)
		return exitFailure
	}
	report.VerdictTable(stdout, res)
	fmt.Fprintf(stderr, "rewrote the report in %s from result.json\n", dir)
	return exitOK
}

// reportPlan rewrites a plan folder's tables, figures and page from its
// plan.json.
func reportPlan(dir string, figures []report.Format, stdout, stderr io.Writer) int {
	res, err := plan.Load(filepath.Join(dir, plan.File))
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe report: %v\n", err)
		return exitUsage
	}
	if res.Incomplete {
		fmt.Fprintf(stderr, "deltaprobe report: the plan in %s was interrupted and has no verdicts yet; continue it with: deltaprobe plan -resume %s\n", dir, dir)
		return exitUsage
	}
	if err := report.WritePlan(dir, res, figures...); err != nil {
		fmt.Fprintf(stderr, "deltaprobe report: %v\n", err)
		return exitFailure
	}
	report.PlanTable(stdout, res)
	fmt.Fprintf(stderr, "rewrote the report in %s from %s\n", dir, plan.File)
	return exitOK
}

// planHook, when set (by the tests only), is called with each progress
// report of plan and the command's context.
var planHook func(context.Context, plan.Progress)

func cmdPlan(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet("plan", "plan STUDY.toml [flags] | plan -resume DIR [flags]", stderr)
	out := fs.String("o", "", "output folder (default out/<study name>-plan)")
	workers := fs.Int("workers", 0, "worker goroutines (default: all cores)")
	budget := fs.Int64("budget", 0, "cap on the replicates simulated across the whole plan (0: none)")
	var seed seedFlag
	fs.Var(&seed, "seed", "seed `S` ≥ 0, overriding the study file's seed (default: the file's)")
	force := fs.Bool("force", false, "write into a non-empty output folder, removing what an earlier run or plan wrote there")
	quiet := fs.Bool("quiet", false, "no progress on stderr")
	resume := fs.String("resume", "", "continue the interrupted plan saved in this folder")
	figures := addFiguresFlag(fs)
	positional, err := parseInterspersed(fs, args)
	if err != nil {
		return flagErr(err)
	}
	if *budget < 0 || *workers < 0 {
		fmt.Fprintln(stderr, "deltaprobe plan: -budget and -workers take whole numbers ≥ 0")
		return exitUsage
	}
	var (
		s    *study.Study
		prev *plan.Result
		dir  string
	)
	if *resume != "" {
		given := givenFlags(fs)
		if given["o"] || given["budget"] || given["force"] || seed.set {
			fmt.Fprintln(stderr, "deltaprobe plan: -resume continues a plan as it was started; it takes no -o, -budget, -seed or -force")
			return exitUsage
		}
		var code int
		if s, prev, code = loadPlanForResume(*resume, positional, stderr); s == nil {
			return code
		}
		dir = *resume
		removeStaleTemps(dir)
		if !prev.Incomplete {
			fmt.Fprintf(stderr, "deltaprobe plan: %s is already complete; nothing left to simulate; rewriting its report\n", dir)
			if err := report.WritePlan(dir, prev, *figures...); err != nil {
				fmt.Fprintf(stderr, "deltaprobe plan: %v\n", err)
				return exitFailure
			}
			report.PlanTable(stdout, prev)
			return exitOK
		}
	} else {
		var code int
		if s, code = loadStudy("plan", positional, stderr); s == nil {
			return code
		}
		if s.Plan == nil {
			fmt.Fprintf(stderr, "%s: no [plan] table; add one with n_min, n_max and max_replicates (see the README)\n", s.File)
			return exitUsage
		}
		if code := seed.check("plan", stderr); code != exitOK {
			return code
		}
		seed.apply(s)
		dir = *out
		if dir == "" {
			dir = filepath.Join("out", strings.TrimSuffix(filepath.Base(s.File), filepath.Ext(s.File))+"-plan")
		}
		if err := checkOutDir(dir, *force); err != nil {
			fmt.Fprintf(stderr, "deltaprobe plan: %v\n", err)
			return exitUsage
		}
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	cfg := plan.Config{Budget: *budget, Options: runner.Options{Workers: *workers}}
	var show func(plan.Progress)
	if !*quiet {
		show = planProgressPrinter(stderr)
		if prev != nil {
			fmt.Fprintf(stderr, "resuming the plan in %s: %d evaluations and %d replicates already made\n", dir, len(prev.Steps), prev.Total)
		} else {
			fmt.Fprintf(stderr, "planning %d transforms over n in [%d, %d]...\n", len(s.Transforms), s.Plan.NMin, s.Plan.NMax)
		}
	}
	if show != nil || planHook != nil {
		cfg.Progress = func(p plan.Progress) {
			if show != nil {
				show(p)
			}
			if planHook != nil {
				planHook(ctx, p)
			}
		}
	}
	var res *plan.Result
	if prev != nil {
		res, err = plan.Resume(ctx, s, prev, cfg)
	} else {
		res, err = plan.RunConfig(ctx, s, cfg)
	}
	if show != nil {
		fmt.Fprintln(stderr)
	}
	interrupted := errors.Is(err, context.Canceled) && res != nil && res.Incomplete
	if err != nil && !interrupted {
		fmt.Fprintf(stderr, "deltaprobe plan: %v\n", err)
		return exitFailure
	}
	if prev == nil && *force {
		if code := clearOutDir("plan", dir, *quiet, stderr); code != exitOK {
			return code
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		fmt.Fprintf(stderr, "deltaprobe plan: creating output folder: %v\n", err)
		return exitFailure
	}
	if err := plan.Save(filepath.Join(dir, plan.File), res); err != nil {
		fmt.Fprintf(stderr, "deltaprobe plan: %v\n", err)
		return exitFailure
	}
	if interrupted {
		fmt.Fprintf(stderr, "deltaprobe plan: interrupted; %d finished evaluations and the replicates simulated are saved in %s; continue with: deltaprobe plan -resume %s\n",
			len(res.Steps), filepath.Join(dir, plan.File), dir)
		return exitInterrupted
	}
	if err := report.WritePlan(dir, res, *figures...); err != nil {
		fmt.Fprintf(stderr, "deltaprobe plan: %v\n", err)
		return exitFailure
	}
	report.PlanTable(stdout, res)
	fmt.Fprintf(stderr, "wrote %s (plan.json, plan.csv, verdicts.csv, figures, index.html)\n", dir)
	return exitOK
}

// loadPlanForResume reads DIR/plan.json and the study it was planned
// from; a study file named beside -resume must be the same file.
func loadPlanForResume(dir string, positional []string, stderr io.Writer) (*study.Study, *plan.Result, int) {
	if len(positional) > 1 {
		fmt.Fprintf(stderr, "deltaprobe plan: -resume takes at most one study file (got %d arguments)\n", len(positional))
		return nil, nil, exitUsage
	}
	prev, err := plan.Load(filepath.Join(dir, plan.File))
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe plan: cannot resume: %v\n", err)
		return nil, nil, exitUsage
	}
	s, err := plan.ResumeStudy(prev)
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe plan: cannot resume %s: %v\n", dir, err)
		return nil, nil, exitUsage
	}
	if code := sameStudy("plan", dir, prev.Study, positional, stderr); code != exitOK {
		return nil, nil, code
	}
	return s, prev, exitOK
}

// sameStudy checks that a study file named beside -resume (positional,
// at most one) is the study the folder's saved run or plan (cmd) holds.
func sameStudy(cmd, dir string, held study.Info, positional []string, stderr io.Writer) int {
	if len(positional) == 0 {
		return exitOK
	}
	given, err := study.Load(positional[0])
	if err != nil {
		fmt.Fprintln(stderr, err)
		return exitUsage
	}
	if given.SHA256 != held.SHA256 {
		fmt.Fprintf(stderr, "deltaprobe %s: cannot resume %s: it holds a %s of %s (SHA-256 %.12s…), and %s (SHA-256 %.12s…) differs from it: the file has changed since the %s started, or is another study\n",
			cmd, dir, cmd, held.File, held.SHA256, positional[0], given.SHA256, cmd)
		return exitUsage
	}
	return exitOK
}

// planProgressPrinter shows where a plan is on one line, rewritten in
// place at most a few times a second.
func planProgressPrinter(w io.Writer) func(plan.Progress) {
	var last time.Time
	width := 0
	return func(p plan.Progress) {
		now := time.Now()
		if now.Sub(last) < 250*time.Millisecond {
			return
		}
		last = now
		line := fmt.Sprintf("plan: %s at n=%d, %d of at most %d replicates; %d spent in all", p.Transform, p.N, p.Replicates, p.Max, p.Total)
		pad := max(0, width-len(line))
		width = len(line)
		fmt.Fprintf(w, "\r%s%s", line, strings.Repeat(" ", pad))
	}
}

// parseShard reads "K/N", or "auto": the index from a Slurm job array
// (SLURM_ARRAY_TASK_ID, SLURM_ARRAY_TASK_MIN, SLURM_ARRAY_TASK_COUNT) or
// an indexed job (JOB_COMPLETION_INDEX, with the count from -shards).
func parseShard(spec string, shards int, getenv func(string) string) (runner.Shard, error) {
	if spec != "auto" {
		var k, n int
		if _, err := fmt.Sscanf(spec, "%d/%d", &k, &n); err != nil || fmt.Sprintf("%d/%d", k, n) != spec {
			return runner.Shard{}, fmt.Errorf("-shard %q: give K/N with whole numbers, e.g. 0/4, or auto", spec)
		}
		if n < 1 || k < 0 || k >= n {
			return runner.Shard{}, fmt.Errorf("-shard %s: need 0 ≤ K < N", spec)
		}
		return runner.Shard{Index: k, Count: n}, nil
	}
	atoi := func(name string) (int, bool, error) {
		v := getenv(name)
		if v == "" {
			return 0, false, nil
		}
		var x int
		if _, err := fmt.Sscanf(v, "%d", &x); err != nil || fmt.Sprint(x) != v {
			return 0, true, fmt.Errorf("%s=%q is not a whole number", name, v)
		}
		return x, true, nil
	}
	if id, ok, err := atoi("SLURM_ARRAY_TASK_ID"); ok || err != nil {
		if err != nil {
			return runner.Shard{}, err
		}
		count, okCount, err := atoi("SLURM_ARRAY_TASK_COUNT")
		if err != nil || !okCount {
			return runner.Shard{}, fmt.Errorf("-shard auto: SLURM_ARRAY_TASK_ID is set but SLURM_ARRAY_TASK_COUNT is not (%v)", err)
		}
		lo, _, err := atoi("SLURM_ARRAY_TASK_MIN")
		if err != nil {
			return runner.Shard{}, err
		}
		if shards > 0 && shards != count {
			return runner.Shard{}, fmt.Errorf("-shards %d disagrees with SLURM_ARRAY_TASK_COUNT=%d", shards, count)
		}
		k := id - lo
		if k < 0 || k >= count {
			return runner.Shard{}, fmt.Errorf("-shard auto: task %d is outside the array's %d tasks from %d; deltaprobe needs a contiguous array such as --array=0-%d", id, count, lo, count-1)
		}
		return runner.Shard{Index: k, Count: count}, nil
	}
	if idx, ok, err := atoi("JOB_COMPLETION_INDEX"); ok || err != nil {
		if err != nil {
			return runner.Shard{}, err
		}
		if shards < 1 {
			return runner.Shard{}, fmt.Errorf("-shard auto under an indexed job needs -shards N, the job's completions")
		}
		if idx < 0 || idx >= shards {
			return runner.Shard{}, fmt.Errorf("JOB_COMPLETION_INDEX=%d is outside 0..%d", idx, shards-1)
		}
		return runner.Shard{Index: idx, Count: shards}, nil
	}
	return runner.Shard{}, fmt.Errorf("-shard auto: neither SLURM_ARRAY_TASK_ID nor JOB_COMPLETION_INDEX is set; give -shard K/N")
}

func cmdMerge(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet("merge", "merge -o DIR [-partial] [-force] [-figures png,svg,pdf] PART...", stderr)
	out := fs.String("o", "", "output folder for the merged result (required)")
	partial := fs.Bool("partial", false, "merge an incomplete set on purpose; the output says what is missing")
	force := fs.Bool("force", false, "write into a non-empty output folder, removing what an earlier run or plan wrote there")
	figures := addFiguresFlag(fs)
	positional, err := parseInterspersed(fs, args)
	if err != nil {
		return flagErr(err)
	}
	if *out == "" || len(positional) == 0 {
		fmt.Fprintln(stderr, "deltaprobe merge: give -o DIR and at least one part (a result.json or the folder holding it)")
		return exitUsage
	}
	var parts []runner.Part
	for _, p := range positional {
		path := p
		if st, err := os.Stat(p); err == nil && st.IsDir() {
			path = filepath.Join(p, "result.json")
		}
		res, err := runner.LoadResult(path)
		if err != nil {
			fmt.Fprintf(stderr, "deltaprobe merge: %v\n", err)
			return exitUsage
		}
		parts = append(parts, runner.Part{Name: p, Result: res})
	}
	merged, err := runner.Merge(parts, *partial)
	if err != nil {
		fmt.Fprintf(stderr, "deltaprobe merge: %v\n", err)
		return exitUsage
	}
	if err := checkOutDir(*out, *force); err != nil {
		fmt.Fprintf(stderr, "deltaprobe merge: %v\n", err)
		return exitUsage
	}
	if *force {
		if code := clearOutDir("merge", *out, false, stderr); code != exitOK {
			return code
		}
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		fmt.Fprintf(stderr, "deltaprobe merge: creating output folder: %v\n", err)
		return exitFailure
	}
	if err := runner.SaveResult(filepath.Join(*out, "result.json"), merged); err != nil {
		fmt.Fprintf(stderr, "deltaprobe merge: %v\n", err)
		return exitFailure
	}
	if err := report.Write(*out, merged, *figures...); err != nil {
		fmt.Fprintf(stderr, "deltaprobe merge: %v\n", err)
		return exitFailure
	}
	report.VerdictTable(stdout, merged)
	fmt.Fprintf(stderr, "merged %d parts into %s\n", len(parts), *out)
	return exitOK
}

// figuresFlag is the -figures flag: the formats the figures are written in.
type figuresFlag []report.Format

func (f *figuresFlag) String() string { return report.FormatList(*f) }

func (f *figuresFlag) Set(s string) error {
	formats, err := report.ParseFormats(s)
	if err != nil {
		return err
	}
	*f = formats
	return nil
}

// addFiguresFlag defines -figures on fs, by default report.DefaultFormats.
func addFiguresFlag(fs *flag.FlagSet) *figuresFlag {
	f := figuresFlag(report.DefaultFormats)
	fs.Var(&f, "figures", "figure formats: a comma-separated subset of "+report.FormatList(report.Formats))
	return &f
}

// seconds writes a duration in seconds to a tenth, or to two significant
// digits below a second ("0.043s"), so a fast run does not read "0.0s".
func seconds(s float64) string {
	if s >= 1 {
		return fmt.Sprintf("%.1fs", s)
	}
	return strconv.FormatFloat(s, 'g', 2, 64) + "s"
}
