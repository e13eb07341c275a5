package analyze

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// Post-hoc methods.
const (
	MethodTukey   = "tukey"
	MethodDunnett = "dunnett"
	MethodHolm    = "holm"
	MethodNone    = "none"
)

// Dunnett compares every level of factor fi with the control level by
// Dunnett's test on the least-squares means: T_i = (m_i − m_0)/SE_i0 with
// the model's SE of the difference (sqrt(MSe(1/n_i + 1/n_0)) for one-way
// data) and the error of the fitted table, adjusted p-values P(max|T| > |t_i|) from
// prob.Dunnett (exact for unequal groups), and simultaneous intervals
// diff ± c·SE. sides 1 tests treatment > control.
func Dunnett(d Data, t *Table, fi int, control string, sides int) (*PostHoc, error) {
	groups, seOf, err := lsGroups(d, t, fi)
	if err != nil {
		return nil, err
	}
	ci := -1
	for i, g := range groups {
		if g.Level == control {
			ci = i
		}
	}
	if ci < 0 {
		var lv []string
		for _, g := range groups {
			lv = append(lv, g.Level)
		}
		return nil, fmt.Errorf("control %q is not a level of %s in the data (levels: %s)", control, d.Factors[fi].Name, strings.Join(lv, ", "))
	}
	c0 := groups[ci]
	var lam []float64
	for i, g := range groups {
		if i != ci {
			lam = append(lam, math.Sqrt(float64(g.N)/float64(g.N+c0.N)))
		}
	}
	dd := prob.Dunnett{Lambda: lam, Nu: float64(t.Residual.DF), Sides: sides}
	method := "Dunnett (two-sided)"
	if sides == 1 {
		method = "Dunnett (one-sided, treatment > control)"
	}
	ph := &PostHoc{Method: method, Term: d.Factors[fi].Name, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, Control: control}
	ph.Crit = dd.Quantile(1 - t.Alpha)
	for i, g := range groups {
		if i == ci {
			continue
		}
		se := seOf(i, ci)
		c := Comparison{A: g.Level, B: c0.Level, Pair: g.Level + " − " + c0.Level, Diff: g.Mean - c0.Mean, SE: se}
		c.Q = c.Diff / se
		if sides == 1 {
			c.P = 1 - dd.CDF(c.Q)
			c.Lower, c.Upper = c.Diff-ph.Crit*se, math.Inf(1)
		} else {
			c.P = 1 - dd.CDF(math.Abs(c.Q))
			c.Lower, c.Upper = c.Diff-ph.Crit*se, c.Diff+ph.Crit*se
		}
		ph.Pairs = append(ph.Pairs, c)
	}
	ph.StatName = "t"
	return ph, nil
}

// Holm compares every pair of levels of factor fi by t tests of the
// least-squares means on the fitted table's error, t = diff/SE (SE =
// sqrt(MSe(1/n_i + 1/n_j)) for one-way data), with two-sided p-values
// adjusted by Holm's step-down method (Holm 1979, "A simple sequentially
// rejective multiple test procedure", Scand. J. Statist. 6, 65–70):
// p_(j) ↦ max_{i ≤ j} min(1, (m − i + 1)·p_(i)). Intervals are
// Bonferroni-adjusted (level 1 − α/m), which Holm's method does not
// provide itself.
func Holm(d Data, t *Table, fi int) (*PostHoc, error) {
	groups, seOf, err := lsGroups(d, t, fi)
	if err != nil {
		return nil, err
	}
	df := float64(t.Residual.DF)
	st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}
	ph := &PostHoc{Method: "Holm-adjusted t tests", Term: d.Factors[fi].Name, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, StatName: "t"}
	m := len(groups) * (len(groups) - 1) / 2
	ph.Crit = st.Quantile(1 - t.Alpha/(2*float64(m)))
	var raw []float64
	for i := 0; i < len(groups); i++ {
		for j := i + 1; j < len(groups); j++ {
			a, b := groups[i], groups[j]
			se := seOf(i, j)
			c := Comparison{A: a.Level, B: b.Level, Pair: a.Level + " − " + b.Level, Diff: a.Mean - b.Mean, SE: se}
			c.Q = c.Diff / se
			p := 2 * st.Survival(math.Abs(c.Q))
			raw = append(raw, p)
			c.Lower, c.Upper = c.Diff-ph.Crit*se, c.Diff+ph.Crit*se
			ph.Pairs = append(ph.Pairs, c)
		}
	}
	for i, p := range HolmAdjust(raw) {
		ph.Pairs[i].P = p
	}
	return ph, nil
}

// HolmAdjust returns Holm's step-down adjusted p-values, in input order.
func HolmAdjust(p []float64) []float64 {
	idx := make([]int, len(p))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	out := make([]float64, len(p))
	run := 0.0
	for r, i := range idx {
		v := math.Min(1, float64(len(p)-r)*p[i])
		run = math.Max(run, v)
		out[i] = run
	}
	return out
}

// Letters returns the compact letter display of the groups (in the order
// given): groups that share a letter do not differ significantly, given
// which pairs differ. It uses Piepho's insert-absorb algorithm (Piepho 2004,
// "An algorithm for a letter-based representation of all-pairwise
// comparisons", J. Comput. Graph. Statist. 13(2) 456–466): start with one
// column holding every group; for each differing pair, split every column
// that holds both into one without the first and one without the second,
// then drop columns contained in others. Letters go to columns in order of
// the highest mean they hold.
func Letters(groups []Group, differ func(a, b int) bool) []string {
	k := len(groups)
	full := make([]bool, k)
	for i := range full {
		full[i] = true
	}
	cols := [][]bool{full}
	for a := 0; a < k; a++ {
		for b := a + 1; b < k; b++ {
			if !differ(a, b) {
				continue
			}
			var next [][]bool
			for _, c := range cols {
				if c[a] && c[b] {
					x := append([]bool(nil), c...)
					y := append([]bool(nil), c...)
					x[a], y[b] = false, false
					next = append(next, x, y)
				} else {
					next = append(next, c)
				}
			}
			cols = absorb(next)
		}
	}
	// Order columns by the largest mean they hold, then by position.
	best := func(c []bool) float64 {
		m := math.Inf(-1)
		for i, in := range c {
			if in {
				m = math.Max(m, groups[i].Mean)
			}
		}
		return m
	}
	sort.SliceStable(cols, func(i, j int) bool { return best(cols[i]) > best(cols[j]) })
	out := make([]string, k)
	for ci, c := range cols {
		letter := letterName(ci)
		for i, in := range c {
			if in {
				out[i] += letter
			}
		}
	}
	return out
}

func absorb(cols [][]bool) [][]bool {
	var out [][]bool
	for i, c := range cols {
		redundant := false
		for j, d := range cols {
			if i == j {
				continue
			}
			if subset(c, d) && (!subset(d, c) || j < i) {
				redundant = true
				break
			}
		}
		if !redundant {
			out = append(out, c)
		}
	}
	return out
}

func subset(a, b []bool) bool {
	for i := range a {
		if a[i] && !b[i] {
			return false
		}
	}
	return true
}

func letterName(i int) string {
	s := ""
	for {
		s = string(rune('a'+i%26)) + s
		i = i/26 - 1
		if i < 0 {
			return s
		}
	}
}
