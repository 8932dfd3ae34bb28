package runner

import (
	"runtime"
	"runtime/debug"
	"slices"
	"strings"
)

// Generator names the random numbers a run draws, as its record states
// them: blockSeeds and the workers' PCG.
const Generator = "PCG (math/rand/v2), one stream per block seeded by SplitMix64 from (seed, n, block)"

// Unknown stands for what the build did not record (a test binary has no
// version-control stamp), or a saved state from before builds were
// recorded.
const Unknown = "unknown"

// Build is what made a saved state: the random generator and the
// program's build. None of it enters the numbers; a merge of parts from
// different builds lists each differing value, separated by "; ".
type Build struct {
	Generator string `json:"generator"`
	Commit    string `json:"commit"`   // vcs.revision, or Unknown
	Modified  string `json:"modified"` // vcs.modified: "true", "false", or Unknown
	GoVersion string `json:"go_version"`
	Platform  string `json:"platform"` // GOOS/GOARCH
}

// CurrentBuild describes this program.
func CurrentBuild() Build {
	bi, ok := debug.ReadBuildInfo()
	if !ok {
		bi = nil
	}
	return buildOf(bi, runtime.Version(), runtime.GOOS+"/"+runtime.GOARCH)
}

// buildOf reads the version-control stamp of bi (nil: none).
func buildOf(bi *debug.BuildInfo, goVersion, platform string) Build {
	b := Build{Generator: Generator, Commit: Unknown, Modified: Unknown, GoVersion: goVersion, Platform: platform}
	if bi == nil {
		return b
	}
	if bi.GoVersion != "" {
		b.GoVersion = bi.GoVersion
	}
	for _, s := range bi.Settings {
		switch {
		case s.Key == "vcs.revision" && s.Value != "":
			b.Commit = s.Value
		case s.Key == "vcs.modified" && s.Value != "":
			b.Modified = s.Value
		}
	}
	return b
}

// Known fills in Unknown for what a state saved before builds were
// recorded lacks.
func (b Build) Known() Build {
	for _, f := range []*string{&b.Generator, &b.Commit, &b.Modified, &b.GoVersion, &b.Platform} {
		if *f == "" {
			*f = Unknown
		}
	}
	return b
}

// Join describes a state made by b and o together (a resumed run, a
// merge): each field that differs lists both values.
func (b Build) Join(o Build) Build {
	b, o = b.Known(), o.Known()
	join := func(x, y string) string {
		vals := strings.Split(x, "; ")
		for _, v := range strings.Split(y, "; ") {
			if !slices.Contains(vals, v) {
				vals = append(vals, v)
			}
		}
		return strings.Join(vals, "; ")
	}
	return Build{
		Generator: join(b.Generator, o.Generator),
		Commit:    join(b.Commit, o.Commit),
		Modified:  join(b.Modified, o.Modified),
		GoVersion: join(b.GoVersion, o.GoVersion),
		Platform:  join(b.Platform, o.Platform),
	}
}
