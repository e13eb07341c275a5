package analyze

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/allotproject/allot/column"
)

// SplitPlot is the data of a split-plot experiment: whole-plot treatments
// applied to main plots (chambers, benches, cages), each main plot divided
// into sub-plots (pots, animals) that receive the sub-plot treatments.
type SplitPlot struct {
	Response string
	Values   []string
	// Whole and Sub are the whole-plot and sub-plot factors (one each).
	Whole, Sub Column
	// MainPlot identifies each observation's main plot; Block, when set,
	// the block the main plot stands in (main plots in a randomised
	// complete block design).
	MainPlot Column
	Block    *Column
	Units    []string
	// WholeFactors and SubFactors, when the whole-plot or sub-plot
	// treatments are a factorial (Whole and Sub then hold their
	// combinations), hold the factors one by one: the analysis then splits
	// each stratum's treatment sum of squares into main effects and
	// interactions.
	WholeFactors, SubFactors []Column
}

// StratumTerm is a row of a multi-stratum ANOVA table.
type StratumTerm struct {
	Stratum string  `json:"stratum"`
	Source  string  `json:"source"`
	DF      int     `json:"df"`
	SS      float64 `json:"ss"`
	MS      float64 `json:"ms"`
	F       float64 `json:"f,omitempty"`
	P       float64 `json:"p,omitempty"`
	Error   string  `json:"error,omitempty"`
	IsError bool    `json:"is_error,omitempty"`
}

// DiffSE is the standard error of one kind of difference between means in
// a split plot, with its degrees of freedom.
type DiffSE struct {
	Kind string  `json:"kind"`
	SE   float64 `json:"se"`
	DF   float64 `json:"df"`
	// Satterthwaite marks a df combined from the two errors.
	Satterthwaite bool `json:"satterthwaite,omitempty"`
}

// SplitPlotResult is the classical two-stratum analysis of a balanced split
// plot.
type SplitPlotResult struct {
	Response string        `json:"response"`
	Whole    string        `json:"whole_plot_factor"`
	Sub      string        `json:"sub_plot_factor"`
	Terms    []StratumTerm `json:"terms"`
	// MSa and MSb are the whole-plot and sub-plot error mean squares.
	MSa   float64  `json:"ms_error_a"`
	DFa   int      `json:"df_error_a"`
	MSb   float64  `json:"ms_error_b"`
	DFb   int      `json:"df_error_b"`
	Diffs []DiffSE `json:"difference_ses"`
	// Naive is the one-stratum table that treats every sub-plot as
	// randomised on its own (for comparison only: its whole-plot F is
	// wrong).
	NaiveWholeP float64 `json:"naive_whole_plot_p"`
}

// codes returns the level index of each observation and the level names.
func codes(c Column) ([]string, []int, error) { return c.levels() }

// splitCoded is a split plot's response, exactly centred, and the level
// names and indices of its whole-plot, sub-plot and main-plot columns.
type splitCoded struct {
	y          []float64
	shift      float64
	aL, bL, mL []string
	aI, bI, mI []int
}

func (d SplitPlot) coded() (*splitCoded, error) {
	n := len(d.Values)
	if d.Whole.Values.Len() != n || d.Sub.Values.Len() != n || d.MainPlot.Values.Len() != n || d.Block != nil && d.Block.Values.Len() != n {
		return nil, errors.New("split plot: every column needs one value per observation")
	}
	y, shift, err := centred(column.Of(d.Values))
	if err != nil {
		return nil, fmt.Errorf("response %q: %w", d.Response, err)
	}
	c := &splitCoded{y: y}
	c.shift, _ = shift.Float64()
	for _, f := range []struct {
		col Column
		l   *[]string
		i   *[]int
	}{{d.Whole, &c.aL, &c.aI}, {d.Sub, &c.bL, &c.bI}, {d.MainPlot, &c.mL, &c.mI}} {
		if *f.l, *f.i, err = codes(f.col); err != nil {
			return nil, err
		}
	}
	return c, nil
}

// SplitPlotANOVA analyses a balanced split plot (every main plot holds
// every sub-plot level once; each whole-plot level on the same number of
// main plots) in two strata (Cochran and Cox 1957, Experimental Designs,
// 2nd ed., chapter 7; Gomez and Gomez 1984, Statistical Procedures for
// Agricultural Research, 2nd ed., chapter 3.4). Between main plots: blocks,
// the whole-plot factor A, and error (a) — blocks × A in blocks, main plots
// within A otherwise; within main plots: the sub-plot factor B, A × B, and
// error (b). A is tested against error (a), B and A × B against error (b).
// With r replicates (blocks or main plots per A level), a levels of A and
// b of B, the standard errors of differences are (Gomez and Gomez 1984,
// Table 3.8):
//
//	two A means:                    sqrt(2 Ea/(r b))       df(a)
//	two B means:                    sqrt(2 Eb/(r a))       df(b)
//	two B means at one A level:     sqrt(2 Eb/r)           df(b)
//	two A means at one B level, or at different B levels:
//	                                sqrt(2[(b − 1)Eb + Ea]/(r b)),
//
// the last with Satterthwaite's df
// [(b − 1)Eb + Ea]²/[((b − 1)Eb)²/df(b) + Ea²/df(a)].
// The sums of squares are differences of residual sums of squares of
// nested least-squares fits (block; block + A; main plots; main plots + B;
// main plots + B + A × B). Checked against statsmodels OLS fits of the same
// nested models (testdata/reference/gen_splitplot.py).
func SplitPlotANOVA(d SplitPlot) (*SplitPlotResult, error) {
	c, err := d.coded()
	if err != nil {
		return nil, err
	}
	n, y := len(d.Values), c.y
	aL, aI, bL, bI, mL, mI := c.aL, c.aI, c.bL, c.bI, c.mL, c.mI
	a, b, m := len(aL), len(bL), len(mL)
	if a < 2 || b < 2 {
		return nil, fmt.Errorf("a split plot needs at least 2 levels of %s and of %s", d.Whole.Name, d.Sub.Name)
	}
	// Balance: each main plot one A level and every B level once.
	mpA := make([]int, m)
	for i := range mpA {
		mpA[i] = -1
	}
	seen := make([][]bool, m)
	for i := range seen {
		seen[i] = make([]bool, b)
	}
	for i := 0; i < n; i++ {
		mp := mI[i]
		if mpA[mp] >= 0 && mpA[mp] != aI[i] {
			return nil, fmt.Errorf("main plot %s has two levels of %s (%s and %s): a whole-plot treatment covers its main plot", mL[mp], d.Whole.Name, aL[mpA[mp]], aL[aI[i]])
		}
		mpA[mp] = aI[i]
		if seen[mp][bI[i]] {
			return nil, fmt.Errorf("main plot %s has %s %s twice", mL[mp], d.Sub.Name, bL[bI[i]])
		}
		seen[mp][bI[i]] = true
	}
	for mp := range seen {
		for l, ok := range seen[mp] {
			if !ok {
				return nil, fmt.Errorf("%w: main plot %s has no value for %s %s; the two-stratum table needs complete main plots (a mixed model fitted by REML handles missing sub-plots: SplitPlotREML)", ErrUnbalanced, mL[mp], d.Sub.Name, bL[l])
			}
		}
	}
	perA := make([]int, a)
	for _, l := range mpA {
		perA[l]++
	}
	for _, c := range perA {
		if c != perA[0] {
			return nil, fmt.Errorf("%w: the levels of %s have different numbers of main plots", ErrUnbalanced, d.Whole.Name)
		}
	}
	r := perA[0]
	one := make([]float64, n)
	for i := range one {
		one[i] = 1
	}
	aCols := contrasts(aI, a)
	bCols := contrasts(bI, b)
	var abCols [][]float64
	for _, ca := range aCols {
		for _, cb := range bCols {
			v := make([]float64, n)
			for i := range v {
				v[i] = ca[i] * cb[i]
			}
			abCols = append(abCols, v)
		}
	}
	mpCols := make([][]float64, m)
	for j := range mpCols {
		mpCols[j] = make([]float64, n)
	}
	for i, mp := range mI {
		mpCols[mp][i] = 1
	}
	var blkCols [][]float64
	if d.Block != nil {
		bl, bi, err := codes(*d.Block)
		if err != nil {
			return nil, err
		}
		if len(bl)*a != m || r != len(bl) {
			return nil, fmt.Errorf("%w: with blocks, each block holds one main plot of each level of %s", ErrUnbalanced, d.Whole.Name)
		}
		blkCols = contrasts(bi, len(bl))
	}
	rss := func(cols ...[][]float64) (float64, error) {
		var all [][]float64
		for _, c := range cols {
			all = append(all, c...)
		}
		f, err := ols(y, all)
		if err != nil {
			return 0, err
		}
		return f.rss, nil
	}
	ic := [][]float64{one}
	r0, err := rss(ic)
	if err != nil {
		return nil, err
	}
	rBlk, err := rss(ic, blkCols)
	if err != nil {
		return nil, err
	}
	rA, err := rss(ic, blkCols, aCols)
	if err != nil {
		return nil, err
	}
	rMP, err := rss(mpCols)
	if err != nil {
		return nil, err
	}
	rB, err := rss(mpCols, bCols)
	if err != nil {
		return nil, err
	}
	rAB, err := rss(mpCols, bCols, abCols)
	if err != nil {
		return nil, err
	}
	res := &SplitPlotResult{Response: d.Response, Whole: d.Whole.Name, Sub: d.Sub.Name}
	dfBlk := len(blkCols)
	dfA, dfB, dfAB := a-1, b-1, (a-1)*(b-1)
	res.DFa = m - 1 - dfBlk - dfA
	res.DFb = n - m - dfB - dfAB
	if res.DFa < 1 || res.DFb < 1 {
		return nil, fmt.Errorf("split plot: %d main plots leave no whole-plot error; replicate the whole-plot treatments", m)
	}
	ssA, ssEa := rBlk-rA, rA-rMP
	res.MSa = ssEa / float64(res.DFa)
	res.MSb = rAB / float64(res.DFb)
	wpErr := "main plots within " + d.Whole.Name
	if d.Block != nil {
		wpErr = d.Block.Name + " × " + d.Whole.Name
	}
	ft := func(stratum, src string, df int, ss, ems float64, edf int, errName string) StratumTerm {
		t := StratumTerm{Stratum: stratum, Source: src, DF: df, SS: ss, MS: ss / float64(df), Error: errName}
		t.F = t.MS / ems
		t.P = distuv.F{D1: float64(df), D2: float64(edf)}.Survival(t.F)
		return t
	}
	if d.Block != nil {
		res.Terms = append(res.Terms, ft("whole plots", d.Block.Name, dfBlk, r0-rBlk, res.MSa, res.DFa, "error (a)"))
	}
	res.Terms = append(res.Terms,
		ft("whole plots", d.Whole.Name, dfA, ssA, res.MSa, res.DFa, "error (a)"),
		StratumTerm{Stratum: "whole plots", Source: "error (a): " + wpErr, DF: res.DFa, SS: ssEa, MS: res.MSa, IsError: true},
		ft("sub-plots", d.Sub.Name, dfB, rMP-rB, res.MSb, res.DFb, "error (b)"),
		ft("sub-plots", d.Whole.Name+" × "+d.Sub.Name, dfAB, rB-rAB, res.MSb, res.DFb, "error (b)"),
		StratumTerm{Stratum: "sub-plots", Source: "error (b): residual", DF: res.DFb, SS: rAB, MS: res.MSb, IsError: true},
	)
	R, A, B := float64(r), float64(a), float64(b)
	comb := (B-1)*res.MSb + res.MSa
	satt := comb * comb / (math.Pow((B-1)*res.MSb, 2)/float64(res.DFb) + res.MSa*res.MSa/float64(res.DFa))
	res.Diffs = []DiffSE{
		{Kind: "two " + d.Whole.Name + " means", SE: math.Sqrt(2 * res.MSa / (R * B)), DF: float64(res.DFa)},
		{Kind: "two " + d.Sub.Name + " means", SE: math.Sqrt(2 * res.MSb / (R * A)), DF: float64(res.DFb)},
		{Kind: "two " + d.Sub.Name + " means at one " + d.Whole.Name + " level", SE: math.Sqrt(2 * res.MSb / R), DF: float64(res.DFb)},
		{Kind: "two " + d.Whole.Name + " means at one or different " + d.Sub.Name + " levels", SE: math.Sqrt(2 * comb / (R * B)), DF: satt, Satterthwaite: true},
	}
	if len(d.WholeFactors) > 1 || len(d.SubFactors) > 1 {
		if err := res.decompose(d, y, one, blkCols, mpCols); err != nil {
			return nil, err
		}
	}
	// The naive one-stratum test of A against the pooled residual.
	naiveDF := n - 1 - dfBlk - dfA - dfB - dfAB
	naiveMS := (ssEa + rAB) / float64(naiveDF)
	res.NaiveWholeP = distuv.F{D1: float64(dfA), D2: float64(naiveDF)}.Survival(ssA / float64(dfA) / naiveMS)
	return res, nil
}

// ErrUnbalanced reports data that a balanced-design method cannot take.
var ErrUnbalanced = errors.New("analyze: unbalanced")

// factorTerm is one term of a factorial: its name and coded columns.
type factorTerm struct {
	name string
	cols [][]float64
}

// factorialTerms returns the main effects and interactions of factors in
// hierarchical order (sum-to-zero codings, interactions as products).
func factorialTerms(factors []Column) ([]factorTerm, [][][]float64, error) {
	codes := make([][][]float64, len(factors))
	for i, f := range factors {
		lv, idx, err := f.levels()
		if err != nil {
			return nil, nil, err
		}
		codes[i] = contrasts(idx, len(lv))
	}
	var out []factorTerm
	for deg := 1; deg <= len(factors); deg++ {
		for _, set := range subsets(len(factors), deg) {
			var names []string
			var sets [][][]float64
			for _, k := range set {
				names = append(names, factors[k].Name)
				sets = append(sets, codes[k])
			}
			out = append(out, factorTerm{strings.Join(names, " × "), kronCols(sets...)})
		}
	}
	return out, codes, nil
}

// kronCols returns the element-wise products of one column from each set,
// the first set's index varying slowest.
func kronCols(sets ...[][]float64) [][]float64 {
	cols := [][]float64{nil}
	for _, set := range sets {
		var next [][]float64
		for _, a := range cols {
			for _, b := range set {
				c := make([]float64, len(b))
				for i := range c {
					c[i] = b[i]
					if a != nil {
						c[i] *= a[i]
					}
				}
				next = append(next, c)
			}
		}
		cols = next
	}
	return cols
}

// decompose replaces the whole-plot, sub-plot and interaction rows by their
// factorial terms: sequential sums of squares, which are orthogonal in the
// balanced split plot, the whole-plot terms after the blocks and tested
// against error (a), the sub-plot terms and the whole × sub terms within
// main plots and tested against error (b).
func (res *SplitPlotResult) decompose(d SplitPlot, y, one []float64, blkCols, mpCols [][]float64) error {
	wf, sf := d.WholeFactors, d.SubFactors
	if len(wf) == 0 {
		wf = []Column{d.Whole}
	}
	if len(sf) == 0 {
		sf = []Column{d.Sub}
	}
	wt, _, err := factorialTerms(wf)
	if err != nil {
		return err
	}
	st, _, err := factorialTerms(sf)
	if err != nil {
		return err
	}
	var cross []factorTerm
	for _, a := range wt {
		for _, b := range st {
			cross = append(cross, factorTerm{a.name + " × " + b.name, kronCols(a.cols, b.cols)})
		}
	}
	seq := func(base [][]float64, terms []factorTerm, stratum, errName string, ms float64, df int) ([]StratumTerm, error) {
		cols := append([][]float64(nil), base...)
		prev, err := ols(y, cols)
		if err != nil {
			return nil, err
		}
		var out []StratumTerm
		for _, t := range terms {
			cols = append(cols, t.cols...)
			f, err := ols(y, cols)
			if err != nil {
				return nil, err
			}
			row := StratumTerm{Stratum: stratum, Source: t.name, DF: len(t.cols), SS: math.Max(0, prev.rss-f.rss), Error: errName}
			row.MS = row.SS / float64(row.DF)
			row.F = row.MS / ms
			row.P = distuv.F{D1: float64(row.DF), D2: float64(df)}.Survival(row.F)
			out = append(out, row)
			prev = f
		}
		return out, nil
	}
	whole, err := seq(append([][]float64{one}, blkCols...), wt, "whole plots", "error (a)", res.MSa, res.DFa)
	if err != nil {
		return err
	}
	sub, err := seq(mpCols, append(st, cross...), "sub-plots", "error (b)", res.MSb, res.DFb)
	if err != nil {
		return err
	}
	var terms []StratumTerm
	for _, t := range res.Terms {
		switch {
		case t.Source == d.Whole.Name:
			terms = append(terms, whole...)
		case t.Source == d.Sub.Name:
			terms = append(terms, sub...)
		case t.Source == d.Whole.Name+" × "+d.Sub.Name:
			// Already among the sub-plot terms.
		default:
			terms = append(terms, t)
		}
	}
	res.Terms = terms
	return nil
}
