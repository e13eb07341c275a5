package analyze

import (
	"errors"
	"fmt"
	"math"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/stat/distuv"
)

// Summary describes one group of a one-way layout on the original scale.
type Summary struct {
	Level string  `json:"level"`
	N     int     `json:"n"`
	Mean  float64 `json:"mean"`
	SD    float64 `json:"sd"`
}

// PairTest is one pairwise comparison of a method that gives each pair its
// own standard error and degrees of freedom (Games–Howell, Dunn, Conover,
// comparisons on a GLM's link scale).
type PairTest struct {
	Pair string `json:"pair"`
	// Estimate is the difference A − B on the scale of the method (means,
	// mean ranks, or the link scale of a GLM).
	Estimate float64 `json:"estimate"`
	SE       float64 `json:"se"`
	// Stat is the test statistic (q, z or t, named by the method).
	Stat float64 `json:"statistic"`
	// DF is the degrees of freedom of the statistic (+Inf for normal).
	DF    float64 `json:"df,omitempty"`
	P     float64 `json:"p_adjusted"`
	Lower float64 `json:"lower"`
	Upper float64 `json:"upper"`
	A, B  string  `json:"-"`
}

// WelchResult is Welch's heteroscedastic one-way ANOVA with Games–Howell
// comparisons.
type WelchResult struct {
	Response string    `json:"response"`
	Factor   string    `json:"factor"`
	Groups   []Summary `json:"groups"`
	F        float64   `json:"f"`
	DF1      float64   `json:"df1"`
	DF2      float64   `json:"df2"`
	P        float64   `json:"p"`
	Alpha    float64   `json:"alpha"`
	// Pairs holds the Games–Howell comparisons, with simultaneous
	// intervals at level 1 − Alpha.
	Pairs []PairTest `json:"games_howell"`
}

// oneWay returns the single factor of d with each observation's group, the
// observations as float64 (exactly centred, then shifted back), and the
// level names; it refuses blocks and more than one factor.
func oneWay(d Data, method string) (levels []string, group []int, y []float64, err error) {
	if d.Block != nil {
		return nil, nil, nil, fmt.Errorf("%s is for one factor without blocks: this design has blocks (%s)", method, d.Block.Name)
	}
	if len(d.Factors) != 1 {
		return nil, nil, nil, fmt.Errorf("%s is for one factor: this design has %d", method, len(d.Factors))
	}
	d, _, err = Average(d)
	if err != nil {
		return nil, nil, nil, err
	}
	lv, idx, err := d.Factors[0].levels()
	if err != nil {
		return nil, nil, nil, err
	}
	if len(lv) < 2 {
		return nil, nil, nil, fmt.Errorf("factor %q has one level in the data: a comparison needs at least 2", d.Factors[0].Name)
	}
	c, shift, err := centred(d.Values)
	if err != nil {
		return nil, nil, nil, fmt.Errorf("response %q: %w", d.Response, err)
	}
	sh, _ := shift.Float64()
	y = make([]float64, len(c))
	for i, v := range c {
		y[i] = v + sh
	}
	return lv, idx, y, nil
}

// summaries returns each group's n, mean and SD (two-pass, from the
// exactly centred values).
func summaries(levels []string, group []int, y []float64) []Summary {
	out := make([]Summary, len(levels))
	sum := make([]float64, len(levels))
	for i, g := range group {
		out[g].N++
		sum[g] += y[i]
	}
	for g := range out {
		out[g].Level = levels[g]
		out[g].Mean = sum[g] / float64(out[g].N)
	}
	ss := make([]float64, len(levels))
	for i, g := range group {
		e := y[i] - out[g].Mean
		ss[g] += e * e
	}
	for g := range out {
		if out[g].N > 1 {
			out[g].SD = math.Sqrt(ss[g] / float64(out[g].N-1))
		}
	}
	return out
}

// ErrZeroVariance reports a group whose observations are all equal, for
// which a method that weights groups by their variances is undefined.
var ErrZeroVariance = errors.New("analyze: a group has zero variance")

// Welch runs Welch's one-way ANOVA for groups with unequal variances and
// Games–Howell pairwise comparisons.
//
// Welch's test (Welch 1951, "On the comparison of several mean values: an
// alternative approach", Biometrika 38, 330–336): with w_i = n_i/s_i²,
// W = Σw_i and the weighted mean m* = Σw_i m_i/W,
//
//	F* = [Σ w_i (m_i − m*)²/(k − 1)] / [1 + 2(k − 2)/(k² − 1) · Λ],
//	Λ  = Σ (1 − w_i/W)²/(n_i − 1),
//
// referred to F on k − 1 and (k² − 1)/(3Λ) degrees of freedom.
//
// Games–Howell (Games and Howell 1976, "Pairwise multiple comparison
// procedures with unequal n's and/or variances: a Monte Carlo study",
// J. Educ. Statist. 1, 113–125): for each pair, SE = sqrt(s_i²/n_i +
// s_j²/n_j), q = |m_i − m_j|/(SE/√2) referred to the studentized range for
// k means on the Welch–Satterthwaite degrees of freedom
// ν = SE⁴/[(s_i²/n_i)²/(n_i − 1) + (s_j²/n_j)²/(n_j − 1)], with intervals
// m_i − m_j ± q_{1−α}(k, ν)·SE/√2.
//
// Each group needs at least two observations and a positive variance
// (ErrZeroVariance otherwise). Checked against statsmodels'
// anova_oneway(use_var="unequal") and an independent computation of the
// Games–Howell formula with scipy's studentized range
// (testdata/reference/gen_robust.py).
func Welch(d Data, alpha float64) (*WelchResult, error) {
	if alpha == 0 {
		alpha = 0.05
	}
	lv, group, y, err := oneWay(d, "Welch's ANOVA")
	if err != nil {
		return nil, err
	}
	gs := summaries(lv, group, y)
	k := float64(len(gs))
	for _, g := range gs {
		if g.N < 2 {
			return nil, fmt.Errorf("the Welch ANOVA: group %q has %d observation; each group needs at least 2 to estimate its variance", g.Level, g.N)
		}
		if g.SD == 0 {
			return nil, fmt.Errorf("%w: group %q (all %d values equal %g); Welch's test weights groups by 1/variance and is undefined; use --method rank", ErrZeroVariance, g.Level, g.N, g.Mean)
		}
	}
	var W, wm float64
	w := make([]float64, len(gs))
	for i, g := range gs {
		w[i] = float64(g.N) / (g.SD * g.SD)
		W += w[i]
		wm += w[i] * g.Mean
	}
	wm /= W
	var a, lam float64
	for i, g := range gs {
		a += w[i] * (g.Mean - wm) * (g.Mean - wm)
		r := 1 - w[i]/W
		lam += r * r / float64(g.N-1)
	}
	a /= k - 1
	res := &WelchResult{Response: d.Response, Factor: d.Factors[0].Name, Groups: gs, Alpha: alpha}
	res.F = a / (1 + 2*(k-2)/(k*k-1)*lam)
	res.DF1 = k - 1
	res.DF2 = (k*k - 1) / (3 * lam)
	res.P = distuv.F{D1: res.DF1, D2: res.DF2}.Survival(res.F)
	res.Pairs = gamesHowell(gs, alpha)
	return res, nil
}

// gamesHowell returns the Games–Howell comparisons of every pair (see Welch).
func gamesHowell(gs []Summary, alpha float64) []PairTest {
	k := float64(len(gs))
	var out []PairTest
	for i := 0; i < len(gs); i++ {
		for j := i + 1; j < len(gs); j++ {
			a, b := gs[i], gs[j]
			va, vb := a.SD*a.SD/float64(a.N), b.SD*b.SD/float64(b.N)
			se := math.Sqrt(va + vb)
			nu := (va + vb) * (va + vb) / (va*va/float64(a.N-1) + vb*vb/float64(b.N-1))
			sr := prob.StudentizedRange{K: k, Nu: nu}
			diff := a.Mean - b.Mean
			q := math.Abs(diff) / (se / math.Sqrt2)
			crit := sr.Quantile(1 - alpha)
			out = append(out, PairTest{
				Pair: a.Level + " − " + b.Level, A: a.Level, B: b.Level,
				Estimate: diff, SE: se, Stat: q, DF: nu, P: sr.Survival(q),
				Lower: diff - crit*se/math.Sqrt2, Upper: diff + crit*se/math.Sqrt2,
			})
		}
	}
	return out
}
