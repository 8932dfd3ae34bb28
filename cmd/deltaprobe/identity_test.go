package main

import (
	"bytes"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deltaprobe/report"
	"deltaprobe/sim/measure"
	"deltaprobe/sim/runner"
	"deltaprobe/sim/study/studytest"
)

// identityStudy has 22 blocks per n (the last of 500 replicates), so the
// reduction tree has five levels and a complete cell keeps three nodes
// ([0, 16), [16, 20), [20, 22)), and 16 shards each own one or two blocks.
const identityStudy = `seed = 2718
replicates = 21500
sample_sizes = [6, 30]

[model]
family = "normal"
mean = 2.0
sd = 1.0

[[transform]]
name = "inverse"
expr = "1 / mean"

[[transform]]
name = "cv"
expr = "sd / mean"
`

func summaryBytes(t *testing.T, res *runner.Result) []byte {
	t.Helper()
	if !res.Complete {
		t.Fatal("result not complete")
	}
	return report.SummaryCSV(measure.Summarize(res))
}

// roundTrip saves and reloads a result, as a checkpoint and -resume or
// merge would.
func roundTrip(t *testing.T, res *runner.Result) *runner.Result {
	t.Helper()
	path := filepath.Join(t.TempDir(), "result.json")
	if err := runner.SaveResult(path, res); err != nil {
		t.Fatal(err)
	}
	back, err := runner.LoadResult(path)
	if err != nil {
		t.Fatal(err)
	}
	return back
}

// summary.csv is the same bytes for any number of workers, any number of
// shards merged, and any points of interruption and resumption, at a
// replicate count whose reduction has several levels.
func TestSummaryBytesIndependentOfHowItRan(t *testing.T) {
	t.Parallel()
	s := studytest.Parse(t, identityStudy)
	base, err := runner.Run(context.Background(), s, runner.Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	want := summaryBytes(t, roundTrip(t, base))

	for _, workers := range []int{2, 7} {
		res, err := runner.Run(context.Background(), s, runner.Options{Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		if got := summaryBytes(t, roundTrip(t, res)); !bytes.Equal(got, want) {
			t.Errorf("%d workers: summary.csv differs from 1 worker's", workers)
		}
	}

	for _, count := range []int{1, 3, 16} {
		var parts []runner.Part
		for k := 0; k < count; k++ {
			res := runner.NewResult(s)
			res.Shard = &runner.Shard{Index: k, Count: count}
			if err := runner.RunBlocks(context.Background(), s, res, nil, runner.Options{Workers: 1 + k%2}); err != nil {
				t.Fatal(err)
			}
			parts = append(parts, runner.Part{Name: fmt.Sprintf("part%d", k), Result: roundTrip(t, res)})
		}
		merged, err := runner.Merge(parts, false)
		if err != nil {
			t.Fatalf("%d shards: %v", count, err)
		}
		if got := summaryBytes(t, roundTrip(t, merged)); !bytes.Equal(got, want) {
			t.Errorf("%d shards merged: summary.csv differs from one run's", count)
		}
	}

	// Interrupted after k more blocks (of 44), saved, reloaded and resumed,
	// some twice; two workers, so which blocks are held at the stop
	// varies as it would in use. Chosen stops first, then stops drawn at
	// random (a fixed seed, so a failure can be replayed).
	allStops := [][]int{{1}, {5}, {13}, {30}, {42}, {3, 17}, {16, 4, 10}}
	pick := rand.New(rand.NewPCG(16, 44))
	for range 6 {
		stops := make([]int, 1+pick.IntN(3))
		for i := range stops {
			stops[i] = 1 + pick.IntN(44/len(stops)-1)
		}
		allStops = append(allStops, stops)
	}
	for _, stops := range allStops {
		res := runner.NewResult(s)
		for _, k := range stops {
			ctx, cancel := context.WithCancel(context.Background())
			blocks := 0
			opt := runner.Options{Workers: 2, Progress: func(done, total int64) {
				if blocks++; blocks >= k {
					cancel()
				}
			}}
			err := runner.RunBlocks(ctx, s, res, nil, opt)
			cancel()
			if err == nil {
				t.Fatalf("stops %v: the run at %d was not interrupted", stops, k)
			}
			res = roundTrip(t, res)
			if res.Complete {
				t.Fatalf("stops %v: an interrupted result is marked complete", stops)
			}
		}
		if err := runner.RunBlocks(context.Background(), s, res, nil, runner.Options{Workers: 2}); err != nil {
			t.Fatal(err)
		}
		if got := summaryBytes(t, roundTrip(t, res)); !bytes.Equal(got, want) {
			t.Errorf("interrupted after %v blocks and resumed: summary.csv differs from one run's", stops)
		}
	}
}

// A result of an earlier layout (moments block by block) is refused by
// -resume and by merge, with a message that says why, before anything
// of it is decoded.
func TestResumeAndMergeRefuseAnotherLayout(t *testing.T) {
	study := writeStudy(t, smallStudy)
	var dirs []string
	for k := 0; k < 2; k++ {
		dir := filepath.Join(t.TempDir(), "part")
		if code, _, stderr := runCLI(t, "run", study, "-shard", fmt.Sprintf("%d/2", k), "-o", dir, "-quiet"); code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		dirs = append(dirs, dir)
	}
	path := filepath.Join(dirs[1], "result.json")
	saved := readFile(t, path)
	from := []byte(fmt.Sprintf(`"layout": %d,`, runner.ResultVersion))
	if !bytes.Contains(saved, from) {
		t.Fatalf("result.json does not hold %s", from)
	}
	// An old file's cells also hold "blocks"; the layout is read first.
	old := bytes.Replace(saved, from, []byte(`"layout": 1,`), 1)
	old = bytes.Replace(old, []byte(`"nodes": [`), []byte(`"blocks": [[0,1,2]], "x": [`), 1)
	if err := os.WriteFile(path, old, 0o644); err != nil {
		t.Fatal(err)
	}
	want := fmt.Sprintf("has result layout 1; this deltaprobe reads layout %d only, and cannot report, resume or merge it", runner.ResultVersion)
	if code, _, stderr := runCLI(t, "run", "-resume", dirs[1], "-quiet"); code == exitOK || !strings.Contains(stderr, want) {
		t.Errorf("resume of layout 1: exit %d, stderr %q; want a refusal saying %q", code, stderr, want)
	}
	out := filepath.Join(t.TempDir(), "m")
	if code, _, stderr := runCLI(t, "merge", "-o", out, dirs[0], dirs[1]); code == exitOK || !strings.Contains(stderr, want) {
		t.Errorf("merge with layout 1: exit %d, stderr %q; want a refusal saying %q", code, stderr, want)
	}
}

// A shard owns whole blocks: more shards than blocks per n is refused,
// naming the most that can be used.
func TestTooManyShardsRefused(t *testing.T) {
	study := writeStudy(t, smallStudy) // 3000 replicates: 3 blocks per n
	out := filepath.Join(t.TempDir(), "out")
	code, _, stderr := runCLI(t, "run", study, "-shard", "1/4", "-o", out, "-quiet")
	if code != exitUsage || !strings.Contains(stderr, "use at most 3 shards") {
		t.Errorf("exit %d, stderr %q; want a refusal naming 3 shards", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Error("a refused shard created its output folder")
	}
	if code, _, stderr := runCLI(t, "run", study, "-shard", "2/3", "-o", out, "-quiet"); code != exitOK {
		t.Errorf("3 shards of 3 blocks: exit %d: %s", code, stderr)
	}
}
