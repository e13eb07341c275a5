package analyze

import (
	"encoding/json"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"github.com/allotproject/allot/column"
)

// robustRef is testdata/reference/robust.json, written by
// testdata/reference/gen_robust.py (scipy 1.10, statsmodels 0.13; see the
// script for the source of each value).
type robustRef struct {
	Welch []struct {
		Name           string
		Values         []string
		Groups         []string
		F, DF1, DF2, P float64
		Pairs          []struct {
			Pair                         string
			Diff, DF, Q, P, Lower, Upper float64
		}
	}
	Kruskal []struct {
		Name   string
		Values []string
		Groups []string
		H, P   float64
		PExact *float64 `json:"p_exact"`
		Dunn   []struct {
			Pair string
			Z, P float64
		}
	}
	Friedman []struct {
		Name    string
		Values  []string
		Groups  []string
		Blocks  []string
		Chi2, P float64
		PExact  *float64 `json:"p_exact"`
		Conover []struct {
			Pair string
			T, P float64
		}
	}
}

func loadRobust(t *testing.T) robustRef {
	t.Helper()
	b, err := os.ReadFile("../testdata/reference/robust.json")
	if err != nil {
		t.Fatal(err)
	}
	var r robustRef
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	return r
}

func refNear(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Max(math.Abs(want), 1e-300) && math.Abs(got-want) > 1e-14 {
		t.Errorf("%s = %.12g, want %.12g (rel. error %.2g, tolerance %.1g)", what, got, want, math.Abs(got-want)/math.Abs(want), rel)
	}
}

func TestWelchReference(t *testing.T) {
	for _, c := range loadRobust(t).Welch {
		t.Run(c.Name, func(t *testing.T) {
			d := Data{Response: "y", Values: column.Of(c.Values), Factors: []Column{{Name: "g", Values: column.Of(c.Groups)}}}
			r, err := Welch(d, 0.05)
			if err != nil {
				t.Fatal(err)
			}
			// statsmodels anova_oneway(use_var="unequal").
			refNear(t, "F", r.F, c.F, 1e-10)
			refNear(t, "df2", r.DF2, c.DF2, 1e-10)
			refNear(t, "p", r.P, c.P, 1e-8)
			if len(r.Pairs) != len(c.Pairs) {
				t.Fatalf("%d pairs, want %d", len(r.Pairs), len(c.Pairs))
			}
			// Games–Howell from its formula with scipy's studentized range.
			for i, w := range c.Pairs {
				g := r.Pairs[i]
				if g.Pair != w.Pair {
					t.Fatalf("pair %d is %q, want %q", i, g.Pair, w.Pair)
				}
				refNear(t, w.Pair+" diff", g.Estimate, w.Diff, 1e-10)
				refNear(t, w.Pair+" df", g.DF, w.DF, 1e-10)
				refNear(t, w.Pair+" q", g.Stat, w.Q, 1e-10)
				if math.Abs(g.P-w.P) > 1e-7 {
					t.Errorf("%s p = %.10g, want %.10g", w.Pair, g.P, w.P)
				}
				refNear(t, w.Pair+" lower", g.Lower, w.Lower, 1e-6)
				refNear(t, w.Pair+" upper", g.Upper, w.Upper, 1e-6)
			}
		})
	}
}

func TestWelchZeroVariance(t *testing.T) {
	d := Data{Response: "y", Values: column.Of([]string{"1", "1", "1", "2", "3", "4"}),
		Factors: []Column{{Name: "g", Values: column.Of([]string{"a", "a", "a", "b", "b", "b"})}}}
	if _, err := Welch(d, 0.05); err == nil {
		t.Fatal("a constant group must be refused")
	}
}

func TestKruskalWallisReference(t *testing.T) {
	for _, c := range loadRobust(t).Kruskal {
		t.Run(c.Name, func(t *testing.T) {
			d := Data{Response: "y", Values: column.Of(c.Values), Factors: []Column{{Name: "g", Values: column.Of(c.Groups)}}}
			r, err := KruskalWallis(d, 0.05)
			if err != nil {
				t.Fatal(err)
			}
			refNear(t, "H", r.Stat, c.H, 1e-12) // scipy.stats.kruskal
			refNear(t, "p", r.P, c.P, 1e-10)
			if c.PExact != nil {
				if !r.Exact {
					t.Fatal("exact p not computed")
				}
				refNear(t, "exact p", r.PExact, *c.PExact, 1e-12) // brute force in the script
			}
			for i, w := range c.Dunn { // Dunn's formula, computed in the script
				refNear(t, w.Pair+" z", r.Pairs[i].Stat, w.Z, 1e-12)
				refNear(t, w.Pair+" p", r.Pairs[i].P, w.P, 1e-10)
			}
		})
	}
}

func TestFriedmanReference(t *testing.T) {
	for _, c := range loadRobust(t).Friedman {
		t.Run(c.Name, func(t *testing.T) {
			d := Data{Response: "y", Values: column.Of(c.Values), Factors: []Column{{Name: "t", Values: column.Of(c.Groups)}},
				Block: &Column{Name: "block", Values: column.Of(c.Blocks)}}
			r, err := Friedman(d, 0.05)
			if err != nil {
				t.Fatal(err)
			}
			refNear(t, "chi2", r.Stat, c.Chi2, 1e-12) // scipy.stats.friedmanchisquare
			refNear(t, "p", r.P, c.P, 1e-10)
			if c.PExact != nil {
				if !r.Exact {
					t.Fatal("exact p not computed")
				}
				refNear(t, "exact p", r.PExact, *c.PExact, 1e-12) // brute force in the script
			}
			for i, w := range c.Conover { // Conover's formula, computed in the script
				refNear(t, w.Pair+" t", r.Pairs[i].Stat, w.T, 1e-12)
				refNear(t, w.Pair+" p", r.Pairs[i].P, w.P, 1e-10)
			}
		})
	}
}

func TestFriedmanNeedsCompleteBlocks(t *testing.T) {
	d := Data{Response: "y", Values: column.Of([]string{"1", "2", "3", "4", "5"}),
		Factors: []Column{{Name: "t", Values: column.Of([]string{"a", "b", "a", "b", "a"})}},
		Block:   &Column{Name: "bench", Values: column.Of([]string{"1", "1", "2", "2", "3"})}}
	if _, err := Friedman(d, 0.05); err == nil {
		t.Fatal("an incomplete block must be refused")
	}
}

func TestTransformReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/robust.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Transform []struct {
			Name, Kind string
			Values     []string
			Groups     []string
			F, P       float64
			Means      []float64
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Transform {
		t.Run(c.Name, func(t *testing.T) {
			d := Data{Response: "y", Values: column.Of(c.Values), Factors: []Column{{Name: "g", Values: column.Of(c.Groups)}}}
			td, err := Transform(d, c.Kind)
			if err != nil {
				t.Fatal(err)
			}
			tab, err := Fit(td, Options{})
			if err != nil {
				t.Fatal(err)
			}
			// statsmodels ols + anova_lm on numpy's transform of the data.
			refNear(t, "F", tab.Terms[0].F, c.F, 1e-10)
			refNear(t, "p", tab.Terms[0].P, c.P, 1e-9)
			gs := summaries([]string{"g1", "g2", "g3", "g4"}[:len(c.Means)], groupIndex(c.Groups), parseAll(t, td.Values.Strings()))
			for i, m := range c.Means {
				refNear(t, "mean", gs[i].Mean, m, 1e-12)
				if bt := BackTransform(c.Kind, gs[i].Mean); c.Kind == TransformLog && math.Abs(math.Log(bt)-m) > 1e-12 {
					t.Errorf("back-transformed log mean %g does not invert %g", bt, m)
				}
			}
		})
	}
}

func TestTransformDomain(t *testing.T) {
	d := Data{Response: "y", Values: column.Of([]string{"0", "1", "2"}), Units: column.Of([]string{"101", "102", "103"}),
		Factors: []Column{{Name: "g", Values: column.Of([]string{"a", "b", "b"})}}}
	for _, kind := range []string{TransformLog, TransformLogit} {
		if _, err := Transform(d, kind); err == nil || !strings.Contains(err.Error(), "unit 101") {
			t.Errorf("%s of 0: %v, want an error naming unit 101", kind, err)
		}
	}
	if _, err := Transform(d, "cube"); err == nil {
		t.Error("unknown transformation accepted")
	}
}

func groupIndex(labels []string) []int {
	seen := map[string]int{}
	out := make([]int, len(labels))
	for i, l := range labels {
		j, ok := seen[l]
		if !ok {
			j = len(seen)
			seen[l] = j
		}
		out[i] = j
	}
	return out
}

func parseAll(t *testing.T, vals []string) []float64 {
	t.Helper()
	out := make([]float64, len(vals))
	for i, s := range vals {
		v, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatal(err)
		}
		out[i] = v
	}
	return out
}
