package analyze

import (
	"fmt"
	"math"

	"allot/analyze/dist"
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
// significant difference, with the Tukey–Kramer standard error
// sqrt(MSe/2 · (1/n_i + 1/n_j)) for unequal groups (Tukey 1953; Kramer 1956,
// Biometrics 12(3) 307–310), using the fitted table's error mean square and
// degrees of freedom. Adjusted p-values are P(Q > q) for the studentized
// range with k levels; intervals are diff ± q_{1−α}·SE.
//
// The level means are the observed marginal means, which equal the
// least-squares means when every level of the factor meets every level of
// the other terms equally often (balanced designs, complete blocks).
func Tukey(d Data, t *Table, fi int) (*PostHoc, error) {
	groups, err := Summaries(d, fi)
	if err != nil {
		return nil, err
	}
	return tukeyGroups(groups, t, d.Factors[fi].Name), nil
}

// tukeyGroups runs Tukey–Kramer comparisons among groups with the table's
// error.
func tukeyGroups(groups []Group, t *Table, term string) *PostHoc {
	k := float64(len(groups))
	df := float64(t.Residual.DF)
	sr := dist.StudentizedRange{K: k, Nu: df}
	ph := &PostHoc{Method: "Tukey HSD", Term: term, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, StatName: "q"}
	ph.Crit = sr.Quantile(1 - t.Alpha)
	for i := 0; i < len(groups); i++ {
		for j := i + 1; j < len(groups); j++ {
			a, b := groups[i], groups[j]
			se := math.Sqrt(t.Residual.MS / 2 * (1/float64(a.N) + 1/float64(b.N)))
			c := Comparison{A: a.Level, B: b.Level, Pair: a.Level + " − " + b.Level, Diff: a.Mean - b.Mean, SE: se}
			c.Q = math.Abs(c.Diff) / se
			c.P = sr.Survival(c.Q)
			c.Lower, c.Upper = c.Diff-ph.Crit*se, c.Diff+ph.Crit*se
			ph.Pairs = append(ph.Pairs, c)
		}
	}
	return ph
}
