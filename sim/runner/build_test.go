package runner

import (
	"runtime/debug"
	"testing"
)

func TestBuildOf(t *testing.T) {
	cases := []struct {
		name string
		bi   *debug.BuildInfo
		want Build
	}{
		{"no build info", nil, Build{Generator, Unknown, Unknown, "go1.x", "os/arch"}},
		{"no version control stamp", &debug.BuildInfo{GoVersion: "go1.26.0"}, Build{Generator, Unknown, Unknown, "go1.26.0", "os/arch"}},
		{"stamped", &debug.BuildInfo{GoVersion: "go1.26.0", Settings: []debug.BuildSetting{
			{Key: "vcs.revision", Value: "abc123"}, {Key: "vcs.modified", Value: "true"}, {Key: "GOOS", Value: "ignored"},
		}}, Build{Generator, "abc123", "true", "go1.26.0", "os/arch"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := buildOf(c.bi, "go1.x", "os/arch"); got != c.want {
				t.Errorf("got %+v, want %+v", got, c.want)
			}
		})
	}
}

func TestBuildJoin(t *testing.T) {
	a := Build{Generator, "abc", "false", "go1.26.0", "linux/amd64"}
	b := Build{Generator, "def", "true", "go1.26.0", "linux/arm64"}
	cases := []struct {
		name string
		x, y Build
		want Build
	}{
		{"same", a, a, a},
		{"different", a, b, Build{Generator, "abc; def", "false; true", "go1.26.0", "linux/amd64; linux/arm64"}},
		{"listed once", a.Join(b), a, Build{Generator, "abc; def", "false; true", "go1.26.0", "linux/amd64; linux/arm64"}},
		{"not recorded", Build{}, a, Build{Unknown + "; " + Generator, Unknown + "; abc", Unknown + "; false", Unknown + "; go1.26.0", Unknown + "; linux/amd64"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.x.Join(c.y); got != c.want {
				t.Errorf("got %+v, want %+v", got, c.want)
			}
		})
	}
}
