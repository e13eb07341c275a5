package analyze

import (
	"fmt"
	"math"
	"sort"
	"strconv"
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

// Dunnett compares every level of factor fi with the control level; sides
// 1 tests treatment > control. It is DunnettTest with Direction "higher"
// for one side.
func Dunnett(d Data, t *Table, fi int, control string, sides int) (*PostHoc, error) {
	return DunnettTest(d, t, fi, DunnettOptions{Control: control, Sides: sides})
}

// DunnettOptions chooses the control and the alternative of Dunnett's test.
type DunnettOptions struct {
	Control string
	// Sides is 2 (default) or 1; Direction, for one side, is "higher"
	// (treatment > control, the default) or "lower".
	Sides     int
	Direction string
}

// DunnettTest compares every level of factor fi with the control level by
// Dunnett's test on the least-squares means: T_i = (m_i − m_0)/SE_i0 with
// the model's SE of the difference and the error of the fitted table.
// The correlations of the T_i are those of the contrasts m_i − m_0 under
// the model's LS-mean covariance V: ρ_ij = c_iᵀVc_j/sqrt(c_iᵀVc_i·c_jᵀVc_j)
// (one-way data: ρ_ij = λ_iλ_j with λ_i = sqrt(n_i/(n_i+n_0))). When they
// have that product form (to 1e-10) the adjusted p-values P(max|T| > |t_i|)
// come from prob.Dunnett's quadrature; otherwise (blocks with missing
// plots, unequal cells) from prob.MVT's randomised quasi-Monte-Carlo
// integration, whose error bound is reported (PostHoc.ErrorBound).
// Simultaneous intervals are diff ± c·SE (one-sided: bounded on one side).
func DunnettTest(d Data, t *Table, fi int, o DunnettOptions) (*PostHoc, error) {
	if o.Sides == 0 {
		o.Sides = 2
	}
	if o.Direction == "" {
		o.Direction = "higher"
	}
	if o.Direction != "higher" && o.Direction != "lower" {
		return nil, fmt.Errorf("Dunnett direction %q: must be higher or lower", o.Direction)
	}
	groups, seOf, err := lsGroups(d, t, fi)
	if err != nil {
		return nil, err
	}
	ci := -1
	for i, g := range groups {
		if g.Level == o.Control {
			ci = i
		}
	}
	if ci < 0 {
		var lv []string
		for _, g := range groups {
			lv = append(lv, g.Level)
		}
		return nil, fmt.Errorf("control %q is not a level of %s in the data (levels: %s)", o.Control, d.Factors[fi].Name, strings.Join(lv, ", "))
	}
	c0 := groups[ci]
	var others []int
	for i := range groups {
		if i != ci {
			others = append(others, i)
		}
	}
	corr := t.controlCorrelations(fi, ci, others)
	dist := newManyToOne(corr, float64(t.Residual.DF), o.Sides)
	method := "Dunnett (two-sided)"
	if o.Sides == 1 {
		method = "Dunnett (one-sided, treatment > control)"
		if o.Direction == "lower" {
			method = "Dunnett (one-sided, treatment < control)"
		}
	}
	ph := &PostHoc{Method: method, Term: d.Factors[fi].Name, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, Control: o.Control}
	ph.Crit = dist.quantile(1 - t.Alpha)
	for _, i := range others {
		g := groups[i]
		se := seOf(i, ci)
		c := Comparison{A: g.Level, B: c0.Level, Pair: g.Level + " − " + c0.Level, Diff: g.LSMean - c0.LSMean, SE: se}
		c.Q = c.Diff / se
		switch {
		case o.Sides == 2:
			c.P = dist.survival(math.Abs(c.Q))
			c.Lower, c.Upper = c.Diff-ph.Crit*se, c.Diff+ph.Crit*se
		case o.Direction == "lower":
			c.P = dist.survival(-c.Q)
			c.Lower, c.Upper = math.Inf(-1), c.Diff+ph.Crit*se
		default:
			c.P = dist.survival(c.Q)
			c.Lower, c.Upper = c.Diff-ph.Crit*se, math.Inf(1)
		}
		ph.Pairs = append(ph.Pairs, c)
	}
	ph.ErrorBound = dist.bound
	ph.StatName = "t"
	ph.Family = fmt.Sprintf("the %d differences of each level of %s from the control %s (least-squares means)", len(others), ph.Term, o.Control)
	ph.ErrorRate = fmt.Sprintf("familywise error rate (the chance of any false claim among them) at most α = %s", fmtAlpha(t.Alpha))
	ph.Intervals = fmt.Sprintf("%s%% simultaneous confidence intervals", fmtAlpha(100*(1-t.Alpha)))
	if o.Sides == 1 {
		ph.Intervals = fmt.Sprintf("%s%% simultaneous one-sided confidence bounds", fmtAlpha(100*(1-t.Alpha)))
	}
	if dist.general {
		ph.Notes = append(ph.Notes, fmt.Sprintf("The comparisons are correlated unequally (missing plots or unequal cells): p-values and the critical value come from randomised quasi-Monte-Carlo integration of the multivariate t (Genz and Bretz 2002), each within ±%.1g (3 standard errors of 12 randomisations).", dist.bound))
	}
	return ph, nil
}

func fmtAlpha(a float64) string { return strconv.FormatFloat(a, 'g', -1, 64) }

// controlCorrelations returns the correlation matrix of the contrasts
// level i − control (i in others) under the LS-mean covariance.
func (t *Table) controlCorrelations(fi, ci int, others []int) [][]float64 {
	e := t.est
	var cs [][]float64
	c0 := e.contrast(fi, ci)
	for _, i := range others {
		c := e.contrast(fi, i)
		for k := range c {
			c[k] -= c0[k]
		}
		cs = append(cs, c)
	}
	cov := func(a, b []float64) float64 {
		var s float64
		for i := range a {
			if a[i] == 0 {
				continue
			}
			for j := range b {
				s += a[i] * e.cov[i][j] * b[j]
			}
		}
		return s
	}
	k := len(cs)
	v := make([]float64, k)
	for i := range cs {
		v[i] = cov(cs[i], cs[i])
	}
	r := make([][]float64, k)
	for i := range r {
		r[i] = make([]float64, k)
		for j := range r[i] {
			if i == j {
				r[i][j] = 1
			} else {
				r[i][j] = cov(cs[i], cs[j]) / math.Sqrt(v[i]*v[j])
			}
		}
	}
	return r
}

// manyToOne is the distribution of the Dunnett statistics with the given
// correlations: the product-form quadrature when it applies, else QMC.
type manyToOne struct {
	prod    prob.Dunnett
	mvt     prob.MVT
	general bool
	bound   float64
}

func newManyToOne(corr [][]float64, nu float64, sides int) *manyToOne {
	if lam, ok := productForm(corr); ok {
		return &manyToOne{prod: prob.Dunnett{Lambda: lam, Nu: nu, Sides: sides}}
	}
	return &manyToOne{mvt: prob.NewMVT(corr, nu, sides), general: true}
}

func (d *manyToOne) survival(c float64) float64 {
	if !d.general {
		return d.prod.Survival(c)
	}
	p, e := d.mvt.Survival(c)
	d.bound = math.Max(d.bound, e)
	return p
}

func (d *manyToOne) quantile(p float64) float64 {
	if !d.general {
		return d.prod.Quantile(p)
	}
	q, e := d.mvt.Quantile(p)
	d.bound = math.Max(d.bound, e)
	return q
}

// productForm returns λ with ρ_ij = λ_iλ_j (i ≠ j) to 1e-10, if there is
// one with 0 ≤ λ_i < 1.
func productForm(r [][]float64) ([]float64, bool) {
	k := len(r)
	lam := make([]float64, k)
	switch k {
	case 1:
		return []float64{math.Sqrt(0.5)}, true // any λ: one comparison is a t test
	case 2:
		if r[0][1] < 0 {
			return nil, false
		}
		l := math.Sqrt(r[0][1])
		return []float64{l, l}, l < 1
	}
	for i := 0; i < k; i++ {
		j, l := (i+1)%k, (i+2)%k
		if r[j][l] <= 0 {
			return nil, false
		}
		v := r[i][j] * r[i][l] / r[j][l]
		if !(v >= 0 && v < 1) {
			return nil, false
		}
		lam[i] = math.Sqrt(v)
	}
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			if i != j && math.Abs(lam[i]*lam[j]-r[i][j]) > 1e-10 {
				return nil, false
			}
		}
	}
	return lam, true
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
	ph := &PostHoc{Method: "Holm step-down adjusted t tests", Term: d.Factors[fi].Name, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, StatName: "t"}
	m := len(groups) * (len(groups) - 1) / 2
	ph.Crit = st.Quantile(1 - t.Alpha/(2*float64(m)))
	var raw []float64
	for i := 0; i < len(groups); i++ {
		for j := i + 1; j < len(groups); j++ {
			a, b := groups[i], groups[j]
			se := seOf(i, j)
			c := Comparison{A: a.Level, B: b.Level, Pair: a.Level + " − " + b.Level, Diff: a.LSMean - b.LSMean, SE: se}
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
	ph.Family = fmt.Sprintf("all %d pairwise differences of the least-squares means of %s", m, ph.Term)
	ph.ErrorRate = fmt.Sprintf("familywise error rate at most α = %s (Holm's adjusted p-values)", fmtAlpha(t.Alpha))
	ph.Intervals = fmt.Sprintf("Bonferroni intervals (each at level 1 − α/%d); Holm's method gives adjusted p-values only, and these intervals are wider than its tests", m)
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
// given): groups that share a letter are not significantly different at
// the comparisons' α, given
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
				m = math.Max(m, groups[i].LSMean)
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
