package power

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// TestSplitPlotPowerReference compares with
// testdata/reference/splitplot_power.json (gen_splitplot_power.py:
// noncentralities from the expected mean squares in numpy, power from
// scipy.stats.ncf).
func TestSplitPlotPowerReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/splitplot_power.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			A, B    int
			Means   []float64
			SDMain  float64 `json:"sd_main"`
			SDSub   float64 `json:"sd_sub"`
			Blocked bool
			R       int
			Tests   []struct {
				DF1, DF2, Lambda, Power float64
			}
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for _, c := range ref.Cases {
		p := SplitPlotPlan{A: c.A, B: c.B, Means: c.Means, SDMain: c.SDMain, SDSub: c.SDSub, Blocked: c.Blocked, Alpha: 0.05}
		if err := p.Validate(); err != nil {
			t.Fatal(err)
		}
		got := p.Evaluate(c.R)
		for i, w := range c.Tests {
			g := got[i]
			if g.DF1 != w.DF1 || g.DF2 != w.DF2 {
				t.Errorf("%d×%d test %d: df %g, %g; want %g, %g", c.A, c.B, i, g.DF1, g.DF2, w.DF1, w.DF2)
			}
			if math.Abs(g.Lambda-w.Lambda) > 1e-12*w.Lambda {
				t.Errorf("%d×%d test %d: λ %.14g, want %.14g", c.A, c.B, i, g.Lambda, w.Lambda)
			}
			if math.Abs(g.Power-w.Power) > 1e-9 {
				t.Errorf("%d×%d test %d: power %.12f, want %.12f", c.A, c.B, i, g.Power, w.Power)
			}
		}
	}
}

func TestSplitPlotSolve(t *testing.T) {
	p := SplitPlotPlan{A: 3, B: 4, Means: []float64{10, 11, 12, 12.5, 11, 12, 13, 14, 12, 13.5, 14, 15}, SDMain: 1.5, SDSub: 1, Blocked: true, Alpha: 0.05}
	for term := 0; term < 3; term++ {
		r, tests, err := p.Solve(term, 0.8)
		if err != nil {
			t.Fatal(err)
		}
		if tests[term].Power < 0.8 {
			t.Errorf("term %d: r %d has power %.4f", term, r, tests[term].Power)
		}
		if r > 2 && p.Evaluate(r - 1)[term].Power >= 0.8 {
			t.Errorf("term %d: r %d − 1 already reaches 0.8", term, r)
		}
	}
	if _, _, err := (SplitPlotPlan{A: 2, B: 2, Means: []float64{1, 1, 1, 1}, SDSub: 1, Alpha: 0.05}).Solve(0, 0.8); err == nil {
		t.Error("no effect accepted")
	}
}
