package main

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite golden files")

// golden compares got with the named file in testdata, or rewrites it
// under -update.
func golden(t *testing.T, path string, got []byte) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from golden file\n--- got ---\n%s\n--- want ---\n%s", path, got, want)
	}
}

func runCLI(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var stdout, stderr bytes.Buffer
	code := run(args, &stdout, &stderr)
	return code, stdout.String(), stderr.String()
}

const repoRoot = "../.."

// Every bad study file is refused with status 2, a message naming the
// file and line that matches its golden file, and no output folder.
func TestBadStudies(t *testing.T) {
	files, err := filepath.Glob(filepath.Join(repoRoot, "testdata", "bad", "*.toml"))
	if err != nil || len(files) < 40 {
		t.Fatalf("want at least 40 bad study files, found %d (%v)", len(files), err)
	}
	for _, f := range files {
		name := strings.TrimSuffix(filepath.Base(f), ".toml")
		t.Run(name, func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			rel := filepath.Join("testdata", "bad", filepath.Base(f))
			code, stdout, stderr := runCLI(t, "run", f, "-o", out, "-quiet")
			if code != exitUsage {
				t.Errorf("exit status %d, want %d; stderr:\n%s", code, exitUsage, stderr)
			}
			if stdout != "" {
				t.Errorf("stdout not empty: %q", stdout)
			}
			if _, err := os.Stat(out); !os.IsNotExist(err) {
				t.Errorf("output folder was created for a rejected study")
			}
			msg := strings.ReplaceAll(stderr, f, rel)
			if !strings.HasPrefix(msg, rel+":") {
				t.Errorf("message does not start with the file name: %q", msg)
			}
			golden(t, strings.TrimSuffix(f, ".toml")+".golden", []byte(msg))
		})
	}
}

const smallStudy = `title = "Reciprocal of a normal mean"
seed = 42
replicates = 3000
sample_sizes = [5, 20, 80]

[model]
family = "normal"
mean = 10.0
sd = 3.0

[[transform]]
name = "reciprocal"
expr = "1 / mean"

[[transform]]
name = "log_sd"
expr = "log(sd)"
`

func writeStudy(t *testing.T, text string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "small.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestRunGolden(t *testing.T) {
	study := writeStudy(t, smallStudy)
	out := filepath.Join(t.TempDir(), "out")
	// Flags after the study file must work (the README's Commands section).
	code, stdout, stderr := runCLI(t, "run", study, "-o", out, "-quiet", "-workers", "2")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	golden(t, "testdata/run.stdout", []byte(stdout))
	// The time is the simulation's, named as such, not the writing's.
	if want := regexp.MustCompile(`^simulated in [0-9]+\.[0-9]+s; wrote ` + regexp.QuoteMeta(out) + ` \(summary\.csv, `); !want.MatchString(stderr) {
		t.Errorf("stderr %q does not match %s", stderr, want)
	}
	for _, name := range []string{"summary.csv", "verdicts.csv"} {
		b, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		golden(t, filepath.Join("testdata", "run."+name), b)
	}
	if _, err := os.Stat(filepath.Join(out, "result.json")); err != nil {
		t.Errorf("result.json missing: %v", err)
	}
}

// The same study and seed give byte-identical CSV whatever the number of
// workers (determinism contract).
func TestWorkersDoNotChangeOutput(t *testing.T) {
	study := writeStudy(t, smallStudy)
	var first map[string][]byte
	for _, workers := range []string{"1", "2", "5"} {
		out := filepath.Join(t.TempDir(), "out")
		code, _, stderr := runCLI(t, "run", "-quiet", "-workers", workers, "-o", out, study)
		if code != exitOK {
			t.Fatalf("workers %s: exit %d: %s", workers, code, stderr)
		}
		got := map[string][]byte{}
		for _, name := range []string{"summary.csv", "verdicts.csv"} {
			b, err := os.ReadFile(filepath.Join(out, name))
			if err != nil {
				t.Fatal(err)
			}
			got[name] = b
		}
		if first == nil {
			first = got
			continue
		}
		for name, b := range got {
			if !bytes.Equal(b, first[name]) {
				t.Errorf("%s with %s workers differs from 1 worker", name, workers)
			}
		}
	}
}

func TestRunRefusesNonEmptyFolder(t *testing.T) {
	study := writeStudy(t, smallStudy)
	out := t.TempDir()
	if err := os.WriteFile(filepath.Join(out, "keep.txt"), []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, _, stderr := runCLI(t, "run", study, "-o", out, "-quiet", "-replicates", "100")
	if code != exitUsage || !strings.Contains(stderr, "-force") {
		t.Fatalf("exit %d, stderr %q; want refusal mentioning -force", code, stderr)
	}
	code, _, stderr = runCLI(t, "run", study, "-o", out, "-quiet", "-replicates", "100", "-force")
	if code != exitOK {
		t.Fatalf("with -force: exit %d: %s", code, stderr)
	}
}

func TestOverridesChangeTheRun(t *testing.T) {
	study := writeStudy(t, smallStudy)
	read := func(args ...string) string {
		out := filepath.Join(t.TempDir(), "out")
		code, _, stderr := runCLI(t, append([]string{"run", study, "-quiet", "-o", out}, args...)...)
		if code != exitOK {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		b, err := os.ReadFile(filepath.Join(out, "summary.csv"))
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	base := read("-replicates", "200")
	// transform, n, n_total (n for one sample), replicates.
	if !strings.Contains(base, "reciprocal,5,5,200,") {
		t.Errorf("-replicates 200 not applied:\n%s", base)
	}
	if read("-replicates", "200", "-seed", "43") == base {
		t.Errorf("-seed 43 gave the same output as seed 42")
	}
	if read("-replicates", "200") != base {
		t.Errorf("the same seed gave different output")
	}
}

func TestUsageErrors(t *testing.T) {
	study := writeStudy(t, smallStudy)
	cases := []struct {
		name string
		args []string
		want string
	}{
		{"no command", nil, "usage"},
		{"unknown command", []string{"simulate"}, "unknown command"},
		{"no study", []string{"run"}, "exactly one study file"},
		{"two studies", []string{"run", study, study}, "exactly one study file"},
		{"bad flag", []string{"run", study, "-wrkers", "2"}, "flag provided but not defined"},
		{"few replicates", []string{"run", study, "-replicates", "5"}, "-replicates 5 is out of range"},
		{"negative seed", []string{"run", study, "-seed", "-5"}, "-seed -5 is out of range"},
		{"seed -1 given", []string{"run", study, "-seed", "-1"}, "-seed -1 is out of range"},
		{"seed not a number", []string{"run", study, "-seed", "x"}, `invalid value "x" for flag -seed: parse error`},
		{"seed too large", []string{"run", study, "-seed", "9223372036854775808"}, "value out of range"},
		{"zero replicates given", []string{"run", study, "-replicates", "0"}, "-replicates 0 is out of range"},
		{"missing file", []string{"predict", "no-such-file.toml"}, "no-such-file.toml"},
		{"families with args", []string{"families", "normal"}, "takes no arguments"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, _, stderr := runCLI(t, c.args...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d", code, exitUsage)
			}
			if !strings.Contains(stderr, c.want) {
				t.Errorf("stderr %q does not contain %q", stderr, c.want)
			}
		})
	}
}

// -seed defaults to the study file's seed; the help must not show a
// sentinel as its default.
func TestSeedHelp(t *testing.T) {
	for _, cmd := range []string{"run", "plan"} {
		t.Run(cmd, func(t *testing.T) {
			_, _, stderr := runCLI(t, cmd, "-h")
			if !strings.Contains(stderr, "-seed S\n") || !strings.Contains(stderr, "seed S ≥ 0, overriding the study file's seed (default: the file's)") {
				t.Errorf("help does not describe -seed:\n%s", stderr)
			}
			if strings.Contains(stderr, "default -1") {
				t.Errorf("help shows a default of -1:\n%s", stderr)
			}
		})
	}
}

func TestPredictGolden(t *testing.T) {
	study := writeStudy(t, smallStudy)
	code, stdout, stderr := runCLI(t, "predict", study)
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	golden(t, "testdata/predict.stdout", []byte(stdout))
}

func TestFamiliesGolden(t *testing.T) {
	code, stdout, stderr := runCLI(t, "families")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	golden(t, "testdata/families.stdout", []byte(stdout))
}

// report DIR rebuilds byte-identical CSV, figures and page from
// result.json alone: what a run draws from its result in memory, the
// report draws from the result saved. (The report package's tests read
// saved results only, so this is where the two are compared.)
func TestReportFromSavedResult(t *testing.T) {
	study := writeStudy(t, smallStudy)
	out := filepath.Join(t.TempDir(), "out")
	if code, _, stderr := runCLI(t, "run", study, "-o", out, "-quiet", "-replicates", "1500"); code != exitOK {
		t.Fatalf("run: exit %d: %s", code, stderr)
	}
	before := readDir(t, out)
	delete(before, "result.json")
	if len(before) != 2+1+2*2 {
		t.Fatalf("run wrote %q, want two tables, a page and two figures per transform beside result.json", names(before))
	}
	for name := range before {
		if err := os.Remove(filepath.Join(out, name)); err != nil {
			t.Fatal(err)
		}
	}
	code, stdout, stderr := runCLI(t, "report", out)
	if code != exitOK {
		t.Fatalf("report: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "reciprocal") {
		t.Errorf("report printed no verdict table: %q", stdout)
	}
	for name, want := range before {
		got, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want) {
			t.Errorf("%s from result.json differs from the run's", name)
		}
	}
	if code, _, _ := runCLI(t, "report", t.TempDir()); code != exitUsage {
		t.Errorf("report on a folder without result.json: exit %d, want %d", code, exitUsage)
	}
}

// The package comment lists every command line of the usage text, so the
// two cannot drift apart.
func TestDocListsEveryCommand(t *testing.T) {
	doc, err := os.ReadFile("main.go")
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range strings.Split(usage, "\n") {
		if !strings.HasPrefix(line, "  deltaprobe ") {
			continue
		}
		// The command and its first argument if it has one, e.g.
		// "deltaprobe run -resume"; a lower-case word after the command
		// begins its description.
		fields := strings.Fields(line)
		if len(fields) > 2 && fields[2] == strings.ToLower(fields[2]) && !strings.HasPrefix(fields[2], "-") {
			fields = fields[:2]
		}
		want := strings.Join(fields[:min(3, len(fields))], " ")
		if !strings.Contains(string(doc), "//\t"+want) {
			t.Errorf("main.go's package comment lacks %q from the usage text", want)
		}
	}
	for _, flag := range []string{"-checkpoint", "-shards", "-partial", "-force", "-budget", "-resume", "-dry-run", "-figures"} {
		if !strings.Contains(usage, flag) || !strings.Contains(string(doc), flag) {
			t.Errorf("flag %s missing from the usage text or the package comment", flag)
		}
	}
}

func TestSecondsReadsAtAnySpeed(t *testing.T) {
	for _, tc := range []struct {
		in   float64
		want string
	}{{0.0134, "0.013s"}, {0.5, "0.5s"}, {1, "1.0s"}, {710.26, "710.3s"}} {
		if got := seconds(tc.in); got != tc.want {
			t.Errorf("seconds(%v) = %q, want %q", tc.in, got, tc.want)
		}
	}
}
