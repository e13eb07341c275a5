// Package version reports allot's version from what the build recorded: the
// release number a release build stamps with -ldflags, else the module
// version the go command records (a tag for `go install ...@v1.2.3`, a
// pseudo-version for a build from a clone), with the VCS revision when the
// build has one.
package version

import (
	"runtime/debug"
	"strings"
)

// stamp and commit are set by release builds (scripts/release.sh):
//
//	go build -ldflags "-X github.com/allotproject/allot/internal/version.stamp=v0.2.0
//	  -X github.com/allotproject/allot/internal/version.commit=$(git rev-parse HEAD)"
//
// They are allot's only package-level variables: -ldflags -X can set
// nothing else. commit stands in for the VCS revision where the go command
// cannot record one (a build outside a git checkout, or a worktree it does
// not recognise).
var stamp, commit string

// Devel is the version of a build that recorded none (go run, go test).
const Devel = "devel"

// String returns the version with the VCS revision when the binary was
// built with version-control stamping, for example
// "v0.2.0 (commit 1d97e0af74ca)" or "devel (commit 1d97e0af74ca-dirty)".
func String() string {
	info, _ := debug.ReadBuildInfo()
	if commit != "" && info != nil {
		has := false
		for _, s := range info.Settings {
			has = has || s.Key == "vcs.revision"
		}
		if !has {
			c := *info
			c.Settings = append(append([]debug.BuildSetting(nil), info.Settings...), debug.BuildSetting{Key: "vcs.revision", Value: commit})
			info = &c
		}
	}
	return format(stamp, info)
}

// format builds the version text from a stamp and the build information
// (nil when the binary has none).
func format(stamp string, info *debug.BuildInfo) string {
	v := stamp
	if v == "" && info != nil && info.Main.Version != "" && info.Main.Version != "(devel)" {
		v = info.Main.Version
	}
	if v == "" {
		v = Devel
	}
	if info == nil {
		return v
	}
	rev, dirty := "", false
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			dirty = s.Value == "true"
		}
	}
	if rev == "" {
		return v
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	// A pseudo-version already names the commit (v0.0.0-2026...-1d97e0af74ca).
	if strings.Contains(v, rev) {
		return v
	}
	if dirty {
		rev += "-dirty"
	}
	return v + " (commit " + rev + ")"
}
