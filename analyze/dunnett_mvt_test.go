package analyze

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// Source: testdata/reference/dunnett_mvt.json — statsmodels OLS for the
// differences, SEs and their correlations, and a 10^7-draw Monte Carlo of
// the multivariate t for the adjusted p-values (with their SEs), made by
// testdata/reference/gen_dunnett_mvt.py. A block design with missing
// plots: the correlations are not of product form, so the p-values come
// from the QMC integration; they must agree with the Monte Carlo within
// 3 of its SEs plus the stated QMC bound.
func TestDunnettMissingPlotsMonteCarlo(t *testing.T) {
	raw, err := os.ReadFile("../testdata/reference/dunnett_mvt.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Rows []struct{ Block, Trt, Y string }
		DF   int
		Corr [][]float64
		Comp []struct {
			Level       string
			Diff, SE, T float64
			P2j         float64 `json:"p2"`
			P2SEj       float64 `json:"p2_se"`
			P1j         float64 `json:"p1"`
			P1SEj       float64 `json:"p1_se"`
		} `json:"comparisons"`
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	d := Data{Response: "y", Factors: []Column{{Name: "trt", Levels: []string{"ctl", "t1", "t2", "t3", "t4"}}}, Block: &Column{Name: "block"}}
	for _, r := range ref.Rows {
		d.Values = d.Values.Append(r.Y)
		d.Factors[0].Values = d.Factors[0].Values.Append(r.Trt)
		d.Block.Values = d.Block.Values.Append(r.Block)
	}
	tab, err := Fit(d, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if tab.Residual.DF != ref.DF {
		t.Fatalf("df %d, statsmodels %d", tab.Residual.DF, ref.DF)
	}
	corr := tab.controlCorrelations(0, 0, []int{1, 2, 3, 4})
	for i := range corr {
		for j := range corr {
			if math.Abs(corr[i][j]-ref.Corr[i][j]) > 1e-10 {
				t.Errorf("correlation %d,%d: %.12f, statsmodels %.12f", i, j, corr[i][j], ref.Corr[i][j])
			}
		}
	}
	if _, ok := productForm(corr); ok {
		t.Fatal("the reference design should not have product-form correlations")
	}
	for _, sides := range []int{2, 1} {
		ph, err := DunnettTest(d, tab, 0, DunnettOptions{Control: "ctl", Sides: sides})
		if err != nil {
			t.Fatal(err)
		}
		if !(ph.ErrorBound > 0 && ph.ErrorBound < 1e-3) {
			t.Errorf("sides %d: error bound %g", sides, ph.ErrorBound)
		}
		for i, c := range ph.Pairs {
			w := ref.Comp[i]
			want, se := w.P2j, w.P2SEj
			if sides == 1 {
				want, se = w.P1j, w.P1SEj
			}
			if !near(c.Diff, w.Diff, 1e-10, 1e-12) || !near(c.SE, w.SE, 1e-10, 1e-12) || !near(c.Q, w.T, 1e-10, 1e-12) {
				t.Errorf("%s: diff %g SE %g t %g; statsmodels %g %g %g", w.Level, c.Diff, c.SE, c.Q, w.Diff, w.SE, w.T)
			}
			if math.Abs(c.P-want) > 3*se+ph.ErrorBound {
				t.Errorf("sides %d %s: p %.6g ± %.2g, Monte Carlo %.6g (SE %.2g)", sides, w.Level, c.P, ph.ErrorBound, want, se)
			}
		}
	}
}
