package design

import (
	"strings"
	"testing"
)

func TestUnitCode(t *testing.T) {
	fp := "1d97e0af74cab5c639ab411b4ea0dd94f59082b54b3ba2660e238ca3382a6da6"
	cases := []struct {
		id   string
		sub  int
		want string
	}{
		{"101", 0, "allot:1d97e0af74ca:101"},
		{"101", 2, "allot:1d97e0af74ca:101/2"},
		{"M:7/b", 0, "allot:1d97e0af74ca:M:7/b"},
	}
	for _, c := range cases {
		got := UnitCode(fp, c.id, c.sub)
		if got != c.want {
			t.Errorf("UnitCode(%q, %d) = %q, want %q", c.id, c.sub, got, c.want)
		}
		f, rest, err := ParseUnitCode(" " + strings.ToUpper(got[:6]) + got[6:] + " ")
		if err != nil || f != fp[:12] || !strings.HasPrefix(rest, c.id) {
			t.Errorf("ParseUnitCode(%q) = %q, %q, %v", got, f, rest, err)
		}
	}
}

func TestParseUnitCodeErrors(t *testing.T) {
	for _, s := range []string{"", "101", "allot:", "allot:1d97e0af74ca", "allot:1d97e0af74ca:", "allot:1d97e0af74c:101", "allot:1d97e0af74cg:101", "allot:1d97e0af74ca-101"} {
		if _, _, err := ParseUnitCode(s); err == nil {
			t.Errorf("ParseUnitCode(%q): no error", s)
		}
	}
}

func TestFinder(t *testing.T) {
	v := View{Layout: Layout{Units: []Unit{{ID: "101"}, {ID: "A/1"}, {ID: "A"}}}}
	find := v.Finder()
	cases := []struct {
		rest      string
		unit, sub int
		ok        bool
	}{
		{"101", 0, 0, true},
		{"101/3", 0, 3, true},
		{"A/1", 1, 0, true}, // an exact unit ID wins over a subsample of A
		{"A/2", 2, 2, true},
		{"102", 0, 0, false},
		{"101/0", 0, 0, false},
		{"101/x", 0, 0, false},
	}
	for _, c := range cases {
		u, s, ok := find(c.rest)
		if ok != c.ok || ok && (u != c.unit || s != c.sub) {
			t.Errorf("find(%q) = %d, %d, %v; want %d, %d, %v", c.rest, u, s, ok, c.unit, c.sub, c.ok)
		}
	}
}

func TestSequence(t *testing.T) {
	v := View{Layout: Layout{Plan: Plan{Order: true}, Units: []Unit{
		{ID: "101", Block: 1, Position: 1, Order: 2}, {ID: "102", Block: 1, Position: 2, Order: 1},
		{ID: "201", Block: 2, Position: 1, Order: 1}, {ID: "202", Block: 2, Position: 2, Order: 2}}}}
	for _, c := range []struct {
		meas bool
		want string
	}{{true, "102 101 201 202"}, {false, "101 102 201 202"}} {
		seq, err := v.Sequence(c.meas)
		if err != nil {
			t.Fatal(err)
		}
		var ids []string
		for _, i := range seq {
			ids = append(ids, v.Layout.Units[i].ID)
		}
		if got := strings.Join(ids, " "); got != c.want {
			t.Errorf("Sequence(%v) = %s, want %s", c.meas, got, c.want)
		}
	}
	v.Layout.Plan.Order = false
	if _, err := v.Sequence(true); err == nil {
		t.Error("measurement order of a plan without one: no error")
	}
}

// FuzzParseUnitCode: never panics, and a parsed code re-assembles to
// itself (up to case of the prefix and fingerprint, and white space).
func FuzzParseUnitCode(f *testing.F) {
	for _, s := range []string{"allot:1d97e0af74ca:101", "allot:1d97e0af74ca:101/2", "ALLOT:1D97E0AF74CA:x", "allot:", "x"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		fp, rest, err := ParseUnitCode(s)
		if err != nil {
			return
		}
		if got := UnitCode(fp, rest, 0); !strings.EqualFold(got, strings.TrimSpace(s)) {
			t.Errorf("%q parses to %q, %q, which re-assemble to %q", s, fp, rest, got)
		}
	})
}
