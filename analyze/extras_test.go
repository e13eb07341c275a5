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

type extrasRef struct {
	Trend struct {
		Rows      []struct{ Dose, Y string }
		DF        int
		Contrasts []struct {
			Degree             int
			Coef               []float64
			Estimate, SE, T, P float64
		}
		TreatmentSS float64 `json:"treatment_ss"`
	}
	Losses struct {
		Enrolled, Lost []int
		Chi2, P        float64
		DF             int
		MinExpected    float64 `json:"min_expected"`
	}
	EmptyCell map[string][]struct{ SS, F, P float64 } `json:"empty_cell"`
	SmallP    struct {
		Rows []struct{ G, Y string }
		F, P float64
	} `json:"small_p"`
	RandomBlocks struct {
		Rows     []struct{ Block, Trt, Y string }
		F, P     float64
		DF1, DF2 int
	} `json:"random_blocks"`
}

func loadExtras(t *testing.T) extrasRef {
	raw, err := os.ReadFile("../testdata/reference/extras.json")
	if err != nil {
		t.Fatal(err)
	}
	var r extrasRef
	if err := json.Unmarshal(raw, &r); err != nil {
		t.Fatal(err)
	}
	return r
}

// Source: testdata/reference/extras.json "trend" (numpy QR of the
// Vandermonde matrix, statsmodels MSE, scipy t), gen_extras.py. Unequal
// doses 0, 1, 2, 4, 8. Coefficients to 1e-12, estimates, SEs, t to 1e-10,
// p to 1e-10 relative; in this balanced design the degrees' SS add up to
// the dose SS (statsmodels anova_lm) to 1e-10.
func TestTrendContrasts(t *testing.T) {
	ref := loadExtras(t).Trend
	d := Data{Response: "y", Factors: []Column{{Name: "dose"}}}
	for _, r := range ref.Rows {
		d.Values = d.Values.Append(r.Y)
		d.Factors[0].Values = d.Factors[0].Values.Append(r.Dose)
	}
	res, err := Run(d, RunOptions{Trend: []string{"dose"}})
	if err != nil {
		t.Fatal(err)
	}
	tr := res.Trends[0]
	var ss float64
	for i, w := range ref.Contrasts {
		g := tr.Rows[i]
		for j := range w.Coef {
			if math.Abs(g.Coef[j]-w.Coef[j]) > 1e-12 {
				t.Errorf("degree %d coefficient %d: %.15f, numpy %.15f", w.Degree, j, g.Coef[j], w.Coef[j])
			}
		}
		if !near(g.Estimate, w.Estimate, 1e-10, 1e-12) || !near(g.SE, w.SE, 1e-10, 0) || !near(g.T, w.T, 1e-10, 1e-12) || !near(g.P, w.P, 1e-10, 1e-15) {
			t.Errorf("degree %d: est %g SE %g t %g p %g; reference %g %g %g %g", w.Degree, g.Estimate, g.SE, g.T, g.P, w.Estimate, w.SE, w.T, w.P)
		}
		ss += g.SS
	}
	if !near(ss, ref.TreatmentSS, 1e-10, 0) {
		t.Errorf("trend SS sum %g, dose SS %g", ss, ref.TreatmentSS)
	}
	// Equally spaced levels give the tabled coefficients −3, −1, 1, 3 (and
	// 1, −1, −1, 1) up to scale (Fisher and Yates, Statistical Tables,
	// Table XXIII; from memory).
	eq := Data{Response: "y", Values: column.Of([]string{"1", "2", "2.5", "4", "3", "5", "6.5", "7"}), Factors: []Column{{Name: "rate", Values: column.Of([]string{"10", "10", "20", "20", "30", "30", "40", "40"})}}}
	tab, err := Fit(eq, Options{})
	if err != nil {
		t.Fatal(err)
	}
	te, err := TrendContrasts(eq, tab, 0)
	if err != nil {
		t.Fatal(err)
	}
	for deg, want := range [][]float64{{-3, -1, 1, 3}, {1, -1, -1, 1}} {
		c := te.Rows[deg].Coef
		k := c[3] / want[3]
		for j := range want {
			if math.Abs(c[j]-k*want[j]) > 1e-12 {
				t.Errorf("degree %d: coefficients %v, table %v", deg+1, c, want)
			}
		}
	}
	if _, err := Run(Data{Response: "y", Values: column.Of([]string{"1", "2", "3", "4"}), Factors: []Column{{Name: "g", Values: column.Of([]string{"a", "a", "b", "b"})}}}, RunOptions{Trend: []string{"g"}}); err == nil || !strings.Contains(err.Error(), "is not a number") {
		t.Errorf("non-numeric levels: %v", err)
	}
}

// Source: testdata/reference/extras.json "losses", scipy.stats.
// chi2_contingency without continuity correction (gen_extras.py).
func TestLossTable(t *testing.T) {
	ref := loadExtras(t).Losses
	var d Data
	d.Response = "y"
	f := Column{Name: "trt"}
	names := []string{"A", "B", "C"}
	for i, n := range names {
		for k := 0; k < ref.Enrolled[i]-ref.Lost[i]; k++ {
			d.Values = d.Values.Append("1.5")
			f.Values = f.Values.Append(n)
		}
		for k := 0; k < ref.Lost[i]; k++ {
			st := "lost"
			if k%2 == 1 {
				st = "excluded"
			}
			d.Lost = append(d.Lost, LostUnit{Unit: n + "x", Levels: []string{n}, Status: st, Reason: "died before day 14"})
		}
	}
	d.Factors = []Column{f}
	l, err := LossTable(d)
	if err != nil {
		t.Fatal(err)
	}
	for i, r := range l.Rows {
		if r.Treatment != names[i] || r.Enrolled != ref.Enrolled[i] || r.Lost+r.Excluded != ref.Lost[i] || r.Analysed != ref.Enrolled[i]-ref.Lost[i] || len(r.Reasons) != ref.Lost[i] {
			t.Errorf("row %+v", r)
		}
	}
	if !near(l.Test.Chi2, ref.Chi2, 1e-12, 0) || !near(l.Test.P, ref.P, 1e-10, 0) || l.Test.DF != ref.DF || !near(l.Test.MinExpected, ref.MinExpected, 1e-12, 0) {
		t.Errorf("test %+v; scipy χ² %g p %g df %d", *l.Test, ref.Chi2, ref.P, ref.DF)
	}
	l.warn(0.05)
	if (ref.P < 0.05) != (l.Warning != "") || !strings.Contains(l.Warning, "Pearson χ²") {
		t.Errorf("warning %q at p %g", l.Warning, ref.P)
	}
}

// Source: testdata/reference/extras.json "random_blocks": statsmodels
// anova_lm Type I SS of a generalised block design, treatment F = MS_trt /
// MS_block×trt, scipy f.sf (gen_extras.py).
func TestRandomBlocks(t *testing.T) {
	ref := loadExtras(t).RandomBlocks
	d := Data{Response: "y", Factors: []Column{{Name: "trt"}}, Block: &Column{Name: "block"}, BlockInteraction: true}
	for _, r := range ref.Rows {
		d.Values = d.Values.Append(r.Y)
		d.Factors[0].Values = d.Factors[0].Values.Append(r.Trt)
		d.Block.Values = d.Block.Values.Append(r.Block)
	}
	if !Replicated(d) {
		t.Fatal("two units per treatment per block should count as replicated")
	}
	res, err := Run(d, RunOptions{Options: Options{SSType: 1}, RandomBlocks: true})
	if err != nil {
		t.Fatal(err)
	}
	var got *Term
	for i := range res.Table.Terms {
		if res.Table.Terms[i].Source == "trt" {
			got = &res.Table.Terms[i]
		}
	}
	if got.ErrorTerm != "block × trt" || got.ErrorDF != ref.DF2 || !near(got.F, ref.F, 1e-10, 0) || !near(got.P, ref.P, 1e-10, 0) {
		t.Errorf("trt: F %g p %g against %q (df %d); statsmodels F %g p %g df %d", got.F, got.P, got.ErrorTerm, got.ErrorDF, ref.F, ref.P, ref.DF2)
	}
	if !strings.Contains(strings.Join(res.Notes, " "), "treated as random") {
		t.Errorf("notes do not say blocks are random: %v", res.Notes)
	}
	// The comparisons use the same error as the F test.
	if ph := res.PostHoc[0]; ph.DF != ref.DF2 {
		t.Errorf("comparisons on df %d, want the block × trt df %d", ph.DF, ref.DF2)
	}
}

// Dunnett one-sided in both directions: "lower" is "higher" on the negated
// response (an identity), and its bounds are open on the other side.
func TestDunnettDirection(t *testing.T) {
	d := Data{Response: "y", Values: column.Of([]string{"10", "11", "10.5", "8", "8.4", "9", "11.5", "12", "11"}), Factors: []Column{{Name: "g", Values: column.Of([]string{"c", "c", "c", "a", "a", "a", "b", "b", "b"})}}}
	neg := d
	neg.Values = column.Text{}
	for _, v := range d.Values.Strings() {
		neg.Values = neg.Values.Append("-" + v)
	}
	lo, err := Run(d, RunOptions{PostHoc: MethodDunnett, Control: "c", Sides: 1, Direction: "lower"})
	if err != nil {
		t.Fatal(err)
	}
	hi, err := Run(neg, RunOptions{PostHoc: MethodDunnett, Control: "c", Sides: 1, Direction: "higher"})
	if err != nil {
		t.Fatal(err)
	}
	for i := range lo.PostHoc[0].Pairs {
		a, b := lo.PostHoc[0].Pairs[i], hi.PostHoc[0].Pairs[i]
		if !near(a.P, b.P, 1e-12, 1e-15) || !math.IsInf(a.Lower, -1) || !near(a.Upper, -b.Lower, 1e-12, 1e-12) {
			t.Errorf("%s: lower p %g (%g, %g); higher on −y p %g (%g, %g)", a.Pair, a.P, a.Lower, a.Upper, b.P, b.Lower, b.Upper)
		}
	}
	if !strings.Contains(lo.PostHoc[0].Method, "treatment < control") {
		t.Errorf("method %q", lo.PostHoc[0].Method)
	}
}

// Small p-values keep their digits: F on 3 and 1000 df with p near 1e-51.
// Source: testdata/reference/extras.json "small_p" (statsmodels F, the tail
// from 30-digit mpmath betainc; gen_extras.py). F to 1e-10, p to 1e-9
// relative (1 − CDF would give 0).
func TestSmallPKeepsDigits(t *testing.T) {
	ref := loadExtras(t).SmallP
	d := Data{Response: "y", Factors: []Column{{Name: "g"}}}
	for _, r := range ref.Rows {
		d.Values = d.Values.Append(r.Y)
		d.Factors[0].Values = d.Factors[0].Values.Append(r.G)
	}
	tab, err := Fit(d, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if tab.Residual.DF != 1000 || !near(tab.Terms[0].F, ref.F, 1e-10, 0) || !near(tab.Terms[0].P, ref.P, 1e-9, 0) {
		t.Errorf("F(%d, %d) = %.12g p %.12g; reference F %.12g p %.12g", tab.Terms[0].DF, tab.Residual.DF, tab.Terms[0].F, tab.Terms[0].P, ref.F, ref.P)
	}
}

// A block left with one unit: Fit (allot analyze) and Engine.Fit (the
// Monte-Carlo simulation) give the same sums of squares, and Run says the
// unit carries no information. Reference: the same data without that
// block's unit fitted by Fit (the unit is absorbed by its block effect, so
// the treatment and residual SS must be equal to 1e-10).
func TestSingleUnitBlockAgrees(t *testing.T) {
	d := Data{Response: "y",
		Values:  column.Of([]string{"10.1", "11.3", "12.0", "9.8", "11.0", "12.4", "10.5", "11.9", "12.2", "13.0"}),
		Factors: []Column{{Name: "trt", Values: column.Of([]string{"a", "b", "c", "a", "b", "c", "a", "b", "c", "b"})}},
		Block:   &Column{Name: "block", Values: column.Of([]string{"1", "1", "1", "2", "2", "2", "3", "3", "3", "4"})}}
	tab, err := Fit(d, Options{})
	if err != nil {
		t.Fatal(err)
	}
	eng, err := NewEngine(d, 3)
	if err != nil {
		t.Fatal(err)
	}
	y := make([]float64, d.Values.Len())
	for i, v := range d.Values.Strings() {
		y[i], _ = strconv.ParseFloat(v, 64)
	}
	f, err := eng.Fit(y, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !near(f.ResSS, tab.Residual.SS, 1e-10, 1e-12) || f.ResDF != tab.Residual.DF {
		t.Errorf("engine residual %g (df %d), Fit %g (df %d)", f.ResSS, f.ResDF, tab.Residual.SS, tab.Residual.DF)
	}
	for k := range tab.Terms {
		if !near(f.SS[k], tab.Terms[k].SS, 1e-10, 1e-12) {
			t.Errorf("%s: engine SS %g, Fit %g", tab.Terms[k].Source, f.SS[k], tab.Terms[k].SS)
		}
	}
	without := Data{Response: "y", Values: d.Values.Slice(0, 9), Factors: []Column{{Name: "trt", Values: d.Factors[0].Values.Slice(0, 9)}}, Block: &Column{Name: "block", Values: d.Block.Values.Slice(0, 9)}}
	ref, err := Fit(without, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if !near(tab.Terms[1].SS, ref.Terms[1].SS, 1e-10, 1e-12) || !near(tab.Residual.SS, ref.Residual.SS, 1e-10, 1e-12) {
		t.Errorf("trt SS %g residual %g; without the lone unit %g %g", tab.Terms[1].SS, tab.Residual.SS, ref.Terms[1].SS, ref.Residual.SS)
	}
	res, err := Run(d, RunOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(res.Notes, " "), "block 4 hold(s) a single unit") {
		t.Errorf("notes %v", res.Notes)
	}
}
