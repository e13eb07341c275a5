package analyze

import (
	"encoding/json"
	"os"
	"strings"
	"testing"

	"github.com/allotproject/allot/column"
)

// TestANCOVAReference compares with testdata/reference/ancova.json, made by
// gen_ancova.py from statsmodels OLS and anova_lm (see the script).
func TestANCOVAReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/ancova.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			Name    string
			Type    int
			Y, X    []string
			Factors map[string][]string
			Blocks  []string
			Terms   []struct {
				Source   string
				DF       int
				SS, F, P float64
			}
			ResidDF      int     `json:"resid_df"`
			ResidSS      float64 `json:"resid_ss"`
			Slope        float64
			SlopeSE      float64 `json:"slope_se"`
			SlopeT       float64 `json:"slope_t"`
			SlopeP       float64 `json:"slope_p"`
			EqualSlopesF float64 `json:"equal_slopes_f"`
			EqualSlopesP float64 `json:"equal_slopes_p"`
			EqualDF      int     `json:"equal_slopes_df"`
			BalanceF     float64 `json:"balance_f"`
			BalanceP     float64 `json:"balance_p"`
			Means        [][]struct {
				Level    string
				Mean, SE float64
			}
			Pairs [][]struct {
				Pair        string
				Diff, SE, P float64
			}
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	source := func(s string) string {
		switch s {
		case "xc":
			return "weight"
		case "C(block, Sum)":
			return "block"
		}
		s = strings.ReplaceAll(s, "C(A, Sum)", "A")
		s = strings.ReplaceAll(s, "C(B, Sum)", "B")
		return strings.ReplaceAll(s, ":", " × ")
	}
	for _, c := range ref.Cases {
		t.Run(c.Name, func(t *testing.T) {
			d := Data{Response: "y", Values: column.Of(c.Y)}
			for _, f := range []string{"A", "B"} {
				if v, ok := c.Factors[f]; ok {
					d.Factors = append(d.Factors, Column{Name: f, Values: column.Of(v)})
				}
			}
			if c.Blocks != nil {
				d.Block = &Column{Name: "block", Values: column.Of(c.Blocks)}
			}
			r, err := ANCOVA(d, "weight", c.X, Options{SSType: c.Type})
			if err != nil {
				t.Fatal(err)
			}
			got := map[string]Term{}
			for _, tm := range r.Terms {
				got[tm.Source] = tm
			}
			for _, w := range c.Terms {
				g, ok := got[source(w.Source)]
				if !ok {
					t.Fatalf("no term %q (have %v)", source(w.Source), r.Terms)
				}
				if g.DF != w.DF {
					t.Errorf("%s df %d, want %d", g.Source, g.DF, w.DF)
				}
				refNear(t, g.Source+" SS", g.SS, w.SS, 1e-9)
				refNear(t, g.Source+" F", g.F, w.F, 1e-9)
				refNear(t, g.Source+" p", g.P, w.P, 1e-8)
			}
			if r.Residual.DF != c.ResidDF {
				t.Errorf("residual df %d, want %d", r.Residual.DF, c.ResidDF)
			}
			refNear(t, "residual SS", r.Residual.SS, c.ResidSS, 1e-10)
			refNear(t, "slope", r.Slope, c.Slope, 1e-10)
			refNear(t, "slope SE", r.SlopeSE, c.SlopeSE, 1e-10)
			refNear(t, "slope t", r.SlopeT, c.SlopeT, 1e-10)
			refNear(t, "slope p", r.SlopeP, c.SlopeP, 1e-8)
			refNear(t, "equal slopes F", r.EqualSlopes.F, c.EqualSlopesF, 1e-9)
			refNear(t, "equal slopes p", r.EqualSlopes.P, c.EqualSlopesP, 1e-8)
			if r.EqualSlopes.DF1 != c.EqualDF {
				t.Errorf("equal slopes df %d, want %d", r.EqualSlopes.DF1, c.EqualDF)
			}
			refNear(t, "balance F", r.Balance.F, c.BalanceF, 1e-9)
			refNear(t, "balance p", r.Balance.P, c.BalanceP, 1e-8)
			for f, row := range c.Means {
				for l, w := range row {
					g := r.Means[f][l]
					if g.Level != w.Level {
						t.Fatalf("level %q, want %q", g.Level, w.Level)
					}
					refNear(t, w.Level+" adjusted mean", g.Mean, w.Mean, 1e-11)
					refNear(t, w.Level+" SE", g.SE, w.SE, 1e-10)
				}
				for i, w := range c.Pairs[f] {
					g := r.Pairs[f][i]
					refNear(t, w.Pair+" diff", g.Estimate, w.Diff, 1e-10)
					refNear(t, w.Pair+" SE", g.SE, w.SE, 1e-10)
					if d := g.P - w.P; d > 1e-7 || d < -1e-7 {
						t.Errorf("%s p %.10g, want %.10g", w.Pair, g.P, w.P)
					}
				}
			}
		})
	}
}

func TestANCOVARefusesConstantCovariate(t *testing.T) {
	d := Data{Response: "y", Values: column.Of([]string{"1", "2", "3", "4", "5", "6"}),
		Factors: []Column{{Name: "g", Values: column.Of([]string{"a", "a", "a", "b", "b", "b"})}}}
	if _, err := ANCOVA(d, "w", []string{"5", "5", "5", "5", "5", "5"}, Options{}); err == nil {
		t.Fatal("a constant covariate was accepted")
	}
}
