package analyze

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"
)

// Group is a level of a factor with its observations' summary.
type Group struct {
	Level string  `json:"level"`
	N     int     `json:"n"`
	Mean  float64 `json:"mean"`
	SD    float64 `json:"sd"`
	// Lower and Upper bound the 95% confidence interval of the mean from
	// the fitted model's error, mean ± t_{.975, df}·sqrt(MSe/n) (set by Run).
	Lower float64 `json:"ci_lower"`
	Upper float64 `json:"ci_upper"`
}

// Comparison is one pair of levels.
type Comparison struct {
	A, B  string  `json:"-"`
	Pair  string  `json:"pair"`
	Diff  float64 `json:"diff"` // mean(A) − mean(B)
	SE    float64 `json:"se"`
	Lower float64 `json:"lower"`
	Upper float64 `json:"upper"`
	Q     float64 `json:"statistic"`
	P     float64 `json:"p_adjusted"`
}

// PostHoc is a set of simultaneous comparisons among the levels of a term.
type PostHoc struct {
	Method string  `json:"method"`
	Term   string  `json:"term"`
	Alpha  float64 `json:"alpha"`
	DF     int     `json:"df"`
	// Crit is the critical value of the statistic (q for Tukey, |t| for
	// Dunnett and Holm's Bonferroni intervals).
	Crit     float64      `json:"critical_value"`
	StatName string       `json:"statistic"`
	Groups   []Group      `json:"groups"`
	Pairs    []Comparison `json:"pairs"`
	Control  string       `json:"control,omitempty"`
	// Letters is the compact letter display, one entry per group (all-pairs
	// methods only).
	Letters []string `json:"letters,omitempty"`
	// Within names the level of another factor when these are simple
	// effects ("N1" for comparisons of K within N = N1).
	Within string `json:"within,omitempty"`
}

// Summaries returns the level summaries of factor fi of d.
func Summaries(d Data, fi int) ([]Group, error) {
	if fi < 0 || fi >= len(d.Factors) {
		return nil, fmt.Errorf("factor index %d out of range", fi)
	}
	lv, idx, err := d.Factors[fi].levels()
	if err != nil {
		return nil, err
	}
	y, shift, err := centred(d.Values)
	if err != nil {
		return nil, err
	}
	sh, _ := shift.Float64()
	members := make([][]int, len(lv))
	for i, l := range idx {
		members[l] = append(members[l], i)
	}
	out := make([]Group, len(lv))
	for l, ms := range members {
		var m float64
		for _, i := range ms {
			m += y[i]
		}
		m /= float64(len(ms))
		var ss float64
		for _, i := range ms {
			ss += (y[i] - m) * (y[i] - m)
		}
		g := Group{Level: lv[l], N: len(ms), Mean: shiftedMean(y, sh, ms), SD: math.NaN()}
		if len(ms) > 1 {
			g.SD = math.Sqrt(ss / float64(len(ms)-1))
		}
		out[l] = g
	}
	return out, nil
}

// Tukey compares every pair of levels of factor fi by Tukey's honestly
// significant difference on the least-squares means, q = |diff|/(SE/√2)
// with SE the standard error of the difference from the fitted model —
// for one-way data the Tukey–Kramer form sqrt(MSe (1/n_i + 1/n_j)) (Tukey
// 1953; Kramer 1956, Biometrics 12(3) 307–310) — and the table's error
// degrees of freedom. Adjusted p-values are P(Q > q) for the studentized
// range with k levels; intervals are diff ± q_{1−α}·SE/√2. Least-squares
// means equal the raw means when every level meets every level of the
// other terms equally often, and correct them for blocks and imbalance
// otherwise. The Comparison's SE is that of the difference.
func Tukey(d Data, t *Table, fi int) (*PostHoc, error) {
	groups, se, err := lsGroups(d, t, fi)
	if err != nil {
		return nil, err
	}
	return tukeyGroups(groups, t, d.Factors[fi].Name, se), nil
}

// lsGroups returns the level summaries of factor fi with the least-squares
// means in place of the raw means, and the standard error of the
// difference of two levels' least-squares means.
func lsGroups(d Data, t *Table, fi int) ([]Group, func(i, j int) float64, error) {
	groups, err := Summaries(d, fi)
	if err != nil {
		return nil, nil, err
	}
	ls := t.LSMeans(fi)
	if len(ls) != len(groups) {
		return nil, nil, fmt.Errorf("factor %s: %d levels in the data, %d in the model", d.Factors[fi].Name, len(groups), len(ls))
	}
	for i := range groups {
		groups[i].Mean = ls[i].Mean
	}
	return groups, func(i, j int) float64 { return t.DiffSE(fi, i, j) }, nil
}

// rawSE is the standard error of a difference of raw means with the
// table's error: sqrt(MSe (1/n_i + 1/n_j)).
func rawSE(groups []Group, t *Table) func(i, j int) float64 {
	return func(i, j int) float64 {
		return math.Sqrt(t.Residual.MS * (1/float64(groups[i].N) + 1/float64(groups[j].N)))
	}
}

// tukeyGroups runs Tukey–Kramer comparisons among groups with the table's
// error; se(i, j) is the standard error of the difference of means i and j.
func tukeyGroups(groups []Group, t *Table, term string, se func(i, j int) float64) *PostHoc {
	k := float64(len(groups))
	df := float64(t.Residual.DF)
	sr := prob.StudentizedRange{K: k, Nu: df}
	ph := &PostHoc{Method: "Tukey HSD", Term: term, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, StatName: "q"}
	ph.Crit = sr.Quantile(1 - t.Alpha)
	for i := 0; i < len(groups); i++ {
		for j := i + 1; j < len(groups); j++ {
			a, b := groups[i], groups[j]
			// The studentized range is in units of SE/√2.
			s := se(i, j) / math.Sqrt2
			c := Comparison{A: a.Level, B: b.Level, Pair: a.Level + " − " + b.Level, Diff: a.Mean - b.Mean, SE: se(i, j)}
			c.Q = math.Abs(c.Diff) / s
			c.P = sr.Survival(c.Q)
			c.Lower, c.Upper = c.Diff-ph.Crit*s, c.Diff+ph.Crit*s
			ph.Pairs = append(ph.Pairs, c)
		}
	}
	return ph
}
