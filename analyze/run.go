package analyze

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/allotproject/allot/prob"
)

// Outlier is an observation whose studentized residual exceeds 3 in size.
type Outlier struct {
	Unit        string  `json:"unit"`
	Where       string  `json:"cell"`
	Value       string  `json:"value"`
	Residual    float64 `json:"residual"`
	Studentized float64 `json:"studentized"`
}

// Assumptions collects the checks of the model's assumptions.
type Assumptions struct {
	ShapiroW float64   `json:"shapiro_w"`
	ShapiroP float64   `json:"shapiro_p"`
	Levene   float64   `json:"brown_forsythe_f"`
	LeveneDF [2]int    `json:"brown_forsythe_df"`
	LeveneP  float64   `json:"brown_forsythe_p"`
	SDRatio  float64   `json:"sd_ratio"`
	Outliers []Outlier `json:"outliers"`
	Verdicts []string  `json:"verdicts"`
	NormalOK bool      `json:"-"`
	LeveneOK bool      `json:"-"`
	// t gives the residuals, fitted values and studentized residuals of
	// each observation (Len, ResidualAt, FittedAt, StudAt, DeletedAt).
	t *Table
	// Basis says what the normality and variance checks were run on, and
	// LeveneName which test of equal variances ran.
	Basis      string `json:"basis"`
	LeveneName string `json:"variance_test"`
}

// Result is the analysis of one response.
type Result struct {
	Table *Table `json:"anova"`
	// Groups holds the means table of every factor (n, mean, SD, LS mean,
	// SE, 95% CI), each entry naming its term.
	Groups [][]Group `json:"-"`
	// Simple holds the simple effects (one factor within each level of
	// another) of a significant two-factor interaction; they come first.
	Simple   []*PostHoc `json:"simple_effects,omitempty"`
	PostHoc  []*PostHoc `json:"comparisons"`
	Trends   []*Trend   `json:"trends,omitempty"`
	Sampling *Sampling  `json:"subsampling,omitempty"`
	// Cells holds the means of the combinations of the first two factors
	// (factorial designs), for interaction plots.
	Cells       []Cell      `json:"cells,omitempty"`
	Losses      *Losses     `json:"losses,omitempty"`
	Assumptions Assumptions `json:"assumptions"`
	Notes       []string    `json:"notes,omitempty"`
	// Undefined is set when no F could be formed (the residual SS is
	// exactly zero): the analysis ran but cannot answer its question.
	Undefined bool `json:"f_undefined,omitempty"`
	// Model says which model was fitted and why, in a sentence.
	Model string `json:"model"`
}

// Cell is the mean of one combination of two factors' levels.
type Cell struct {
	A, B string `json:"-"`
	Group
}

// RunOptions extends Options with the follow-up analyses.
type RunOptions struct {
	Options
	PostHoc string // tukey (default), dunnett, holm, none
	Control string // for dunnett
	Sides   int    // dunnett: 1 or 2 (default)
	// Direction is the one-sided Dunnett alternative: "higher" (default,
	// treatment > control) or "lower".
	Direction string
	// Trend names the quantitative factors to decompose into orthogonal
	// polynomial contrasts (their levels must be numbers).
	Trend []string
	// RandomBlocks treats blocks as random: in a generalised block design
	// treatment terms are tested against the block × treatment term.
	RandomBlocks bool
}

// Run fits the model and runs what was asked: the requested comparisons of
// every treatment factor (whatever its F test says, with the family and
// the error rate stated, and a note when F was not significant), simple
// effects first when a two-factor interaction is significant, trend
// contrasts when asked, the means table, the loss table, and the residual
// checks that fit the design. When the residual SS is exactly zero no F
// exists: the result says so (Undefined) and runs no comparison or check.
func Run(d Data, opt RunOptions) (*Result, error) {
	if opt.PostHoc == "" {
		opt.PostHoc = MethodTukey
	}
	if opt.Sides == 0 {
		opt.Sides = 2
	}
	if err := checkFactors(d); err != nil {
		return nil, err
	}
	switch opt.PostHoc {
	case MethodTukey, MethodHolm, MethodNone:
	case MethodDunnett:
		if opt.Control == "" {
			return nil, fmt.Errorf("dunnett: the test needs a control level")
		}
		if len(d.Factors) != 1 {
			return nil, fmt.Errorf("dunnett: the test is for one-factor designs")
		}
		lv, _, err := d.Factors[0].levels()
		if err != nil {
			return nil, err
		}
		found := false
		for _, l := range lv {
			found = found || l == opt.Control
		}
		if !found {
			return nil, fmt.Errorf("control %q is not a level of %s in the data (levels: %s)", opt.Control, d.Factors[0].Name, strings.Join(lv, ", "))
		}
	default:
		return nil, fmt.Errorf("post-hoc method %q: must be tukey, dunnett, holm or none", opt.PostHoc)
	}
	losses, err := LossTable(d)
	if err != nil {
		return nil, err
	}
	d, sampling, err := Average(d)
	if err != nil {
		return nil, err
	}
	t, err := Fit(d, opt.Options)
	if err != nil {
		return nil, err
	}
	losses.warn(t.Alpha)
	res := &Result{Table: t, Sampling: sampling, Losses: losses, Model: modelSentence(d, opt)}
	if opt.RandomBlocks {
		if err := randomBlocks(d, t); err != nil {
			return nil, err
		}
	}
	if d.Block != nil {
		res.Notes = append(res.Notes, blockNote(d, opt.RandomBlocks))
	}
	if n := singleUnitBlocks(d); len(n) > 0 {
		res.Notes = append(res.Notes, fmt.Sprintf("%s %s hold(s) a single unit: its block effect absorbs it, so it adds nothing to the treatment comparisons or the error (its residual is zero and it is left out of the residual checks). The Monte-Carlo power simulation treats such a block the same way.", d.Block.Name, strings.Join(n, ", ")))
	}
	for fi := range d.Factors {
		var g []Group
		if t.EmptyCells {
			g, err = Summaries(d, fi)
		} else {
			g, _, err = lsGroups(d, t, fi)
		}
		if err != nil {
			return nil, err
		}
		res.Groups = append(res.Groups, g)
	}
	if t.EmptyCells {
		var names []string
		for _, r := range t.Terms {
			if r.NotTestable != "" {
				names = append(names, r.Source)
			}
		}
		msg := "Some combinations of levels have no observations (empty cells): each term is given the degrees of freedom the data can estimate, and the Type I and II tests are of the estimable hypotheses. Least-squares means, which average over every cell, cannot be estimated, so the means table shows raw means only and no comparisons of LS means are run; the simple effects, where shown, compare the cells that were observed."
		if len(t.NotEstimable) > 0 {
			msg += " Left out of the model, as nothing of them can be estimated: " + strings.Join(t.NotEstimable, ", ") + "."
		}
		if len(names) > 0 {
			msg += " Not testable with Type III sums of squares: " + strings.Join(names, ", ") + " (use --ss 2 or --ss 1)."
		}
		res.Notes = append(res.Notes, msg)
	}
	if len(d.Factors) >= 2 && !t.EmptyCells {
		res.Cells, err = cellMeans(d, t)
		if err != nil {
			return nil, err
		}
	}
	if t.ExactFit {
		for _, gs := range res.Groups {
			for i := range gs {
				// No error estimate: no SE or interval either.
				gs[i].SE, gs[i].Lower, gs[i].Upper = math.NaN(), math.NaN(), math.NaN()
			}
		}
		res.Undefined = true
		how := "decided in exact arithmetic from the recorded decimals"
		if t.ZeroRule == "bound" {
			how = "below 1e-20 of the total sum of squares, far below anything the recorded decimals can show; the model is too large for the exact check"
		}
		res.Notes = append(res.Notes, "The residual sum of squares is exactly zero ("+how+"): every observation equals its fitted value, for example because all values within each group are identical. With no variation left to judge the differences against, F is undefined (not infinite) and no comparison, p-value or residual check can be computed. Check that the values are real, independent measurements and not copies or rounded-off entries.")
		res.Assumptions = Assumptions{Verdicts: []string{"The residual checks were not run: all residuals are exactly zero."}}
		return res, nil
	}
	// The residual checks read the fitted table only; on a large data set
	// they run beside the comparisons, on another core.
	var checks chan Assumptions
	if t.N >= parallelChecks {
		checks = make(chan Assumptions, 1)
		go func() { checks <- checkAssumptions(d, t) }()
	}
	interaction := false
	for _, term := range t.Terms {
		if len(term.Factors) > 1 && !term.BlockInteraction && term.P < t.Alpha {
			interaction = true
		}
	}
	if interaction && opt.PostHoc != MethodNone {
		res.Simple, err = simpleEffects(d, t)
		if err != nil {
			return nil, err
		}
		res.Notes = append(res.Notes, "An interaction is significant: the effect of one factor depends on the level of another. The simple effects (one factor within each level of the other) come first; the main-effect comparisons that follow average over effects that differ and can mislead.")
	}
	for fi, f := range d.Factors {
		var term *Term
		for i := range t.Terms {
			if len(t.Terms[i].Factors) == 1 && !t.Terms[i].BlockInteraction && t.Terms[i].Factors[0] == f.Name {
				term = &t.Terms[i]
			}
		}
		if term == nil || opt.PostHoc == MethodNone || t.EmptyCells {
			continue
		}
		var ph *PostHoc
		te := errorTable(t, term)
		switch opt.PostHoc {
		case MethodTukey:
			ph, err = Tukey(d, te, fi)
		case MethodHolm:
			ph, err = Holm(d, te, fi)
		case MethodDunnett:
			ph, err = DunnettTest(d, te, fi, DunnettOptions{Control: opt.Control, Sides: opt.Sides, Direction: opt.Direction})
		}
		if err == nil && te != t {
			ph.Notes = append(ph.Notes, fmt.Sprintf("With random blocks these comparisons use the %s mean square as their error (df %d), as the F test of %s does.", term.ErrorTerm, term.ErrorDF, f.Name))
			res.Groups[fi] = ph.Groups
		}
		if err != nil {
			return nil, err
		}
		if !(term.P < t.Alpha) {
			ph.Notes = append(ph.Notes, fmt.Sprintf("The F test of %s was not significant (p %s): these comparisons were run because they were requested; they control the error rate stated on their own, but read any difference they show with that in mind.", f.Name, pPhrase(term.P)))
		}
		if interaction && involved(t, f.Name) {
			ph.Notes = append(ph.Notes, fmt.Sprintf("Warning: %s is part of a significant interaction; these main-effect comparisons average over levels of the other factor where its effect differs. Read the simple effects above first.", f.Name))
		}
		addLetters(ph)
		res.PostHoc = append(res.PostHoc, ph)
	}
	for _, name := range opt.Trend {
		if t.EmptyCells {
			break
		}
		fi := factorIndex(d, name)
		if fi < 0 {
			return nil, fmt.Errorf("trend: %q is not a factor of the design", name)
		}
		tr, err := TrendContrasts(d, t, fi)
		if err != nil {
			return nil, err
		}
		res.Trends = append(res.Trends, tr)
	}
	if !t.cells.balanced(t.m) {
		res.Notes = append(res.Notes, "The design is unbalanced (missing units or unequal groups): the LS means are least-squares means, adjusted for the other terms and averaged over their levels with equal weights; raw means would be biased by which units are missing.")
	}
	if checks != nil {
		res.Assumptions = <-checks
	} else {
		res.Assumptions = checkAssumptions(d, t)
	}
	return res, nil
}

// parallelChecks is the number of observations from which Run checks the
// residuals on a goroutine of their own.
const parallelChecks = 1 << 14

// pPhrase writes p as "= 0.21" or "< 0.0001".
func pPhrase(p float64) string {
	if p < 0.0001 {
		return "< 0.0001"
	}
	return "= " + strconv.FormatFloat(p, 'g', 3, 64)
}

// involved reports whether factor name is in a significant interaction.
func involved(t *Table, name string) bool {
	for _, term := range t.Terms {
		if len(term.Factors) > 1 && !term.BlockInteraction && term.P < t.Alpha {
			for _, f := range term.Factors {
				if f == name {
					return true
				}
			}
		}
	}
	return false
}

// cellMeans returns the least-squares cell means of the first two factors,
// for the interaction plot, with the raw counts and SDs.
func cellMeans(d Data, t *Table) ([]Cell, error) {
	raw := t.m.pairSummaries(0, 1, d.Factors[0].Name+" × "+d.Factors[1].Name)
	byName := map[string]Group{}
	for _, g := range raw {
		if g.N > 0 {
			byName[g.Level] = g
		}
	}
	tq := tCrit975(t)
	la := t.est.levels[0]
	lb := t.est.levels[1]
	var out []Cell
	for k, c := range t.LSCells() {
		g, ok := byName[c.Level]
		if !ok {
			continue // an empty cell has no mean to show
		}
		g.LSMean, g.SE, g.Lower, g.Upper = c.Mean, c.SE, c.Mean-tq*c.SE, c.Mean+tq*c.SE
		out = append(out, Cell{A: la[k/len(lb)], B: lb[k%len(lb)], Group: g})
	}
	return out, nil
}

// checkFactors refuses a factor named twice (or named like the block).
func checkFactors(d Data) error {
	seen := map[string]bool{}
	for _, f := range d.Factors {
		if seen[f.Name] {
			return fmt.Errorf("factor %q is given twice: name each factor once", f.Name)
		}
		seen[f.Name] = true
	}
	if d.Block != nil && seen[d.Block.Name] {
		return fmt.Errorf("%q is given both as a factor and as the block column: use it once", d.Block.Name)
	}
	return nil
}

// modelSentence says which model is fitted and why.
func modelSentence(d Data, opt RunOptions) string {
	var fs []string
	for _, f := range d.Factors {
		fs = append(fs, f.Name)
	}
	tr := strings.Join(fs, " × ")
	if len(fs) > 1 {
		tr += " (all interactions)"
	}
	switch {
	case d.Block == nil:
		return "Model: " + tr + ", completely randomised (no block column)."
	case d.BlockInteraction:
		s := fmt.Sprintf("Model: %s + %s + %s × treatment, a generalised randomised block design: every treatment appears at least twice in every %s, so the block × treatment interaction is estimated from the replicates within blocks and the error is the variation between those replicates.", d.Block.Name, tr, d.Block.Name, d.Block.Name)
		return s
	default:
		return fmt.Sprintf("Model: %s + %s, additive blocks (randomised block design; the block × treatment interaction is not estimable or not replicated, and is part of the error).", d.Block.Name, tr)
	}
}

// blockNote states how blocks are treated.
func blockNote(d Data, random bool) string {
	b := d.Block.Name
	if random && d.BlockInteraction {
		return fmt.Sprintf("The %s blocks are treated as random: each treatment term is tested against its %s × treatment mean square (how much the treatment effect varies from one %s to another), so the conclusions extend to other blocks like these; the %s × treatment terms are tested against the residual, and the comparisons of treatment levels use the same error as their F test.", b, b, b, b)
	}
	if random {
		return fmt.Sprintf("The %s blocks are treated as random; with blocks not crossed with replicated treatments the treatment F tests are the same as with fixed blocks.", b)
	}
	return fmt.Sprintf("The %s blocks are treated as fixed effects: every F test uses the residual error, and the conclusions are about these blocks (in a generalised block design, --blocks random tests treatments against the %s × treatment variation instead).", b, b)
}

// singleUnitBlocks lists the blocks holding one unit.
func singleUnitBlocks(d Data) []string {
	if d.Block == nil {
		return nil
	}
	lv, idx, err := d.Block.levels()
	if err != nil {
		return nil
	}
	size := make([]int, len(lv))
	for _, b := range idx {
		size[b]++
	}
	var out []string
	for b, n := range size {
		if n == 1 {
			out = append(out, lv[b])
		}
	}
	return out
}

// randomBlocks retests each treatment term against its block × term mean
// square (generalised block designs; Table.Terms' ErrorTerm says which).
func randomBlocks(d Data, t *Table) error {
	if !d.BlockInteraction || t.ExactFit {
		return nil
	}
	for i := range t.Terms {
		r := &t.Terms[i]
		if r.Block || r.BlockInteraction {
			continue
		}
		for _, e := range t.Terms {
			if e.BlockInteraction && sameFactors(e.Factors, r.Factors) {
				r.ErrorTerm, r.ErrorDF = e.Source, e.DF
				if e.MS == 0 {
					r.F, r.P = math.NaN(), math.NaN()
				} else {
					r.F = r.MS / e.MS
					r.P = prob.FSurvival(r.F, float64(r.DF), float64(e.DF))
				}
				r.PartialEta2 = r.SS / (r.SS + e.SS)
				r.PartialOmega2 = math.NaN()
			}
		}
	}
	return nil
}

// errorTable returns t itself, or, when term is tested against another
// error (random blocks), a copy whose error mean square, df and SD are that
// term's, so that comparisons of its levels use the same error as its F.
func errorTable(t *Table, term *Term) *Table {
	if term.ErrorTerm == "" || term.ErrorTerm == "residual" {
		return t
	}
	for _, e := range t.Terms {
		if e.Source == term.ErrorTerm && e.DF > 0 {
			c := *t
			c.Residual = Residual{DF: e.DF, SS: e.SS, MS: e.MS}
			c.ResidSD = t.scale * math.Sqrt(e.MS)
			return &c
		}
	}
	return t
}

func sameFactors(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func addLetters(ph *PostHoc) {
	if ph.Control != "" {
		return
	}
	idx := map[string]int{}
	for i, g := range ph.Groups {
		idx[g.Level] = i
	}
	sig := map[[2]int]bool{}
	for _, c := range ph.Pairs {
		a, b := idx[c.A], idx[c.B]
		if a > b {
			a, b = b, a
		}
		sig[[2]int{a, b}] = c.P < ph.Alpha
	}
	ph.Letters = Letters(ph.Groups, func(a, b int) bool { return sig[[2]int{a, b}] })
}

// completeRCBD reports, from the cell statistics, whether the design is
// an additive block design whose every block holds exactly one unit of
// every treatment combination that occurs.
func (cs *cellStats) completeRCBD(m *model) bool {
	if m.blockL == nil || m.terms[len(m.terms)-1].blockInt {
		return false
	}
	seen := make([]bool, cs.nTreat)
	trts := 0
	for c, k := range cs.n {
		if k != 1 {
			return false
		}
		if !seen[cs.treat[c]] {
			seen[cs.treat[c]] = true
			trts++
		}
	}
	return len(cs.n) == trts*len(m.blockL)
}

// balanced reports whether every treatment cell has the same number of
// observations (in every block).
func (cs *cellStats) balanced(m *model) bool {
	if len(cs.n) != cs.nTreat*max(len(m.blockL), 1) {
		return false
	}
	for _, k := range cs.n {
		if k != cs.n[0] {
			return false
		}
	}
	return true
}

// pairSummaries returns the summaries of the cells of factors a and b
// (levels "A × B"), a's level varying slowest.
func (m *model) pairSummaries(a, b int, term string) []Group {
	la, lb := m.levels[a], m.levels[b]
	g := make([]int32, m.n)
	for i := range g {
		g[i] = m.index[a][i]*int32(len(lb)) + m.index[b][i]
	}
	var names []string
	for _, x := range la {
		for _, y := range lb {
			names = append(names, x+" × "+y)
		}
	}
	return m.summaries(g, names, term)
}

// simpleEffects compares the levels of the first factor of each significant
// two-factor interaction within each level of the second, by Tukey–Kramer on
// the cell means with the model's error.
func simpleEffects(d Data, t *Table) ([]*PostHoc, error) {
	var out []*PostHoc
	for _, term := range t.Terms {
		if len(term.Factors) != 2 || term.BlockInteraction || term.P >= t.Alpha {
			continue
		}
		ai, bi := factorIndex(d, term.Factors[0]), factorIndex(d, term.Factors[1])
		m := t.m
		cells := m.pairSummaries(bi, ai, d.Factors[bi].Name+" × "+d.Factors[ai].Name)
		na := len(m.levels[ai])
		// First appearance of each level of ai within each level of bi,
		// the level order when the factor declares none.
		first := make([]int, len(cells))
		for i := range first {
			first[i] = -1
		}
		for i := m.n - 1; i >= 0; i-- {
			first[int(m.index[bi][i])*na+int(m.index[ai][i])] = i
		}
		for bl, blName := range m.levels[bi] {
			var groups []Group
			var pos []int
			for a := 0; a < na; a++ {
				if g := cells[bl*na+a]; g.N > 0 {
					g.Level = m.levels[ai][a]
					groups = append(groups, g)
					pos = append(pos, first[bl*na+a])
				}
			}
			if d.Factors[ai].Levels == nil {
				sort.Sort(byPos{groups, pos})
			}
			if len(groups) < 2 {
				continue
			}
			tq := tCrit975(t)
			// The cells' least-squares means (averaged with equal weights
			// over the other factors and the blocks) when the model has
			// the pair's interaction and no empty cell; else the raw cell
			// means, which are those means in a two-factor design without
			// blocks.
			var contrasts [][]float64
			ls := !t.EmptyCells && t.est != nil && t.est.hasPair(ai, bi)
			for i := range groups {
				g := &groups[i]
				g.Term = d.Factors[ai].Name + " within " + d.Factors[bi].Name + " = " + blName
				g.LSMean, g.SE = g.Mean, t.ResidSD/math.Sqrt(float64(g.N))
				if ls {
					c := t.est.pairContrast(ai, bi, levelIndex(m.levels[ai], g.Level), bl)
					contrasts = append(contrasts, c)
					g.LSMean, g.SE = t.lsMean(c)
				}
				g.Lower, g.Upper = g.LSMean-tq*g.SE, g.LSMean+tq*g.SE
			}
			se := rawSE(groups, t)
			if ls {
				se = func(i, j int) float64 { return t.lsDiffSE(contrasts[i], contrasts[j]) }
			}
			ph := tukeyGroups(groups, t, d.Factors[ai].Name, se)
			ph.Within = d.Factors[bi].Name + " = " + blName
			addLetters(ph)
			out = append(out, ph)
		}
	}
	return out, nil
}

// levelIndex returns the position of level name in levels (−1 if absent).
func levelIndex(levels []string, name string) int {
	for i, l := range levels {
		if l == name {
			return i
		}
	}
	return -1
}

// byPos sorts groups by the position of their first observation.
type byPos struct {
	g   []Group
	pos []int
}

func (b byPos) Len() int           { return len(b.g) }
func (b byPos) Less(i, j int) bool { return b.pos[i] < b.pos[j] }
func (b byPos) Swap(i, j int) {
	b.g[i], b.g[j] = b.g[j], b.g[i]
	b.pos[i], b.pos[j] = b.pos[j], b.pos[i]
}

func factorIndex(d Data, name string) int {
	for i, f := range d.Factors {
		if f.Name == name {
			return i
		}
	}
	return -1
}

// studentized returns the internally and externally studentized residuals
// of observation i, whose residual is e (NaN where h_ii = 1 or there is no
// residual variance; see checkAssumptions).
func studentized(t *Table, i int, e float64) (stud, deleted float64) {
	return studentizedOf(e, t.LeverageAt(i), t.ResidSD, t.Residual.DF)
}

// studentizedOf returns the internally and externally studentized residuals
// of a residual e with leverage h, the residual SD sd on df degrees of
// freedom.
func studentizedOf(e, h, sd float64, df int) (stud, deleted float64) {
	stud, deleted = math.NaN(), math.NaN()
	if h < 1-1e-10 && sd > 0 {
		stud = e / (sd * math.Sqrt(1-h))
	}
	if nu := float64(df); nu > 1 && !math.IsNaN(stud) {
		if den := nu - stud*stud; den > 1e-12 {
			deleted = stud * math.Sqrt((nu-1)/den)
		} else {
			deleted = math.Copysign(math.Inf(1), stud)
		}
	}
	return stud, deleted
}

// Len is the number of observations whose residuals were checked (0 when
// the checks did not run).
func (a Assumptions) Len() int {
	if a.t == nil {
		return 0
	}
	return a.t.N
}

// ResidualAt returns the residual of observation i (i below Len).
func (a Assumptions) ResidualAt(i int) float64 { return a.t.ResidualAt(i) }

// FittedAt returns the fitted value of observation i.
func (a Assumptions) FittedAt(i int) float64 { return a.t.FittedAt(i) }

// StudAt returns the internally studentized residual e/(s·sqrt(1−h)) of
// observation i, NaN where h = 1.
func (a Assumptions) StudAt(i int) float64 {
	s, _ := studentized(a.t, i, a.t.ResidualAt(i))
	return s
}

// DeletedAt returns the externally studentized residual of observation i
// (the unit left out of s), which is not bounded by sqrt(n−p) and so can
// flag a typing slip in a small trial.
func (a Assumptions) DeletedAt(i int) float64 {
	_, d := studentized(a.t, i, a.t.ResidualAt(i))
	return d
}

// checkAssumptions runs the residual checks that fit the design.
//
// Studentized residuals: internally r_i = e_i/(s·sqrt(1 − h_ii)), and
// externally (deleted) t_i = r_i·sqrt((ν − 1)/(ν − r_i²)) with ν the
// residual df (Cook and Weisberg 1982, Residuals and Influence in
// Regression, eq. 2.2.9), listing the units with |t| > 3; units with
// h_ii = 1 (alone in their block or cell) have no residual and are skipped.
//
// Normality and equal variances. When the model is saturated in its cells
// (a one-way or factorial CRD, or a generalised block design whose cells
// are block × treatment), the residuals of a cell sum to zero — with two
// units a cell they are exact ± pairs, which made Shapiro–Wilk read p = 1
// and Brown–Forsythe raise a 34% false alarm at 5%. There the checks use
// the Helmert contrasts within each cell, h_j = (Σ_{i<j} y_i − (j−1)·y_j)/
// sqrt(j(j−1)), j = 2..r, which are independent N(0, σ²_cell) under the
// model (Lancaster 1965, "The Helmert matrices", Amer. Math. Monthly 72,
// 4–12): Shapiro–Wilk on all of them, Brown–Forsythe on them grouped by
// treatment. In an additive block design (one unit per treatment per
// block) the usual residuals are used. The false-alarm rates are checked
// by simulation in the tests (within 3 SE of α for CRD, RCBD and
// generalised blocks).
func checkAssumptions(d Data, t *Table) Assumptions {
	a := Assumptions{t: t}
	for i := range t.N {
		e := t.ResidualAt(i)
		if _, del := studentized(t, i, e); math.Abs(del) > 3 {
			o := Outlier{Value: d.Values.At(i), Residual: e, Studentized: del}
			if d.Units.Len() > 0 {
				o.Unit = d.Units.At(i)
			}
			if d.Where.Len() > 0 {
				o.Where = d.Where.At(i)
			}
			a.Outliers = append(a.Outliers, o)
		}
	}
	sort.Slice(a.Outliers, func(i, j int) bool { return math.Abs(a.Outliers[i].Studentized) > math.Abs(a.Outliers[j].Studentized) })
	var normal []float64
	var groups [][]float64
	knownZero := false // the values have mean 0 by construction: Levene about 0
	cs := t.cells
	// Keys are cells, treatment combinations or blocks (small integers,
	// from the cell statistics); byKey lists them in order of first
	// appearance, each with its observations (idx nil: all of them).
	trtKey := func(i int) int { return int(cs.treat[cs.of[i]]) }
	n := t.N
	byKey := func(idx []int32, key func(int) int, nk int) ([]int, [][]int32) {
		// A counting sort into one array: keys in order of first
		// appearance, each key's observations in their order.
		count := make([]int, nk)
		var order []int
		each := func(f func(i int)) {
			if idx == nil {
				for i := range n {
					f(i)
				}
				return
			}
			for _, i := range idx {
				f(int(i))
			}
		}
		each(func(i int) {
			k := key(i)
			if count[k] == 0 {
				order = append(order, k)
			}
			count[k]++
		})
		flat := make([]int32, n)
		if idx != nil {
			flat = flat[:len(idx)]
		}
		members := make([][]int32, nk)
		at := 0
		for _, k := range order {
			members[k] = flat[at : at : at+count[k]]
			at += count[k]
		}
		each(func(i int) {
			k := key(i)
			members[k] = append(members[k], int32(i))
		})
		return order, members
	}
	rcbd := cs.completeRCBD(t.m)
	switch {
	case saturated(d):
		// Cells of the saturated model: treatments, or block × treatment.
		// The contrasts go into one array, treatment by treatment (each
		// treatment's cells in order of first appearance), so that each
		// treatment's group is a slice of it.
		order, cells := byKey(nil, func(i int) int { return int(cs.of[i]) }, len(cs.n))
		var trtOrder []int
		cellsOf := make([][]int, cs.nTreat)
		for _, k := range order {
			tk := trtKey(int(cells[k][0]))
			if cellsOf[tk] == nil {
				trtOrder = append(trtOrder, tk)
			}
			cellsOf[tk] = append(cellsOf[tk], k)
		}
		normal = make([]float64, 0, n)
		for _, tk := range trtOrder {
			start := len(normal)
			for _, k := range cellsOf[tk] {
				normal = appendHelmertAt(normal, t.ResidualAt, cells[k])
			}
			groups = append(groups, normal[start:len(normal):len(normal)])
		}
		a.Basis = "Helmert contrasts within cells (the residuals of a cell sum to zero; with two units a cell they are ± pairs), with spread measured about their known centre 0"
		knownZero = true
	case rcbd:
		// One unit per treatment per block: the residuals of each treatment
		// sum to zero across blocks, and those of each block across
		// treatments. Helmert contrasts across blocks within each treatment
		// are independent within the treatment (equal variances), and the
		// double Helmert transform of the two-way table gives (b−1)(t−1)
		// independent N(0, σ²) values (normality).
		a.Basis = "Helmert contrasts of the two-way table of residuals (they sum to zero along both blocks and treatments), with spread measured about their known centre 0"
		knownZero = true
		blockOf := func(i int) int { return int(cs.block[cs.of[i]]) }
		trtOrder, byT := byKey(nil, trtKey, cs.nTreat)
		blocks, _ := byKey(nil, blockOf, len(t.m.blockL))
		pos := make([]int, len(t.m.blockL))
		for j, bl := range blocks {
			pos[bl] = j
		}
		tab := make([][]float64, len(trtOrder))
		for ti, k := range trtOrder {
			row := make([]float64, len(blocks))
			idx := make([]int, len(blocks))
			for _, i := range byT[k] {
				row[pos[blockOf(int(i))]] = t.ResidualAt(int(i))
			}
			for j := range idx {
				idx[j] = j
			}
			h := helmert(row, idx)
			tab[ti] = h
			groups = append(groups, h)
		}
		// Helmert across treatments of each column of block contrasts.
		idx := make([]int, len(trtOrder))
		for j := range idx {
			idx[j] = j
		}
		for c := 0; c < len(blocks)-1; c++ {
			col := make([]float64, len(trtOrder))
			for ti := range trtOrder {
				col[ti] = tab[ti][c]
			}
			normal = append(normal, helmert(col, idx)...)
		}
	default:
		a.Basis = "residuals (an incomplete block design: the checks are approximate and tend to be conservative)"
		var usable []int32
		for i := range n {
			if h := t.LeverageAt(i); h < 1-1e-10 && t.ResidSD > 0 {
				usable = append(usable, int32(i))
			}
		}
		trtOrder, byT := byKey(usable, trtKey, cs.nTreat)
		for _, k := range trtOrder {
			g := make([]float64, 0, len(byT[k]))
			for _, i := range byT[k] {
				g = append(g, t.ResidualAt(int(i)))
			}
			groups = append(groups, g)
		}
		for _, i := range usable {
			normal = append(normal, t.ResidualAt(int(i)))
		}
	}
	var ok bool
	a.ShapiroW, a.ShapiroP, ok = ShapiroWilk(normal)
	a.NormalOK = ok && !math.IsNaN(a.ShapiroW) && !math.IsNaN(a.ShapiroP)
	lo, hi := math.Inf(1), 0.0
	for _, g := range groups {
		if len(g) > 1 {
			sd := scaledSD(g)
			lo, hi = math.Min(lo, sd), math.Max(hi, sd)
		}
	}
	a.SDRatio = math.NaN()
	if lo > 0 && !math.IsInf(lo, 1) && !math.IsInf(hi, 1) {
		a.SDRatio = hi / lo
	}
	var df1, df2 int
	if knownZero {
		a.Levene, df1, df2, a.LeveneP, a.LeveneOK = leveneAbout0(groups)
		a.LeveneName = "Levene (absolute contrasts)"
		switch {
		case rcbd && a.LeveneOK && t.N > mcLeveneUnits:
			// The simulation costs 1999 draws of the whole table; beyond
			// mcLeveneUnits units the F reference stands, conservative.
			a.LeveneName = "Levene (absolute contrasts, F reference: conservative here, as contrasts of different treatments are correlated; too many units for the Monte-Carlo p)"
		case rcbd && a.LeveneOK:
			// The contrasts of different treatments are correlated
			// (−1/(t−1)), so the F reference is conservative; the statistic
			// is pivotal under the model, and its p-value is taken from its
			// simulated null distribution for this design instead.
			a.LeveneP = rcbdLeveneP(len(groups), len(groups[0])+1, a.Levene)
			a.LeveneName = "Levene (absolute contrasts, Monte-Carlo p from 1999 null draws)"
		}
	} else {
		// The groups are copies this function owns.
		a.Levene, df1, df2, a.LeveneP, a.LeveneOK = brownForsythe(groups)
		a.LeveneName = "Brown–Forsythe"
	}
	a.LeveneOK = a.LeveneOK && !math.IsNaN(a.Levene) && !math.IsNaN(a.LeveneP)
	a.LeveneDF = [2]int{df1, df2}
	a.Verdicts = verdicts(a, t.Alpha)
	return a
}

// mcLeveneUnits is the largest complete block design (units) whose Levene
// p-value is simulated (rcbdLeveneP costs 1999 normal tables of that size:
// about 4·10^6 deviates at the limit).
const mcLeveneUnits = 2000

// rcbdLeveneP returns the Monte-Carlo p-value (Barnard 1963, J. R. Statist.
// Soc. B 25, 294; (1 + #{F* ≥ F})/(B + 1), B = 1999) of the Levene
// statistic of within-treatment Helmert contrasts in a complete t × b block
// design: under the model the residuals are the double-centred table of
// independent N(0, σ²) errors, and the statistic does not depend on σ, so
// simulating standard normal tables gives its exact null distribution. The
// seed is fixed, so the p-value is reproducible.
func rcbdLeveneP(nt, nb int, f float64) float64 {
	const draws = 1999
	rng := splitmix(0x1e7e4e)
	z := make([][]float64, nt)
	for i := range z {
		z[i] = make([]float64, nb)
	}
	idx := make([]int, nb)
	for j := range idx {
		idx[j] = j
	}
	groups := make([][]float64, nt)
	exceed := 0
	for b := 0; b < draws; b++ {
		for i := range z {
			for j := range z[i] {
				z[i][j] = rng.normal()
			}
		}
		// Residuals of the additive model: double centring.
		rm := make([]float64, nt)
		cm := make([]float64, nb)
		var gm float64
		for i := range z {
			for j, v := range z[i] {
				rm[i] += v / float64(nb)
				cm[j] += v / float64(nt)
				gm += v / float64(nt*nb)
			}
		}
		for i := range z {
			e := make([]float64, nb)
			for j, v := range z[i] {
				e[j] = v - rm[i] - cm[j] + gm
			}
			groups[i] = helmert(e, idx)
		}
		if fs, _, _, _, ok := leveneAbout0(groups); ok && fs >= f {
			exceed++
		}
	}
	return float64(1+exceed) / float64(draws+1)
}

// splitmix is the SplitMix64 generator (Steele, Lea and Flood 2014) with
// normal deviates by the Box–Muller transform, for reproducible Monte-Carlo
// p-values.
type splitmix uint64

func (s *splitmix) uniform() float64 {
	*s += 0x9e3779b97f4a7c15
	z := uint64(*s)
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	return (float64(z>>11) + 0.5) / (1 << 53)
}

func (s *splitmix) normal() float64 {
	return math.Sqrt(-2*math.Log(s.uniform())) * math.Cos(2*math.Pi*s.uniform())
}

// leveneAbout0 is Levene's test for values whose centre is known to be 0
// (contrasts): the one-way ANOVA F of |v| across groups (Levene 1960, in
// Contributions to Probability and Statistics, 278–292, with the centre
// known instead of estimated). It overwrites the groups with |v| scaled.
func leveneAbout0(groups [][]float64) (f float64, df1, df2 int, p float64, ok bool) {
	var z [][]float64
	var big0 float64
	n := 0
	for _, g := range groups {
		if len(g) == 0 {
			continue
		}
		a := g // overwritten: the callers own their groups
		for i, v := range g {
			a[i] = math.Abs(v)
			big0 = math.Max(big0, a[i])
		}
		z = append(z, a)
		n += len(a)
	}
	k := len(z)
	if k < 2 || n <= k || big0 == 0 || math.IsNaN(big0) || math.IsInf(big0, 0) {
		return math.NaN(), 0, 0, math.NaN(), false
	}
	var grand float64
	for _, a := range z {
		for i := range a {
			a[i] /= big0
			grand += a[i]
		}
	}
	grand /= float64(n)
	var ssb, ssw float64
	for _, a := range z {
		var m float64
		for _, v := range a {
			m += v
		}
		m /= float64(len(a))
		ssb += float64(len(a)) * (m - grand) * (m - grand)
		for _, v := range a {
			ssw += (v - m) * (v - m)
		}
	}
	if ssw == 0 {
		return math.NaN(), k - 1, n - k, math.NaN(), false
	}
	df1, df2 = k-1, n-k
	f = (ssb / float64(df1)) / (ssw / float64(df2))
	return f, df1, df2, prob.FSurvival(f, float64(df1), float64(df2)), true
}

// saturated reports whether the model has a parameter for every cell (all
// factor interactions, and blocks crossed with them when blocked).
func saturated(d Data) bool {
	return d.Block == nil || d.BlockInteraction
}

// helmert returns the Helmert contrasts of the values at idx.
func helmert[I int | int32](e []float64, idx []I) []float64 {
	return appendHelmert(make([]float64, 0, max(len(idx)-1, 0)), e, idx)
}

// appendHelmertAt appends the Helmert contrasts of the values at(i), i in
// idx, to out.
func appendHelmertAt(out []float64, at func(int) float64, idx []int32) []float64 {
	var sum float64
	for j, i := range idx {
		e := at(int(i))
		if j > 0 {
			jj := float64(j + 1)
			out = append(out, (sum-float64(j)*e)/math.Sqrt(jj*(jj-1)))
		}
		sum += e
	}
	return out
}

// appendHelmert appends the Helmert contrasts of the values at idx to out.
func appendHelmert[I int | int32](out, e []float64, idx []I) []float64 {
	var sum float64
	for j, i := range idx {
		if j > 0 {
			jj := float64(j + 1)
			out = append(out, (sum-float64(j)*e[i])/math.Sqrt(jj*(jj-1)))
		}
		sum += e[i]
	}
	return out
}

// scaledSD is the sample SD computed with the values scaled by their
// largest magnitude, so that it neither underflows nor overflows.
func scaledSD(g []float64) float64 {
	var big0 float64
	for _, v := range g {
		big0 = math.Max(big0, math.Abs(v))
	}
	if big0 == 0 || math.IsInf(big0, 0) {
		return 0
	}
	var m float64
	for _, v := range g {
		m += v / big0
	}
	m /= float64(len(g))
	var ss float64
	for _, v := range g {
		ss += (v/big0 - m) * (v/big0 - m)
	}
	return big0 * math.Sqrt(ss/float64(len(g)-1))
}

func verdicts(a Assumptions, alpha float64) []string {
	var v []string
	switch {
	case !a.NormalOK:
		v = append(v, "Normality of the residuals could not be tested (fewer than 3 or more than 5000 values, all equal, or not finite).")
	case a.ShapiroP < alpha:
		v = append(v, fmt.Sprintf("The residuals depart from a normal distribution (Shapiro–Wilk W = %.4f, p = %.4g). With moderate group sizes the F test is fairly robust to this, but look at the quantile plot. Options in allot: a transformed response (allot analyze --transform log, sqrt or logit), a rank test (--method rank: Kruskal–Wallis, or Friedman with blocks), or for counts and proportions a GLM (--family poisson or binomial); or ask a statistician.", a.ShapiroW, a.ShapiroP))
	default:
		v = append(v, fmt.Sprintf("The residuals are consistent with a normal distribution (Shapiro–Wilk W = %.4f, p = %.4g); this does not prove normality, and small samples have little power to show departures.", a.ShapiroW, a.ShapiroP))
	}
	switch {
	case !a.LeveneOK:
		v = append(v, "Equal variances could not be tested (too few units per treatment, or no spread to compare).")
	case a.LeveneP < alpha:
		v = append(v, fmt.Sprintf("The spread differs between treatments (%s F(%d, %d) = %.3f, p = %.4g): the equal-variance assumption is doubtful. Options in allot: Welch's ANOVA with Games–Howell comparisons for one factor (allot analyze --method welch), or a transformation that may stabilise the spread (--transform log when the spread grows with the mean); otherwise ask a statistician.", a.LeveneName, a.LeveneDF[0], a.LeveneDF[1], a.Levene, a.LeveneP))
	default:
		v = append(v, fmt.Sprintf("The spread is consistent with equal variances across treatments (%s F(%d, %d) = %.3f, p = %.4g).", a.LeveneName, a.LeveneDF[0], a.LeveneDF[1], a.Levene, a.LeveneP))
	}
	if !math.IsNaN(a.SDRatio) {
		word := "within the common rule of thumb (below about 3)"
		if a.SDRatio > 3 {
			word = "above the common rule of thumb of about 3"
		}
		v = append(v, fmt.Sprintf("Largest to smallest treatment SD (of residuals): %.2f, %s.", a.SDRatio, word))
	}
	if n := len(a.Outliers); n > 0 {
		v = append(v, fmt.Sprintf("%d observation(s) have a studentized (deleted) residual beyond ±3: check them for typing errors before anything else (listed with their cells).", n))
	} else {
		v = append(v, "No studentized (deleted) residual is beyond ±3.")
	}
	v = append(v, "Independence cannot be tested from the numbers: it holds when each experimental unit was randomised on its own and measured once; repeated measurements of one unit, or units sharing a pot, cage or tank, are not independent.")
	return v
}
