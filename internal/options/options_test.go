package options

import (
	"errors"
	"reflect"
	"strings"
	"testing"

	"github.com/allotproject/allot/power"
)

func TestSizeRequest(t *testing.T) {
	base := power.Request{Alpha: 0.05, Power: 0.8, Sides: 2}
	tests := []struct {
		name    string
		in      Size
		check   func(power.Request, [][]string) bool
		errFlag string
		errMsg  string
	}{
		{"one-way", Size{Req: base, Design: "crd", Means: "10, 12,14"}, func(r power.Request, _ [][]string) bool {
			return reflect.DeepEqual(r.Means, []float64{10, 12, 14}) && r.Test == power.TestF && !r.Blocked
		}, "", ""},
		{"blocks", Size{Req: base, Design: "crd", Blocks: 6, BlocksSet: true}, func(r power.Request, _ [][]string) bool { return r.Blocked && r.N == 6 }, "", ""},
		{"factor levels", Size{Req: base, Design: "crd", Factors: []string{"dose=3", "diet=chow, fat"}, Term: "dose, diet"}, func(r power.Request, l [][]string) bool {
			return len(r.Factors) == 2 && r.Factors[0].Levels == 3 && reflect.DeepEqual(l[1], []string{"chow", "fat"}) && reflect.DeepEqual(r.Term, []string{"dose", "diet"})
		}, "", ""},
		{"one-sided is t", Size{Req: power.Request{Sides: 1}, Design: "crd"}, func(r power.Request, _ [][]string) bool { return r.Test == power.TestT }, "", ""},
		{"dunnett", Size{Req: base, Design: "rcbd", Compare: "dunnett"}, func(r power.Request, _ [][]string) bool { return r.Test == power.TestDunnett && r.Blocked }, "", ""},
		{"bad design", Size{Design: "latin"}, nil, "design", "--design latin: must be crd"},
		{"one block", Size{Design: "crd", Blocks: 1, BlocksSet: true}, nil, "blocks", "at least 2 blocks"},
		{"blocks and n", Size{Design: "crd", Blocks: 4, BlocksSet: true, NSet: true}, nil, "blocks", "not both"},
		{"factor syntax", Size{Design: "crd", Factors: []string{"dose"}}, nil, "factor", "NAME=LEVELS"},
		{"factor repeated level", Size{Design: "crd", Factors: []string{"diet=a,a"}}, nil, "factor", "distinct"},
		{"factor one level", Size{Design: "crd", Factors: []string{"dose=1"}}, nil, "factor", "at least 2 levels"},
		{"means", Size{Design: "crd", Means: "1,x"}, nil, "means", `"x" is not a number`},
		{"ratios", Size{Design: "crd", Ratios: "2,,1"}, nil, "ratios", "not a number"},
		{"compare", Size{Design: "crd", Compare: "all"}, nil, "compare", "control, dunnett or pairs"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, levels, err := tt.in.Request()
			if tt.errFlag != "" {
				var oe *Error
				if !errors.As(err, &oe) || oe.Flag != tt.errFlag || !strings.Contains(oe.Msg, tt.errMsg) {
					t.Fatalf("error %v, want flag %s with %q", err, tt.errFlag, tt.errMsg)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if !tt.check(r, levels) {
				t.Errorf("request %+v, levels %v", r, levels)
			}
		})
	}
}

func TestAnalysisValidate(t *testing.T) {
	ok := Analysis{SS: 3, Alpha: 0.05, PostHoc: "tukey", Sides: 2}
	tests := []struct {
		name string
		edit func(*Analysis)
		flag string
	}{
		{"valid", func(*Analysis) {}, ""},
		{"ss", func(a *Analysis) { a.SS = 4 }, "ss"},
		{"alpha", func(a *Analysis) { a.Alpha = 1 }, "alpha"},
		{"posthoc", func(a *Analysis) { a.PostHoc = "lsd" }, "posthoc"},
		{"sides", func(a *Analysis) { a.Sides = 0 }, "sides"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			a := ok
			tt.edit(&a)
			err := a.Validate()
			var oe *Error
			switch {
			case tt.flag == "" && err != nil:
				t.Errorf("error %v", err)
			case tt.flag != "" && (!errors.As(err, &oe) || oe.Flag != tt.flag):
				t.Errorf("error %v, want one for --%s", err, tt.flag)
			}
		})
	}
}

func TestShellQuote(t *testing.T) {
	for in, want := range map[string]string{
		"feed=F0,F1":  "feed=F0,F1",
		"Feed trial":  "'Feed trial'",
		"it's":        `'it'\''s'`,
		"":            "''",
		"a;rm -rf /x": "'a;rm -rf /x'",
	} {
		if got := ShellQuote(in); got != want {
			t.Errorf("ShellQuote(%q) = %s, want %s", in, got, want)
		}
	}
}
