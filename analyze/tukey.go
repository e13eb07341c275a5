package analyze

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/allotproject/allot/prob"
)

// Group is a level of a term with its observations' summary and its
// least-squares mean.
type Group struct {
	// Term names the factor (or the combination of factors) the level
	// belongs to.
	Term  string  `json:"term"`
	Level string  `json:"level"`
	N     int     `json:"n"`
	Mean  float64 `json:"mean"` // raw mean of the observations
	SD    float64 `json:"sd"`
	// LSMean is the least-squares mean (equal to Mean in a balanced
	// design) and SE its standard error from the model's error.
	LSMean float64 `json:"ls_mean"`
	SE     float64 `json:"se"`
	// Lower and Upper bound the 95% confidence interval of the LS mean,
	// LSMean ± t_{.975, df}·SE (set by lsGroups).
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
	Groups   []Group      `json:"-"`
	Pairs    []Comparison `json:"pairs"`
	Control  string       `json:"control,omitempty"`
	// Letters is the compact letter display, one entry per group (all-pairs
	// methods only).
	Letters []string `json:"-"`
	// LetterDisplay is Letters with the level each belongs to.
	LetterDisplay []LevelLetters `json:"letters,omitempty"`
	// Family describes the family of comparisons, ErrorRate the error
	// rate the method controls over it, and Note what to bear in mind
	// (the F test was not significant; an interaction is significant).
	Family    string   `json:"family"`
	ErrorRate string   `json:"error_rate"`
	Notes     []string `json:"notes,omitempty"`
	// Intervals names the kind of intervals (simultaneous, Bonferroni).
	Intervals string `json:"intervals"`
	// ErrorBound is the stated absolute error bound of the p-values when
	// they come from randomised quasi-Monte-Carlo integration (Dunnett with
	// general correlations), 0 otherwise.
	ErrorBound float64 `json:"p_error_bound,omitempty"`
	// Within names the level of another factor when these are simple
	// effects ("N1" for comparisons of K within N = N1).
	Within string `json:"within,omitempty"`
}

// LevelLetters is the compact-letter entry of one level.
type LevelLetters struct {
	Term    string `json:"term"`
	Level   string `json:"level"`
	Letters string `json:"letters"`
}

// tCrit975 is the 97.5% point of t on the table's error df.
func tCrit975(t *Table) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(t.Residual.DF)}.Quantile(0.975)
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
		var m, big0 float64
		for _, i := range ms {
			m += y[i]
		}
		m /= float64(len(ms))
		for _, i := range ms {
			big0 = math.Max(big0, math.Abs(y[i]-m))
		}
		var ss float64
		if big0 > 0 {
			// Scaled by the largest deviation, so that data near 1e-300
			// or 1e200 do not underflow or overflow when squared.
			for _, i := range ms {
				v := (y[i] - m) / big0
				ss += v * v
			}
		}
		g := Group{Term: d.Factors[fi].Name, Level: lv[l], N: len(ms), Mean: shiftedMean(y, sh, ms), SD: math.NaN(), LSMean: math.NaN(), SE: math.NaN(), Lower: math.NaN(), Upper: math.NaN()}
		if len(ms) > 1 {
			g.SD = big0 * math.Sqrt(ss/float64(len(ms)-1))
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

// summaries returns the count, mean and SD of the observations in each
// group g[i] ∈ [0, len(names)), means with Neumaier's compensated sums and
// SDs by two passes (in the scaled units of m.y, multiplied back by
// m.scale); a group without observations has N 0 and NaN mean. term names
// the groups' term; the LS mean, its SE and interval are left NaN.
func (m *model) summaries(g []int32, names []string, term string) []Group {
	k := len(names)
	sums := make([]neumaier, k)
	count := make([]int, k)
	for i, v := range m.y {
		sums[g[i]].add(v)
		count[g[i]]++
	}
	mean := make([]float64, k)
	for l := range mean {
		mean[l] = sums[l].sum() / float64(count[l])
		sums[l] = neumaier{}
	}
	for i, v := range m.y {
		d := v - mean[g[i]]
		sums[g[i]].add(d * d)
	}
	out := make([]Group, k)
	for l := range out {
		out[l] = Group{Term: term, Level: names[l], N: count[l], Mean: m.shift + m.scale*mean[l], SD: math.NaN(), LSMean: math.NaN(), SE: math.NaN(), Lower: math.NaN(), Upper: math.NaN()}
		if count[l] > 1 {
			out[l].SD = m.scale * math.Sqrt(sums[l].sum()/float64(count[l]-1))
		}
	}
	return out
}

// lsGroups returns the level summaries of factor fi with the least-squares
// means in place of the raw means, and the standard error of the
// difference of two levels' least-squares means.
func lsGroups(d Data, t *Table, fi int) ([]Group, func(i, j int) float64, error) {
	var groups []Group
	var err error
	if t.m != nil && t.m.n == d.Values.Len() && fi < len(t.m.index) {
		// Each factor's summaries are computed once per table (the
		// means, the comparisons and the letters all start from them).
		if t.sums == nil {
			t.sums = make([][]Group, len(t.m.index))
		}
		if t.sums[fi] == nil {
			t.sums[fi] = t.m.summaries(t.m.index[fi], t.m.levels[fi], d.Factors[fi].Name)
		}
		groups = append([]Group(nil), t.sums[fi]...)
	} else if groups, err = Summaries(d, fi); err != nil {
		return nil, nil, err
	}
	ls := t.LSMeans(fi)
	if len(ls) != len(groups) {
		return nil, nil, fmt.Errorf("factor %s: %d levels in the data, %d in the model", d.Factors[fi].Name, len(groups), len(ls))
	}
	tq := tCrit975(t)
	for i := range groups {
		groups[i].LSMean, groups[i].SE = ls[i].Mean, ls[i].SE
		groups[i].Lower, groups[i].Upper = ls[i].Mean-tq*ls[i].SE, ls[i].Mean+tq*ls[i].SE
	}
	return groups, func(i, j int) float64 { return t.DiffSE(fi, i, j) }, nil
}

// rawSE is the standard error of a difference of raw means with the
// table's error: sqrt(MSe (1/n_i + 1/n_j)).
func rawSE(groups []Group, t *Table) func(i, j int) float64 {
	return func(i, j int) float64 {
		return t.ResidSD * math.Sqrt(1/float64(groups[i].N)+1/float64(groups[j].N))
	}
}

// rangeKey identifies a studentized range distribution and level.
type rangeKey struct {
	k, df int
	alpha float64
}

// studentizedRange returns the studentized range for k means with the
// table's error df, prepared once per table (every Tukey family of an
// analysis with k levels shares it: the main effects and each simple
// effect).
func (t *Table) studentizedRange(k int) *prob.PreparedRange {
	key := rangeKey{k: k, df: t.Residual.DF}
	if t.ranges == nil {
		t.ranges = map[rangeKey]*prob.PreparedRange{}
	}
	sr, ok := t.ranges[key]
	if !ok {
		sr = prob.StudentizedRange{K: float64(k), Nu: float64(t.Residual.DF)}.Prepare()
		t.ranges[key] = sr
	}
	return sr
}

// rangeCrit returns the critical q at the table's alpha, cached by
// (k, df, alpha).
func (t *Table) rangeCrit(k int, sr *prob.PreparedRange) float64 {
	key := rangeKey{k: k, df: t.Residual.DF, alpha: t.Alpha}
	if t.crits == nil {
		t.crits = map[rangeKey]float64{}
	}
	q, ok := t.crits[key]
	if !ok {
		q = sr.Quantile(1 - t.Alpha)
		t.crits[key] = q
	}
	return q
}

// tukeyGroups runs Tukey–Kramer comparisons among groups with the table's
// error; se(i, j) is the standard error of the difference of means i and j.
func tukeyGroups(groups []Group, t *Table, term string, se func(i, j int) float64) *PostHoc {
	sr := t.studentizedRange(len(groups))
	ph := &PostHoc{Method: "Tukey HSD", Term: term, Alpha: t.Alpha, DF: t.Residual.DF, Groups: groups, StatName: "q"}
	ph.Crit = t.rangeCrit(len(groups), sr)
	m := len(groups) * (len(groups) - 1) / 2
	ph.Family = fmt.Sprintf("all %d pairwise differences of the means of %s", m, term)
	ph.ErrorRate = fmt.Sprintf("familywise error rate at most α = %s (exact for equal groups, conservative otherwise: Tukey–Kramer)", fmtAlpha(t.Alpha))
	ph.Intervals = fmt.Sprintf("%s%% simultaneous confidence intervals", fmtAlpha(100*(1-t.Alpha)))
	for i := 0; i < len(groups); i++ {
		for j := i + 1; j < len(groups); j++ {
			a, b := groups[i], groups[j]
			// The studentized range is in units of SE/√2.
			s := se(i, j) / math.Sqrt2
			c := Comparison{A: a.Level, B: b.Level, Pair: a.Level + " − " + b.Level, Diff: a.LSMean - b.LSMean, SE: se(i, j)}
			c.Q = math.Abs(c.Diff) / s
			c.P = sr.Survival(c.Q)
			c.Lower, c.Upper = c.Diff-ph.Crit*s, c.Diff+ph.Crit*s
			ph.Pairs = append(ph.Pairs, c)
		}
	}
	return ph
}
