// Package version reports allot's version and, when the build recorded it,
// the source revision.
package version

import "runtime/debug"

// Number is the release number of this source tree.
const Number = "0.1.0"

// String returns the version with the VCS revision when the binary was
// built with version-control stamping.
func String() string {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return Number
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
		return Number
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	if dirty {
		rev += "-dirty"
	}
	return Number + " (commit " + rev + ")"
}
