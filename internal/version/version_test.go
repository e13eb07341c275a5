package version

import (
	"runtime/debug"
	"strings"
	"testing"
)

func TestFormat(t *testing.T) {
	vcs := func(rev, modified string) []debug.BuildSetting {
		return []debug.BuildSetting{{Key: "vcs.revision", Value: rev}, {Key: "vcs.modified", Value: modified}}
	}
	const rev = "1d97e0af74cab5c639ab411b4ea0dd94f59082b5"
	tests := []struct {
		name  string
		stamp string
		info  *debug.BuildInfo
		want  string
	}{
		{"no build info", "", nil, "devel"},
		{"stamped, no build info", "v0.2.0", nil, "v0.2.0"},
		{"go run", "", &debug.BuildInfo{Main: debug.Module{Version: "(devel)"}}, "devel"},
		{"go install at a tag", "", &debug.BuildInfo{Main: debug.Module{Version: "v0.2.0"}}, "v0.2.0"},
		{"release build", "v0.2.0", &debug.BuildInfo{Main: debug.Module{Version: "(devel)"}, Settings: vcs(rev, "false")}, "v0.2.0 (commit 1d97e0af74ca)"},
		{"stamp wins over module version", "v0.3.0", &debug.BuildInfo{Main: debug.Module{Version: "v0.0.0-x"}}, "v0.3.0"},
		{"dirty tree", "", &debug.BuildInfo{Main: debug.Module{Version: "(devel)"}, Settings: vcs(rev, "true")}, "devel (commit 1d97e0af74ca-dirty)"},
		{"pseudo-version names the commit", "", &debug.BuildInfo{Main: debug.Module{Version: "v0.0.0-20261201224157-1d97e0af74ca+dirty"}, Settings: vcs(rev, "true")}, "v0.0.0-20261201224157-1d97e0af74ca+dirty"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if got := format(tt.stamp, tt.info); got != tt.want {
				t.Errorf("format = %q, want %q", got, tt.want)
			}
		})
	}
}

func TestString(t *testing.T) {
	// Under go test the main module is the test binary's: no version, so
	// the text starts with devel unless a stamp was linked in.
	if s := String(); s == "" || strings.ContainsAny(s, "\n") {
		t.Errorf("String() = %q", s)
	}
}
