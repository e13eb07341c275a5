package power

import (
	"errors"
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// SplitPlotPlan is a balanced split plot: A whole-plot levels applied to
// main plots (in R blocks, or R main plots per A level completely at
// random), each main plot split into B sub-plots for the sub-plot levels.
// Means holds the expected A × B cell means, A slowest (a1b1, a1b2, …);
// SDMain is the SD between main plots (of one A level) and SDSub the SD
// between sub-plots of one main plot.
type SplitPlotPlan struct {
	A, B          int
	Means         []float64
	SDMain, SDSub float64
	Blocked       bool
	Alpha         float64
	// WholeName and SubName name the factors in the results.
	WholeName, SubName string
}

// SplitPlotTest is the power of one F test of a split plot.
type SplitPlotTest struct {
	Term     string  `json:"term"`
	DF1      float64 `json:"df1"`
	DF2      float64 `json:"df2"`
	Lambda   float64 `json:"noncentrality"`
	FCrit    float64 `json:"critical_f"`
	Power    float64 `json:"power"`
	ErrorSrc string  `json:"error"`
}

// Validate checks the plan.
func (p SplitPlotPlan) Validate() error {
	switch {
	case p.A < 2 || p.B < 2:
		return errors.New("a split plot needs at least 2 whole-plot and 2 sub-plot levels")
	case len(p.Means) != p.A*p.B:
		return fmt.Errorf("%d means for %d×%d cells: give one per whole-plot × sub-plot cell, whole-plot level slowest", len(p.Means), p.A, p.B)
	case !(p.SDSub > 0) || math.IsInf(p.SDSub, 0):
		return errors.New("the sub-plot SD must be above 0")
	case !(p.SDMain >= 0) || math.IsInf(p.SDMain, 0):
		return errors.New("the main-plot SD must be 0 or more")
	case !(p.Alpha > 0 && p.Alpha < 1):
		return fmt.Errorf("alpha %g: must be between 0 and 1", p.Alpha)
	}
	return nil
}

// Evaluate returns the power of the three F tests at r replicates (blocks,
// or main plots per whole-plot level). With cell means μ_ij, grand mean μ,
// A effects α_i = μ_i. − μ, B effects β_j = μ_.j − μ and interactions
// (αβ)_ij = μ_ij − μ_i. − μ_.j + μ, the expected mean squares of the
// two-stratum analysis (Cochran and Cox 1957, section 7.14) give
//
//	A:     λ = r b Σα_i²/(σ²_sub + b σ²_main),  df (a − 1, df_a)
//	B:     λ = r a Σβ_j²/σ²_sub,                df (b − 1, df_b)
//	A × B: λ = r Σ(αβ)_ij²/σ²_sub,              df ((a − 1)(b − 1), df_b)
//
// with df_a = (r − 1)(a − 1) in blocks or a(r − 1) otherwise, and
// df_b = a(r − 1)(b − 1); the power is the noncentral F survival at the
// central critical value (prob.NoncentralF). Checked against
// scipy.stats.ncf (testdata/reference/gen_splitplot_power.py) and against
// the rejection rate of analyze.SplitPlotANOVA on simulated data
// (power/sim).
func (p SplitPlotPlan) Evaluate(r int) []SplitPlotTest {
	a, b := float64(p.A), float64(p.B)
	R := float64(r)
	var grand float64
	ai := make([]float64, p.A)
	bj := make([]float64, p.B)
	for i := 0; i < p.A; i++ {
		for j := 0; j < p.B; j++ {
			m := p.Means[i*p.B+j]
			grand += m
			ai[i] += m / b
			bj[j] += m / a
		}
	}
	grand /= a * b
	var sa, sb, sab float64
	for i := range ai {
		sa += (ai[i] - grand) * (ai[i] - grand)
	}
	for j := range bj {
		sb += (bj[j] - grand) * (bj[j] - grand)
	}
	for i := 0; i < p.A; i++ {
		for j := 0; j < p.B; j++ {
			e := p.Means[i*p.B+j] - ai[i] - bj[j] + grand
			sab += e * e
		}
	}
	ve, vm := p.SDSub*p.SDSub, p.SDMain*p.SDMain
	dfa := a * (R - 1)
	if p.Blocked {
		dfa = (R - 1) * (a - 1)
	}
	dfb := a * (R - 1) * (b - 1)
	name := func(s, def string) string {
		if s == "" {
			return def
		}
		return s
	}
	wn, sn := name(p.WholeName, "whole-plot factor"), name(p.SubName, "sub-plot factor")
	tests := []SplitPlotTest{
		{Term: wn, DF1: a - 1, DF2: dfa, Lambda: R * b * sa / (ve + b*vm), ErrorSrc: "error (a), between main plots"},
		{Term: sn, DF1: b - 1, DF2: dfb, Lambda: R * a * sb / ve, ErrorSrc: "error (b), within main plots"},
		{Term: wn + " × " + sn, DF1: (a - 1) * (b - 1), DF2: dfb, Lambda: R * sab / ve, ErrorSrc: "error (b), within main plots"},
	}
	for i := range tests {
		t := &tests[i]
		if t.DF2 < 1 {
			t.FCrit, t.Power = math.NaN(), math.NaN()
			continue
		}
		t.FCrit = distuv.F{D1: t.DF1, D2: t.DF2}.Quantile(1 - p.Alpha)
		t.Power = prob.NoncentralF{D1: t.DF1, D2: t.DF2, Lambda: t.Lambda}.Survival(t.FCrit)
	}
	return tests
}

// SolveSplitPlot returns the smallest r (2 or more) at which the test of
// term (0 whole plot, 1 sub-plot, 2 interaction) reaches target power.
func (p SplitPlotPlan) Solve(term int, target float64) (int, []SplitPlotTest, error) {
	if err := p.Validate(); err != nil {
		return 0, nil, err
	}
	if term < 0 || term > 2 {
		return 0, nil, fmt.Errorf("term %d: 0 (whole plot), 1 (sub-plot) or 2 (interaction)", term)
	}
	if !(target > p.Alpha && target < 1) {
		return 0, nil, fmt.Errorf("target power %g: must be between alpha and 1", target)
	}
	if p.Evaluate(2)[term].Lambda == 0 {
		return 0, nil, errors.New("the means give this term no effect: there is nothing to detect")
	}
	r, err := searchN(2, func(r int) float64 { return p.Evaluate(r)[term].Power }, target)
	if err != nil {
		return 0, nil, err
	}
	return r, p.Evaluate(r), nil
}
