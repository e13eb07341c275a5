package analyze

import (
	"errors"
	"fmt"
	"math"
	"math/big"
	"strings"

	"github.com/allotproject/allot/prob"
)

// Options controls a fit.
type Options struct {
	// SSType is 1 (sequential), 2 (hierarchical) or 3 (each term adjusted
	// for all others, with sum-to-zero coding). 0 means 3.
	SSType int
	// Alpha is the level for post-hoc comparisons and the plain reading.
	// 0 means 0.05.
	Alpha float64
}

// Term is one row of the ANOVA table.
type Term struct {
	Source      string  `json:"source"`
	DF          int     `json:"df"`
	SS          float64 `json:"ss"`
	MS          float64 `json:"ms"`
	F           float64 `json:"f"`
	P           float64 `json:"p"`
	PartialEta2 float64 `json:"partial_eta2"`
	// PartialOmega2 is (SS − df·MSe)/(SS + (N − df)·MSe), the less biased
	// companion of partial η² (Olejnik and Algina 2003, Psychological
	// Methods 8(4) 434–447, Table 2); it may be negative, and is reported
	// as computed.
	PartialOmega2 float64 `json:"partial_omega2"`
	// Factors names the design factors of the term; Block marks the block
	// term.
	Factors []string `json:"factors,omitempty"`
	Block   bool     `json:"block,omitempty"`
	// BlockInteraction marks a block × treatment term.
	BlockInteraction bool `json:"block_interaction,omitempty"`
	// SSZero is set when the term's SS is exactly zero (decided in exact
	// arithmetic, see exact.go), not merely small.
	SSZero bool `json:"ss_exactly_zero,omitempty"`
	// ErrorTerm names the mean square the F divides by: "residual", or
	// the block × treatment term with --blocks random.
	ErrorTerm string `json:"error_term"`
	// ErrorDF is the df of that error (the residual df unless stated).
	ErrorDF int `json:"error_df"`
	// NotTestable says why no test is given (Type III with an empty cell).
	NotTestable string `json:"not_testable,omitempty"`
}

// Residual is the error line of the table.
type Residual struct {
	DF int     `json:"df"`
	SS float64 `json:"ss"`
	MS float64 `json:"ms"`
}

// Table is the fitted ANOVA of one response.
type Table struct {
	Response  string   `json:"-"` // in JSON once, at the response level
	SSType    int      `json:"ss_type"`
	N         int      `json:"n"`
	Terms     []Term   `json:"terms"`
	Residual  Residual `json:"residual"`
	TotalDF   int      `json:"total_df"`
	TotalSS   float64  `json:"total_ss"`
	R2        float64  `json:"r2"`
	ResidSD   float64  `json:"resid_sd"`
	GrandMean float64  `json:"grand_mean"`
	CV        float64  `json:"cv_percent"`
	// RelEfficiency is the efficiency of the block design relative to a
	// completely randomised one on the same units (0 without blocks).
	RelEfficiency float64 `json:"relative_efficiency,omitempty"`
	// The residuals, fitted values and leverages (h_ii, the diagonal of
	// the hat matrix) are given per observation by ResidualAt, FittedAt and
	// LeverageAt: every observation of a cell of the design has the same
	// fitted value and leverage, so they are kept per cell, and a million
	// observations cost no arrays of their own.
	cellRes, cellLev []float64
	// ExactFit is set when the residual SS is exactly zero: every
	// observation equals its fitted value, and no F can be formed.
	ExactFit bool `json:"exact_fit,omitempty"`
	// ZeroRule says how zero sums of squares were decided: "exact"
	// (rational arithmetic from the decimal texts), "bound" (below 1e-20 of
	// the total SS) or "" (no SS was close to zero).
	ZeroRule string `json:"zero_rule,omitempty"`
	// SSExp10 is the power of ten the SS and MS columns are in units of
	// (0 normally; 2k when the data were scaled by 10^−k to avoid
	// underflow or overflow).
	SSExp10 int `json:"ss_exponent10,omitempty"`
	// EmptyCells is set when some combination of levels has no
	// observations: terms have the df they can estimate, and LS means of
	// the factors involved are not estimable.
	EmptyCells bool `json:"empty_cells,omitempty"`
	// NotEstimable names the terms left out of the model because no
	// contrast of them can be estimated (for example A × B in a 2×2 with
	// an empty cell).
	NotEstimable []string `json:"not_estimable,omitempty"`
	scale        float64
	// est holds what least-squares means need: coefficients, their
	// unscaled covariance and the coding of each factor's main effect.
	est   *estimates
	Alpha float64 `json:"alpha"`
	// m and cells keep the parsed design and the cell statistics for the
	// follow-up summaries, so that the response is parsed once.
	m     *model
	cells *cellStats
	// ranges and crits cache the studentized range of the post-hoc
	// families by (k, df) and their critical values by (k, df, alpha).
	ranges map[rangeKey]*prob.PreparedRange
	crits  map[rangeKey]float64
	sums   [][]Group // raw summaries per factor
}

// model is the design of a fit: the centred response, each observation's
// factor levels and block, and the terms. Columns are coded on demand, per
// cell (codeRow), never stored per observation.
type model struct {
	n     int
	terms []modelTerm
	shift float64
	// shiftRat is the exact shift; scale and exp10 the scaling of y
	// (scale = 10^exp10, 1 when none; see rescale).
	shiftRat *big.Rat
	scale    float64
	exp10    int
	// emptyCells marks a model pruned of dependent interaction columns.
	emptyCells bool
	y          []float64
	ints       []int64 // exact centred values ·10^-exp, or nil (see centring)
	exp        int
	levels     [][]string // per factor
	index      [][]int32  // per factor: level of each observation
	blockL     []string
	blockI     []int32
}

type modelTerm struct {
	name     string
	factors  []int // indices into Data.Factors
	block    bool
	blockInt bool // block × treatment-term interaction
	df       int
	// keep, when not nil, lists the coded columns (positions in the full
	// Kronecker coding) the term keeps after empty cells removed the
	// dependent ones (see pruned); df is then len(keep).
	keep []int
}

// levels32 is Column.levels with 32-bit indices and one map look-up a value.
func (c Column) levels32() ([]string, []int32, error) {
	idx := map[string]int32{}
	order := c.Levels
	for i, l := range order {
		if _, dup := idx[l]; !dup {
			idx[l] = int32(i)
		}
	}
	code := func(v string) (int32, error) {
		j, ok := idx[v]
		if !ok {
			if c.Levels != nil {
				return 0, fmt.Errorf("column %q: value %q is not one of its levels", c.Name, v)
			}
			j = int32(len(order))
			idx[v] = j
			order = append(order, v)
		}
		return j, nil
	}
	out := make([]int32, c.Values.Len())
	if dict, codes, ok := c.Values.Coded(); ok {
		// A coded column: one look-up per distinct level (the dictionary
		// is in order of first appearance, as the rows would give).
		of := make([]int32, len(dict))
		for k, v := range dict {
			j, err := code(v)
			if err != nil {
				return nil, nil, err
			}
			of[k] = j
		}
		for i, k := range codes {
			out[i] = of[k]
		}
	} else {
		for i := range out {
			j, err := code(c.Values.At(i))
			if err != nil {
				return nil, nil, err
			}
			out[i] = j
		}
	}
	used := make([]bool, len(order))
	for _, j := range out {
		used[j] = true
	}
	// Drop levels with no observations (and repeated names), keeping the order.
	var kept []string
	remap := make([]int32, len(order))
	same := true
	for j, l := range order {
		if used[j] && idx[l] == int32(j) {
			remap[j] = int32(len(kept))
			same = same && remap[j] == int32(j)
			kept = append(kept, l)
		}
	}
	if !same {
		for i := range out {
			out[i] = remap[out[i]]
		}
	}
	return kept, out, nil
}

// buildModel lists the block term, the main effects and all interactions,
// ordered by degree (the usual hierarchical order).
func buildModel(d Data) (*model, error) {
	n := d.Values.Len()
	c, err := centre(d.Values)
	if err != nil {
		return nil, fmt.Errorf("response %q: %w", d.Response, err)
	}
	sh, _ := c.shift.Float64()
	m := &model{n: n, y: c.y, shift: sh, shiftRat: c.shift, scale: 1, ints: c.ints, exp: c.exp}
	if d.Block != nil {
		if d.Block.Values.Len() != n {
			return nil, fmt.Errorf("block column %q has %d values for %d observations", d.Block.Name, d.Block.Values.Len(), n)
		}
		lv, idx, err := d.Block.levels32()
		if err != nil {
			return nil, err
		}
		if len(lv) < 2 {
			return nil, fmt.Errorf("block column %q has only one block in the data: analyse without blocks", d.Block.Name)
		}
		// A block with a single unit is fitted as the simulation's
		// engine fits it: its own effect absorbs the unit (Run notes it).
		m.blockL, m.blockI = lv, idx
		m.terms = append(m.terms, modelTerm{name: d.Block.Name, block: true, df: len(lv) - 1})
	}
	if len(d.Factors) == 0 {
		return nil, errors.New("no treatment factor")
	}
	for _, f := range d.Factors {
		if f.Values.Len() != n {
			return nil, fmt.Errorf("factor %q has %d values for %d observations", f.Name, f.Values.Len(), n)
		}
		lv, idx, err := f.levels32()
		if err != nil {
			return nil, err
		}
		if len(lv) < 2 {
			return nil, fmt.Errorf("factor %q has only one level in the data (%q): a comparison needs at least 2", f.Name, lv[0])
		}
		m.levels = append(m.levels, lv)
		m.index = append(m.index, idx)
	}
	k := len(d.Factors)
	for deg := 1; deg <= k; deg++ {
		for _, set := range subsets(k, deg) {
			var names []string
			df := 1
			for _, fi := range set {
				names = append(names, d.Factors[fi].Name)
				df *= len(m.levels[fi]) - 1
			}
			m.terms = append(m.terms, modelTerm{name: strings.Join(names, " × "), factors: set, df: df})
		}
	}
	if d.BlockInteraction && d.Block != nil {
		// Block × each treatment term, after all treatment terms.
		nt := len(m.terms)
		for k := 1; k < nt; k++ {
			m.terms = append(m.terms, modelTerm{name: d.Block.Name + " × " + m.terms[k].name, blockInt: true, factors: m.terms[k].factors, df: m.terms[0].df * m.terms[k].df})
		}
	}
	return m, nil
}

// codeTerm appends to dst the coded columns of term t for an observation
// with block b and factor levels lv: the Kronecker product of the
// factors' sum-to-zero codings (the block's first for a block × treatment
// term), the earlier factor's index varying slowest.
func (m *model) codeTerm(dst []float64, t *modelTerm, b int, lv []int32) []float64 {
	start := len(dst)
	dst = append(dst, 1)
	kron := func(l, levels int) {
		w := len(dst) - start
		for a := 0; a < w; a++ {
			v := dst[start+a]
			for j := 0; j < levels-1; j++ {
				dst = append(dst, v*code(l, levels, j))
			}
		}
		dst = append(dst[:start], dst[start+w:]...)
	}
	if t.block || t.blockInt {
		kron(b, len(m.blockL))
	}
	if !t.block {
		for _, fi := range t.factors {
			kron(int(lv[fi]), len(m.levels[fi]))
		}
	}
	if t.keep != nil {
		for a, c := range t.keep { // keep is increasing, so c ≥ a
			dst[start+a] = dst[start+c]
		}
		dst = dst[:start+len(t.keep)]
	}
	return dst
}

// codeRow appends the model row (intercept when intercept is set, then the
// terms in order) of an observation with block b and factor levels lv.
func (m *model) codeRow(dst []float64, order []int, intercept bool, b int, lv []int32) []float64 {
	if intercept {
		dst = append(dst, 1)
	}
	for _, t := range order {
		dst = m.codeTerm(dst, &m.terms[t], b, lv)
	}
	return dst
}

// obsLevels writes observation i's factor levels into lv and returns its
// block (0 without blocks).
func (m *model) obsLevels(i int, lv []int32) int {
	for f := range m.index {
		lv[f] = m.index[f][i]
	}
	if m.blockI != nil {
		return int(m.blockI[i])
	}
	return 0
}

// subsets returns the size-r subsets of {0..k−1} in lexicographic order.
func subsets(k, r int) [][]int {
	var out [][]int
	var rec func(start int, cur []int)
	rec = func(start int, cur []int) {
		if len(cur) == r {
			out = append(out, append([]int(nil), cur...))
			return
		}
		for i := start; i < k; i++ {
			rec(i+1, append(cur, i))
		}
	}
	rec(0, nil)
	return out
}

// contains reports whether term a's factors include all of term b's (and a
// is not b).
func (m *model) contains(a, b int) bool {
	ta, tb := m.terms[a], m.terms[b]
	if a == b || ta.block || tb.blockInt {
		return false
	}
	if ta.blockInt {
		// block × T contains the block term and every term within T.
		if tb.block {
			return true
		}
		if len(ta.factors) < len(tb.factors) {
			return false
		}
	} else if tb.block || len(ta.factors) <= len(tb.factors) {
		return false
	}
	for _, f := range tb.factors {
		found := false
		for _, g := range ta.factors {
			found = found || f == g
		}
		if !found {
			return false
		}
	}
	return true
}

// ErrEmptyCell reports a rank-deficient model: some combination of levels
// has no observations, so some terms cannot be estimated.
var ErrEmptyCell = errors.New("analyze: empty cell")

// Fit fits the full model to d and returns its ANOVA table.
//
// Sums of squares that are zero in exact arithmetic are reported as exactly
// zero (see exact.go): a term with SS exactly 0 has F = 0 and p = 1, and when
// the residual SS is exactly zero every F is undefined (NaN, with
// Table.ExactFit set) instead of a ratio of rounding noise.
func Fit(d Data, opt Options) (*Table, error) {
	return fit(d, opt, absorbMin)
}

// fit is Fit absorbing blocks when there are at least absorb of them.
func fit(d Data, opt Options, absorb int) (*Table, error) {
	if opt.SSType == 0 {
		opt.SSType = 3
	}
	if opt.SSType < 1 || opt.SSType > 3 {
		return nil, fmt.Errorf("sum-of-squares type %d: must be 1, 2 or 3", opt.SSType)
	}
	if opt.Alpha == 0 {
		opt.Alpha = 0.05
	}
	if err := checkFactors(d); err != nil {
		return nil, err
	}
	d, _, err := Average(d)
	if err != nil {
		return nil, err
	}
	m, err := buildModel(d)
	if err != nil {
		return nil, err
	}
	m.rescale(d.Values)
	cs := m.collapse()
	m.ints = nil // the exact values live on in the cell sums
	full := m.fitCells(cs, absorb)
	p := 1
	for _, t := range m.terms {
		p += t.df
	}
	var untestable []bool
	var dropped []string
	if !full.full() {
		if len(d.Factors) < 2 {
			return nil, m.emptyCellError(full)
		}
		pm, lost := m.pruned(cs, absorb)
		bad := m.notTestable(lost)
		kept := *pm
		kept.terms = nil
		for k, t := range pm.terms {
			if t.df == 0 {
				dropped = append(dropped, t.name)
				continue
			}
			kept.terms = append(kept.terms, t)
			untestable = append(untestable, bad[k])
		}
		m = &kept
		full = m.fitCells(cs, absorb)
		p = 1
		for _, t := range m.terms {
			p += t.df
		}
		if !full.full() {
			return nil, m.emptyCellError(full)
		}
		m.emptyCells = true
	}
	n := m.n
	resDF := n - p
	if resDF < 1 {
		return nil, fmt.Errorf("response %q: %d observations for %d parameters leave no residual degrees of freedom; at least 2 observations are needed in some group", d.Response, n, p)
	}
	t := &Table{Response: d.Response, SSType: opt.SSType, N: n, Alpha: opt.Alpha, SSExp10: 2 * m.exp10, scale: m.scale, EmptyCells: m.emptyCells, NotEstimable: dropped}
	t.Residual.DF = resDF
	t.Residual.SS = full.resSS
	t.TotalDF = n - 1
	t.TotalSS = full.totalSS
	all := make([]int, len(m.terms))
	for i := range all {
		all[i] = i
	}
	zj := newZeroJudge(m, cs, d.Values, t.TotalSS)
	if zj.residualZero(all, t.Residual.SS) {
		t.Residual.SS = 0
		t.ExactFit = true
	}
	t.Residual.MS = t.Residual.SS / float64(resDF)

	for k, term := range m.terms {
		ss := full.ss(m, k, opt.SSType)
		zero := zj.suspect(ss) && zj.termZero(m.ssOrder(k, opt.SSType), ss)
		if zero {
			ss = 0
		}
		df := term.df
		row := Term{Source: term.name, DF: df, SS: ss, MS: ss / float64(df), Block: term.block, BlockInteraction: term.blockInt, SSZero: zero}
		for _, fi := range term.factors {
			row.Factors = append(row.Factors, d.Factors[fi].Name)
		}
		switch {
		case t.ExactFit:
			row.F, row.P = math.NaN(), math.NaN()
			row.PartialEta2, row.PartialOmega2 = math.NaN(), math.NaN()
		default:
			row.F = row.MS / t.Residual.MS
			row.P = prob.FSurvival(row.F, float64(df), float64(resDF))
			row.PartialEta2 = ss / (ss + t.Residual.SS)
			row.PartialOmega2 = (ss - float64(df)*t.Residual.MS) / (ss + float64(n-df)*t.Residual.MS)
		}
		if term.block {
			// Blocks are a nuisance, not an effect of interest: no effect size.
			row.PartialEta2, row.PartialOmega2 = math.NaN(), math.NaN()
		}
		row.ErrorTerm, row.ErrorDF = "residual", resDF
		if untestable != nil && opt.SSType == 3 && untestable[k] {
			row.SS, row.MS, row.F, row.P = math.NaN(), math.NaN(), math.NaN(), math.NaN()
			row.PartialEta2, row.PartialOmega2 = math.NaN(), math.NaN()
			row.NotTestable = "its Type III hypothesis (equal means averaged over every cell) involves the mean of an empty cell, which the data cannot estimate; Types I and II test the estimable hypotheses"
		}
		t.Terms = append(t.Terms, row)
	}
	t.ZeroRule = zj.rule
	t.R2 = 1 - t.Residual.SS/t.TotalSS
	if t.TotalSS == 0 {
		t.R2 = math.NaN()
	}
	t.ResidSD = m.scale * math.Sqrt(t.Residual.MS)
	t.GrandMean = m.shift + m.scale*(shiftedMean(m.y, 0, nil))
	t.CV = 100 * t.ResidSD / math.Abs(t.GrandMean)
	t.cellRes = full.cellResiduals(cs)
	t.cellLev = full.cellLeverage(m, cs)
	if t.ExactFit {
		clear(t.cellRes)
	}
	t.est = full.estimates(m)
	t.m, t.cells = m, cs
	if d.Block != nil && !d.BlockInteraction && !t.ExactFit {
		t.RelEfficiency = relEfficiency(t)
	}
	return t, nil
}

// resid is the residual of observation i in the scaled units of m.y.
func (t *Table) resid(i int) float64 {
	if t.ExactFit {
		return 0
	}
	c := t.cells.of[i]
	return t.m.y[i] - t.cells.mean[c] + t.cellRes[c]
}

// ResidualAt returns the residual of observation i (in the order of
// Data.Values). Like FittedAt and LeverageAt it is defined for a table that
// Fit returned, and i must be below N.
func (t *Table) ResidualAt(i int) float64 { return t.m.scale * t.resid(i) }

// FittedAt returns the fitted value of observation i.
func (t *Table) FittedAt(i int) float64 { return t.m.shift + t.m.scale*(t.m.y[i]-t.resid(i)) }

// LeverageAt returns the leverage h_ii of observation i.
func (t *Table) LeverageAt(i int) float64 { return t.cellLev[t.cells.of[i]] }

// ssOrder returns the terms in the order whose last term's sum of squares
// is term k's of the given type: the terms before it (Type I), every term
// not containing it (Type II) or every other term (Type III), then k.
func (m *model) ssOrder(k, ssType int) []int {
	var order []int
	for j := range m.terms {
		if ssType == 1 && j >= k || j == k || ssType == 2 && m.contains(j, k) {
			continue
		}
		order = append(order, j)
	}
	return append(order, k)
}

// emptyCellError names the terms that cannot be estimated.
func (m *model) emptyCellError(full *cellFit) error {
	var bad []string
	for k, r := range full.ranges {
		if r[1] > r[0] && full.qr.dependent(r[0], r[1]) {
			bad = append(bad, m.terms[k].name)
		}
	}
	return fmt.Errorf("%w: some combinations of levels have no observations, so these terms cannot be estimated: %s", ErrEmptyCell, strings.Join(bad, ", "))
}

// relEfficiency returns the efficiency of the block design relative to a
// completely randomised design on the same units: the error mean square a
// CRD would have had, [df_b·MS_b + (df_t + df_e)·MS_e]/(df_b + df_t + df_e),
// over the block design's MS_e, with Fisher's correction for the error
// degrees of freedom, (df_e + 1)(df_crd + 3)/((df_e + 3)(df_crd + 1))
// (Cochran and Cox 1957, Experimental Designs, 2nd ed., section 4.37).
func relEfficiency(t *Table) float64 {
	var bdf, bss, tdf float64
	for _, r := range t.Terms {
		if r.Block {
			bdf, bss = float64(r.DF), r.SS
		} else {
			tdf += float64(r.DF)
		}
	}
	edf, mse := float64(t.Residual.DF), t.Residual.MS
	if mse == 0 {
		return math.Inf(1)
	}
	crdMSE := (bss + (tdf+edf)*mse) / (bdf + tdf + edf)
	crdDF := bdf + edf
	fisher := (edf + 1) * (crdDF + 3) / ((edf + 3) * (crdDF + 1))
	return fisher * crdMSE / mse
}
