package main

import (
	"bufio"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The README's quick-start commands run as written, so the documentation
// cannot drift from the command.
func TestReadmeCommands(t *testing.T) {
	f, err := os.Open(filepath.Join(repoRoot, "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	const prefix = "go run ./cmd/deltaprobe "
	var commands [][]string
	inShell := false
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		switch {
		case strings.HasPrefix(line, "```"):
			inShell = line == "```sh"
		case inShell && strings.HasPrefix(line, prefix):
			commands = append(commands, strings.Fields(strings.TrimPrefix(line, prefix)))
		}
	}
	if len(commands) == 0 {
		t.Fatal("the README has no deltaprobe command in a sh block")
	}
	for _, args := range commands {
		args := args
		t.Run(strings.Join(args, " "), func(t *testing.T) {
			// Paths in the README are relative to the repository root.
			for i, a := range args {
				if strings.HasSuffix(a, ".toml") {
					args[i] = filepath.Join(repoRoot, a)
				}
			}
			if args[0] == "run" {
				args = append(args, "-o", filepath.Join(t.TempDir(), "out"), "-quiet")
			}
			if code, _, stderr := runCLI(t, args...); code != exitOK {
				t.Fatalf("exit %d: %s", code, stderr)
			}
		})
	}
}

// Every example study loads and runs (with few replicates, to stay fast;
// `make examples` runs them in full).
func TestExampleStudiesRun(t *testing.T) {
	t.Parallel()
	files, err := filepath.Glob(filepath.Join(repoRoot, "studies", "*.toml"))
	if err != nil || len(files) < 4 {
		t.Fatalf("want at least 4 example studies, found %d (%v)", len(files), err)
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			out := filepath.Join(t.TempDir(), "out")
			code, stdout, stderr := runCLI(t, "run", f, "-o", out, "-quiet", "-replicates", "300")
			if code != exitOK {
				t.Fatalf("exit %d: %s", code, stderr)
			}
			if !strings.Contains(stdout, "smallest_n") {
				t.Errorf("no verdict table: %q", stdout)
			}
		})
	}
}
