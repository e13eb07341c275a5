package analyze

import (
	"math"
	"strconv"
	"strings"
	"testing"

	"github.com/allotproject/allot/column"
)

func TestHolmAdjust(t *testing.T) {
	// Worked by hand from Holm's definition: sorted p 0.005, 0.01, 0.03,
	// 0.04 are multiplied by 4, 3, 2, 1 (0.02, 0.03, 0.06, 0.04) and made
	// monotone (0.02, 0.03, 0.06, 0.06).
	got := HolmAdjust([]float64{0.01, 0.04, 0.03, 0.005})
	want := []float64{0.03, 0.06, 0.06, 0.02}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-15 {
			t.Errorf("adjusted %v, want %v", got, want)
			break
		}
	}
}

func TestLetters(t *testing.T) {
	g := []Group{{Level: "A", LSMean: 30}, {Level: "B", LSMean: 20}, {Level: "C", LSMean: 10}, {Level: "D", LSMean: 5}}
	tests := []struct {
		name string
		sig  [][2]int
		want string
	}{
		{"none differ", nil, "a a a a"},
		{"all differ", [][2]int{{0, 1}, {0, 2}, {0, 3}, {1, 2}, {1, 3}, {2, 3}}, "a b c d"},
		{"ends differ", [][2]int{{0, 3}}, "a ab ab b"},
		// A differs from C and D; B from D: A=a, B=ab, C=bc, D=c.
		{"staircase", [][2]int{{0, 2}, {0, 3}, {1, 3}}, "a ab bc c"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sig := map[[2]int]bool{}
			for _, p := range tt.sig {
				sig[p] = true
			}
			got := strings.Join(Letters(g, func(a, b int) bool { return sig[[2]int{a, b}] }), " ")
			if got != tt.want {
				t.Errorf("letters %q, want %q", got, tt.want)
			}
		})
	}
}

func oneWayData() Data {
	// Three groups with a clear difference; decimal text as typed.
	vals := map[string][]string{
		"ctl": {"10.1", "9.8", "10.4", "10.0", "9.7"},
		"lo":  {"11.0", "11.4", "10.9", "11.6", "11.2"},
		"hi":  {"12.9", "13.3", "12.6", "13.0", "13.5"},
	}
	d := Data{Response: "y", Factors: []Column{{Name: "dose", Levels: []string{"ctl", "lo", "hi"}}}}
	for _, l := range []string{"ctl", "lo", "hi"} {
		for i, v := range vals[l] {
			d.Values = d.Values.Append(v)
			d.Factors[0].Values = d.Factors[0].Values.Append(l)
			d.Units = d.Units.Append(l + string(rune('1'+i)))
		}
	}
	return d
}

func TestRunPostHocMethods(t *testing.T) {
	d := oneWayData()
	for _, m := range []string{MethodTukey, MethodHolm, MethodDunnett} {
		res, err := Run(d, RunOptions{PostHoc: m, Control: "ctl"})
		if err != nil {
			t.Fatal(err)
		}
		if len(res.PostHoc) != 1 {
			t.Fatalf("%s: %d post-hoc sets", m, len(res.PostHoc))
		}
		ph := res.PostHoc[0]
		for _, c := range ph.Pairs {
			if !(c.P < 0.001) {
				t.Errorf("%s %s: p = %g, want < 0.001 for these well-separated groups", m, c.Pair, c.P)
			}
			if !(c.Lower < c.Diff && c.Diff < c.Upper) {
				t.Errorf("%s %s: interval [%g, %g] misses %g", m, c.Pair, c.Lower, c.Upper, c.Diff)
			}
		}
		wantPairs := map[string]int{MethodTukey: 3, MethodHolm: 3, MethodDunnett: 2}[m]
		if len(ph.Pairs) != wantPairs {
			t.Errorf("%s: %d pairs, want %d", m, len(ph.Pairs), wantPairs)
		}
		if m != MethodDunnett && strings.Join(ph.Letters, " ") != "c b a" {
			t.Errorf("%s letters %v", m, ph.Letters)
		}
	}
	if _, err := Run(d, RunOptions{PostHoc: MethodDunnett, Control: "placebo"}); err == nil || !strings.Contains(err.Error(), `control "placebo" is not a level`) {
		t.Errorf("unknown control: %v", err)
	}
}

func TestRunFlagsOutlier(t *testing.T) {
	d := oneWayData()
	vs := d.Values.Strings()
	vs[3] = "19.0" // a typing slip in ctl
	where := make([]string, d.Values.Len())
	for i := range where {
		where[i] = "Entry!E" + string(rune('2'+i))
	}
	d.Where = column.Of(where)
	res, err := Run(d, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	o := res.Assumptions.Outliers
	if len(o) == 0 || o[0].Unit != "ctl4" || o[0].Where != "Entry!E5" {
		t.Errorf("outliers %+v", o)
	}
}

func TestRunInteractionSimpleEffects(t *testing.T) {
	// 2×2 with a crossing interaction: K raises y at N0 and lowers it at N1.
	d := Data{Response: "y", Factors: []Column{{Name: "N"}, {Name: "K"}}}
	cells := map[[2]string][]string{
		{"N0", "K0"}: {"10.0", "10.5", "9.8"}, {"N0", "K1"}: {"14.2", "13.8", "14.5"},
		{"N1", "K0"}: {"14.1", "14.4", "13.7"}, {"N1", "K1"}: {"10.2", "9.9", "10.6"},
	}
	for _, n := range []string{"N0", "N1"} {
		for _, k := range []string{"K0", "K1"} {
			for _, v := range cells[[2]string{n, k}] {
				d.Values = d.Values.Append(v)
				d.Factors[0].Values = d.Factors[0].Values.Append(n)
				d.Factors[1].Values = d.Factors[1].Values.Append(k)
			}
		}
	}
	res, err := Run(d, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Simple) != 2 || res.Simple[0].Within != "K = K0" || len(res.Notes) == 0 {
		t.Fatalf("simple effects %+v notes %v", res.Simple, res.Notes)
	}
	for _, s := range res.Simple {
		if s.Pairs[0].P >= 0.001 {
			t.Errorf("%s: p %g", s.Within, s.Pairs[0].P)
		}
	}
}

func TestFitErrors(t *testing.T) {
	d := oneWayData()
	bad := d
	vs := append([]string(nil), d.Values.Strings()...)
	vs[0] = "abc"
	bad.Values = column.Of(vs)
	if _, err := Fit(bad, Options{}); err == nil || !strings.Contains(err.Error(), `"abc" is not a decimal number`) {
		t.Errorf("text value: %v", err)
	}
	one := Data{Response: "y", Values: column.Of([]string{"1", "2"}), Factors: []Column{{Name: "f", Values: column.Of([]string{"a", "a"})}}}
	if _, err := Fit(one, Options{}); err == nil || !strings.Contains(err.Error(), "only one level") {
		t.Errorf("one level: %v", err)
	}
	single := Data{Response: "y", Values: column.Of([]string{"1", "2", "3"}), Factors: []Column{{Name: "f", Values: column.Of([]string{"a", "b", "c"})}}}
	if _, err := Fit(single, Options{}); err == nil || !strings.Contains(err.Error(), "no residual degrees of freedom") {
		t.Errorf("one per group: %v", err)
	}
	if _, err := Fit(d, Options{SSType: 4}); err == nil || !strings.Contains(err.Error(), "must be 1, 2 or 3") {
		t.Errorf("ss type: %v", err)
	}
	empty := Data{Response: "y", Factors: []Column{{Name: "A"}, {Name: "B"}}}
	for _, c := range [][3]string{{"a1", "b1", "1"}, {"a1", "b1", "2"}, {"a1", "b2", "3"}, {"a1", "b2", "4"}, {"a2", "b1", "5"}, {"a2", "b1", "6"}} {
		empty.Factors[0].Values = empty.Factors[0].Values.Append(c[0])
		empty.Factors[1].Values = empty.Factors[1].Values.Append(c[1])
		empty.Values = empty.Values.Append(c[2])
	}
	// An empty cell: Types I and II of the main effects are estimable (and
	// equal, by hand, to those of the additive model A + B); A × B is left
	// out; Type III says A and B are not testable.
	// Source: testdata/reference/extras.json "empty_cell" (statsmodels
	// anova_lm of y ~ A + B, gen_extras.py): SS, F, p to 1e-10.
	ref := loadExtras(t).EmptyCell
	for typ := 1; typ <= 3; typ++ {
		tab, err := Fit(empty, Options{SSType: typ})
		if err != nil {
			t.Fatalf("type %d: %v", typ, err)
		}
		if len(tab.Terms) != 2 || len(tab.NotEstimable) != 1 || tab.NotEstimable[0] != "A × B" || !tab.EmptyCells {
			t.Fatalf("type %d: terms %+v, not estimable %v", typ, tab.Terms, tab.NotEstimable)
		}
		for _, r := range tab.Terms {
			if typ == 3 && (r.NotTestable == "" || !math.IsNaN(r.F)) || typ < 3 && (r.NotTestable != "" || math.IsNaN(r.F)) {
				t.Errorf("type %d %s: F %g, not testable %q", typ, r.Source, r.F, r.NotTestable)
			}
		}
		if typ < 3 {
			for i, w := range ref[strconv.Itoa(typ)] {
				r := tab.Terms[i]
				if !near(r.SS, w.SS, 1e-10, 1e-12) || !near(r.F, w.F, 1e-10, 0) || !near(r.P, w.P, 1e-10, 0) {
					t.Errorf("type %d %s: SS %g F %g p %g; statsmodels %g %g %g", typ, r.Source, r.SS, r.F, r.P, w.SS, w.F, w.P)
				}
			}
		}
	}
	if res, err := Run(empty, RunOptions{Options: Options{SSType: 2}}); err != nil || !strings.Contains(strings.Join(res.Notes, " "), "empty cells") {
		t.Errorf("Run with an empty cell: %v", err)
	}
}

func TestAverageSubsamples(t *testing.T) {
	d := Data{Response: "y", Subsamples: [][]string{{"10", "11", "10"}, {"1000000000000.1", "1000000000000.2"}}, Factors: []Column{{Name: "f", Values: column.Of([]string{"a", "b"})}}}
	got, s, err := Average(d)
	if err != nil {
		t.Fatal(err)
	}
	// Exact means: 31/3, and 1000000000000.15 = 20000000000003/20.
	if got.Values.At(0) != "31/3" || got.Values.At(1) != "20000000000003/20" {
		t.Errorf("means %v", got.Values)
	}
	// Pooled within-unit variance: (2/3 + 0.005)/(2 + 1), by hand.
	if s.DF != 3 || math.Abs(s.Variance-(2.0/3+0.005)/3) > 1e-12 || s.Measurements != 5 {
		t.Errorf("sampling %+v", s)
	}
}
