package analyze

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/allotproject/allot/column"
)

// Exact zero decisions. References: exact fractions (the data are chosen
// so that the sums of squares named are 0 in rational arithmetic, which
// the comments derive by hand).
func TestExactZeros(t *testing.T) {
	col := func(name string, v ...string) Column { return Column{Name: name, Values: column.Of(v)} }
	tests := []struct {
		name      string
		d         Data
		exactFit  bool
		zeroTerms []string
	}{
		{
			// Cell means 1, 2, 3, 4 (A adds 1, B adds 2): the interaction
			// contrast 1 − 2 − 3 + 4 = 0 exactly; within-cell values equal,
			// so the residual is exactly 0 too.
			name: "exactly additive 2×2, constant cells",
			d: Data{Response: "y", Values: column.Of([]string{"0.1", "0.1", "1.1", "1.1", "2.1", "2.1", "3.1", "3.1"}),
				Factors: []Column{col("A", "a1", "a1", "a2", "a2", "a1", "a1", "a2", "a2"), col("B", "b1", "b1", "b1", "b1", "b2", "b2", "b2", "b2")}},
			exactFit: true, zeroTerms: []string{"A × B"},
		},
		{
			// Additive cell means 10.3, 10.5, 10.8, 11.0 with replicate
			// deviations ±0.1: interaction SS exactly 0, residual 0.04·... > 0.
			name: "exactly additive 2×2 with replicate noise",
			d: Data{Response: "y", Values: column.Of([]string{"10.2", "10.4", "10.4", "10.6", "10.7", "10.9", "10.9", "11.1"}),
				Factors: []Column{col("A", "a1", "a1", "a2", "a2", "a1", "a1", "a2", "a2"), col("B", "b1", "b1", "b1", "b1", "b2", "b2", "b2", "b2")}},
			zeroTerms: []string{"A × B"},
		},
		{
			name:     "all values equal",
			d:        Data{Response: "y", Values: column.Of([]string{"7.25", "7.25", "7.25", "7.25", "7.25", "7.25"}), Factors: []Column{col("g", "a", "a", "b", "b", "c", "c")}},
			exactFit: true, zeroTerms: []string{"g"},
		},
		{
			name:     "constant within groups",
			d:        Data{Response: "y", Values: column.Of([]string{"1.1", "1.1", "1.1", "2.3", "2.3", "2.3"}), Factors: []Column{col("g", "a", "a", "a", "b", "b", "b")}},
			exactFit: true,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			for _, typ := range []int{1, 2, 3} {
				tab, err := Fit(tt.d, Options{SSType: typ})
				if err != nil {
					t.Fatal(err)
				}
				if tab.ExactFit != tt.exactFit {
					t.Errorf("type %d: exact fit %v, want %v (residual SS %g)", typ, tab.ExactFit, tt.exactFit, tab.Residual.SS)
				}
				for _, r := range tab.Terms {
					want := false
					for _, z := range tt.zeroTerms {
						want = want || z == r.Source
					}
					if r.SSZero != want || want && r.SS != 0 {
						t.Errorf("type %d %s: SS %g zero=%v, want zero=%v", typ, r.Source, r.SS, r.SSZero, want)
					}
					if tt.exactFit && !math.IsNaN(r.F) {
						t.Errorf("type %d %s: F %g on an exact fit, want undefined", typ, r.Source, r.F)
					}
					if !tt.exactFit && want && (r.F != 0 || r.P != 1) {
						t.Errorf("type %d %s: F %g p %g for an exactly zero SS, want 0 and 1", typ, r.Source, r.F, r.P)
					}
				}
			}
			res, err := Run(tt.d, RunOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if tt.exactFit != res.Undefined || tt.exactFit && (len(res.PostHoc) > 0 || len(res.Simple) > 0 || len(res.Assumptions.Outliers) > 0 || res.Assumptions.NormalOK) {
				t.Errorf("exact fit %v: undefined %v, %d comparisons, %d simple, normality tested %v", tt.exactFit, res.Undefined, len(res.PostHoc), len(res.Simple), res.Assumptions.NormalOK)
			}
			if tt.name == "exactly additive 2×2 with replicate noise" && len(res.Simple) > 0 {
				t.Errorf("simple effects ran for an exactly zero interaction")
			}
		})
	}
}

// Scale invariance: data near 1e-300 and 1e200 give the F, p, W and
// verdicts of the same data at ordinary scale, and means, SDs, SEs scaled
// by the factor. Reference: the analysis of the unscaled data (itself
// checked against statsmodels in reference_test.go).
func TestScaleInvariance(t *testing.T) {
	base := []string{"12.1", "13.4", "11.8", "12.9", "15.2", "14.8", "16.1", "15.5", "13.9", "14.4", "13.1", "14.0"}
	g := Column{Name: "g", Values: column.Of([]string{"a", "a", "a", "a", "b", "b", "b", "b", "c", "c", "c", "c"})}
	ref, err := Run(Data{Response: "y", Values: column.Of(base), Factors: []Column{g}}, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, exp := range []int{-300, -200, 160, 200, 290} {
		var vals []string
		for _, v := range base {
			vals = append(vals, v+fmt.Sprintf("e%d", exp))
		}
		res, err := Run(Data{Response: "y", Values: column.Of(vals), Factors: []Column{g}}, RunOptions{})
		if err != nil {
			t.Fatal(err)
		}
		k := math.Pow(10, float64(exp))
		tb, rt := res.Table, ref.Table
		if !near(tb.Terms[0].F, rt.Terms[0].F, 1e-12, 0) || !near(tb.Terms[0].P, rt.Terms[0].P, 1e-10, 0) {
			t.Errorf("1e%d: F %g p %g, unscaled F %g p %g", exp, tb.Terms[0].F, tb.Terms[0].P, rt.Terms[0].F, rt.Terms[0].P)
		}
		if !near(tb.ResidSD, rt.ResidSD*k, 1e-12, 0) || !near(tb.GrandMean, rt.GrandMean*k, 1e-12, 0) {
			t.Errorf("1e%d: residual SD %g mean %g, want %g %g", exp, tb.ResidSD, tb.GrandMean, rt.ResidSD*k, rt.GrandMean*k)
		}
		for i, gr := range res.Groups[0] {
			w := ref.Groups[0][i]
			if !near(gr.SD, w.SD*k, 1e-12, 0) || !near(gr.SE, w.SE*k, 1e-12, 0) || !near(gr.LSMean, w.LSMean*k, 1e-12, 0) {
				t.Errorf("1e%d %s: SD %g SE %g LS %g, want %g %g %g", exp, gr.Level, gr.SD, gr.SE, gr.LSMean, w.SD*k, w.SE*k, w.LSMean*k)
			}
		}
		a, b := res.Assumptions, ref.Assumptions
		if !a.NormalOK || !near(a.ShapiroW, b.ShapiroW, 1e-10, 0) || !near(a.LeveneP, b.LeveneP, 1e-10, 0) {
			t.Errorf("1e%d: W %g BF p %g, unscaled %g %g", exp, a.ShapiroW, a.LeveneP, b.ShapiroW, b.LeveneP)
		}
		for _, v := range a.Verdicts {
			if strings.Contains(v, "NaN") {
				t.Errorf("1e%d: verdict from NaN: %s", exp, v)
			}
		}
		if !near(res.PostHoc[0].Pairs[0].P, ref.PostHoc[0].Pairs[0].P, 1e-9, 1e-12) {
			t.Errorf("1e%d: Tukey p %g, unscaled %g", exp, res.PostHoc[0].Pairs[0].P, ref.PostHoc[0].Pairs[0].P)
		}
	}
}
