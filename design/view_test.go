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
		{"M:7/b", 0, "allot:1d97e0af74ca:M:7%2Fb"},
		{"Käfig 3", 1, "allot:1d97e0af74ca:K%C3%A4fig%203/1"},
		{"50%", 0, "allot:1d97e0af74ca:50%25"},
	}
	for _, c := range cases {
		got := UnitCode(fp, c.id, c.sub)
		if got != c.want {
			t.Errorf("UnitCode(%q, %d) = %q, want %q", c.id, c.sub, got, c.want)
		}
		f, id, sub, err := ParseUnitCode(" " + strings.ToUpper(got[:6]) + got[6:] + " ")
		if err != nil || f != fp[:12] || id != c.id || sub != c.sub {
			t.Errorf("ParseUnitCode(%q) = %q, %q, %d, %v", got, f, id, sub, err)
		}
	}
}

func TestParseUnitCodeErrors(t *testing.T) {
	for _, s := range []string{"", "101", "allot:", "allot:1d97e0af74ca", "allot:1d97e0af74ca:", "allot:1d97e0af74c:101",
		"allot:1d97e0af74cg:101", "allot:1d97e0af74ca-101", "allot:1d97e0af74ca:101/0", "allot:1d97e0af74ca:101/x",
		"allot:1d97e0af74ca:101/2/3", "allot:1d97e0af74ca:10%2", "allot:1d97e0af74ca:%zz", "allot:1d97e0af74ca:/2"} {
		if _, _, _, err := ParseUnitCode(s); err == nil {
			t.Errorf("ParseUnitCode(%q): no error", s)
		}
	}
}

func TestFinder(t *testing.T) {
	v := View{Layout: Layout{Units: []Unit{{ID: "101"}, {ID: "A/1"}, {ID: "A"}}}}
	find := v.Finder()
	for _, c := range []struct {
		id   string
		unit int
		ok   bool
	}{{"101", 0, true}, {"A/1", 1, true}, {"A", 2, true}, {"102", 0, false}} {
		u, ok := find(c.id)
		if ok != c.ok || ok && u != c.unit {
			t.Errorf("find(%q) = %d, %v; want %d, %v", c.id, u, ok, c.unit, c.ok)
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

// FuzzUnitCode: any unit ID and subsample survive the trip through a code,
// the code is printable ASCII, and parsing never panics.
func FuzzUnitCode(f *testing.F) {
	f.Add("101", 0)
	f.Add("Käfig 3/x%", 2)
	f.Add("allot:1d97e0af74ca:101", -1)
	f.Fuzz(func(t *testing.T, id string, sub int) {
		ParseUnitCode(id) // must not panic
		if id == "" || sub < 0 {
			return
		}
		code := UnitCode("1d97e0af74cab5c6", id, sub)
		for i := 0; i < len(code); i++ {
			if code[i] <= ' ' || code[i] > '~' {
				t.Fatalf("code %q has byte %#x", code, code[i])
			}
		}
		fp, gotID, gotSub, err := ParseUnitCode(code)
		if err != nil || fp != "1d97e0af74ca" || gotID != id || gotSub != sub {
			t.Errorf("%q, %d → %q → %q, %q, %d, %v", id, sub, code, fp, gotID, gotSub, err)
		}
	})
}
