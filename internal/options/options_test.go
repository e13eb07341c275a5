package options

import (
	"errors"
	"reflect"
	"strings"
	"testing"

	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/report"
)

func TestSizeRequest(t *testing.T) {
	base := power.Request{Alpha: 0.05, Power: 0.8, Sides: 2}
	tests := []struct {
		name    string
		in      Size
		check   func(power.Request, report.Study) bool
		errFlag string
		errMsg  string
	}{
		{"one-way", Size{Req: base, Design: "crd", Means: "10, 12,14"}, func(r power.Request, _ report.Study) bool {
			return reflect.DeepEqual(r.Means, []float64{10, 12, 14}) && r.Test == power.TestF && !r.Blocked
		}, "", ""},
		{"blocks", Size{Req: base, Design: "crd", Blocks: 6, Given: map[string]bool{"blocks": true}}, func(r power.Request, _ report.Study) bool { return r.Blocked && r.N == 6 }, "", ""},
		{"factor levels", Size{Req: base, Design: "crd", Factors: []string{"dose=3", "diet=chow, fat"}, Term: "dose, diet"}, func(r power.Request, _ report.Study) bool {
			return len(r.Factors) == 2 && r.Factors[0].Levels == 3 && reflect.DeepEqual(r.Factors[1].Names, []string{"chow", "fat"}) && r.Factors[0].Names == nil && reflect.DeepEqual(r.Term, []string{"dose", "diet"})
		}, "", ""},
		{"one-sided is t", Size{Req: power.Request{Sides: 1}, Design: "crd"}, func(r power.Request, _ report.Study) bool { return r.Test == power.TestT }, "", ""},
		{"dunnett", Size{Req: base, Design: "rcbd", Compare: "dunnett"}, func(r power.Request, _ report.Study) bool { return r.Test == power.TestDunnett && r.Blocked }, "", ""},
		{"pairs Tukey", Size{Req: base, Design: "crd", Compare: "pairs"}, func(r power.Request, _ report.Study) bool { return r.Test == power.TestAllPairs }, "", ""},
		{"pairs Bonferroni", Size{Req: base, Design: "crd", Compare: "pairs-bonferroni"}, func(r power.Request, _ report.Study) bool { return r.Test == power.TestPairsBonferroni }, "", ""},
		{"direction implies one side", Size{Req: power.Request{Sides: 2, Direction: "lower"}, Design: "crd"}, func(r power.Request, _ report.Study) bool {
			return r.Sides == 0 && r.Test == power.TestT
		}, "", ""},
		{"direction with sides given", Size{Req: power.Request{Sides: 2, Direction: "higher"}, Design: "crd", Compare: "dunnett", Given: map[string]bool{"sides": true}}, func(r power.Request, _ report.Study) bool {
			return r.Sides == 2 && r.Test == power.TestDunnett
		}, "", ""},
		{"levels", Size{Req: base, Design: "crd", Levels: "vehicle, low,high"}, func(r power.Request, _ report.Study) bool {
			return reflect.DeepEqual(r.Levels, []string{"vehicle", "low", "high"})
		}, "", ""},
		{"explicit inputs", Size{Req: base, Design: "crd", Given: map[string]bool{"alpha": true, "groups": true}}, func(r power.Request, _ report.Study) bool {
			return r.Explicit["alpha"] && !r.Explicit["power"]
		}, "", ""},
		{"study defaults", Size{Req: base, Design: "rcbd"}, func(_ power.Request, st report.Study) bool {
			return st.Subjects == "units" && st.BlockName == "block"
		}, "", ""},
		{"study named", Size{Req: base, Design: "rcbd", Study: report.Study{Subjects: "animals", BlockName: "litter"}}, func(_ power.Request, st report.Study) bool {
			return st.Subjects == "animals" && st.BlockName == "litter"
		}, "", ""},
		{"subjects", Size{Design: "crd", Study: report.Study{Subjects: "mice"}}, nil, "subjects", "--subjects mice: must be animals, plants or units"},
		{"too many groups", Size{Req: power.Request{Groups: power.MaxCells + 1}, Design: "crd", Given: map[string]bool{"groups": true}}, nil, "groups", "groups are supported"},
		{"factor too many levels", Size{Design: "crd", Factors: []string{"dose=100000"}}, nil, "factor", "at most"},
		{"bad design", Size{Design: "latin"}, nil, "design", "--design latin: must be crd"},
		{"one block", Size{Design: "crd", Blocks: 1, Given: map[string]bool{"blocks": true}}, nil, "blocks", "at least 2 blocks"},
		{"blocks and n", Size{Design: "crd", Blocks: 4, Given: map[string]bool{"blocks": true, "n": true}}, nil, "blocks", "not both"},
		{"factor syntax", Size{Design: "crd", Factors: []string{"dose"}}, nil, "factor", "NAME=LEVELS"},
		{"factor repeated level", Size{Design: "crd", Factors: []string{"diet=a,a"}}, nil, "factor", "distinct"},
		{"factor one level", Size{Design: "crd", Factors: []string{"dose=1"}}, nil, "factor", "at least 2 levels"},
		{"means", Size{Design: "crd", Means: "1,x"}, nil, "means", `"x" is not a number`},
		{"ratios", Size{Design: "crd", Ratios: "2,,1"}, nil, "ratios", "not a number"},
		{"compare", Size{Design: "crd", Compare: "all"}, nil, "compare", "control, dunnett, pairs (Tukey) or pairs-bonferroni"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			r, st, err := tt.in.Request()
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
			if !tt.check(r, st) {
				t.Errorf("request %+v, study %+v", r, st)
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
