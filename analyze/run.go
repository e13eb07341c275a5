package analyze

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
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
	ShapiroW  float64   `json:"shapiro_w"`
	ShapiroP  float64   `json:"shapiro_p"`
	Levene    float64   `json:"brown_forsythe_f"`
	LeveneDF  [2]int    `json:"brown_forsythe_df"`
	LeveneP   float64   `json:"brown_forsythe_p"`
	SDRatio   float64   `json:"sd_ratio"`
	Outliers  []Outlier `json:"outliers"`
	Verdicts  []string  `json:"verdicts"`
	NormalOK  bool      `json:"-"`
	LeveneOK  bool      `json:"-"`
	Residuals []float64 `json:"-"`
	Fitted    []float64 `json:"-"`
	// Stud holds the internally studentized residuals e/(s·sqrt(1−h)),
	// Deleted the externally studentized ones (each unit left out of s),
	// which are not bounded by sqrt(n−p) and so can flag a typing slip in
	// a small trial.
	Stud    []float64 `json:"-"`
	Deleted []float64 `json:"-"`
}

// Result is the analysis of one response.
type Result struct {
	Table    *Table     `json:"anova"`
	Groups   [][]Group  `json:"groups"`
	PostHoc  []*PostHoc `json:"posthoc"`
	Simple   []*PostHoc `json:"simple_effects,omitempty"`
	Sampling *Sampling  `json:"subsampling,omitempty"`
	// Cells holds the means of the combinations of the first two factors
	// (factorial designs), for interaction plots.
	Cells       []Cell      `json:"cells,omitempty"`
	Assumptions Assumptions `json:"assumptions"`
	Notes       []string    `json:"notes,omitempty"`
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
}

// Run fits the model, follows significant treatment terms with the chosen
// comparisons (and simple effects for a significant two-factor
// interaction), and checks the assumptions on the residuals.
func Run(d Data, opt RunOptions) (*Result, error) {
	if opt.PostHoc == "" {
		opt.PostHoc = MethodTukey
	}
	if opt.Sides == 0 {
		opt.Sides = 2
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
	d, sampling, err := Average(d)
	if err != nil {
		return nil, err
	}
	t, err := Fit(d, opt.Options)
	if err != nil {
		return nil, err
	}
	res := &Result{Table: t, Sampling: sampling}
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(t.Residual.DF)}.Quantile(0.975)
	for fi := range d.Factors {
		g, _, err := lsGroups(d, t, fi)
		if err != nil {
			return nil, err
		}
		ls := t.LSMeans(fi)
		for i := range g {
			h := tq * ls[i].SE
			g[i].Lower, g[i].Upper = g[i].Mean-h, g[i].Mean+h
		}
		res.Groups = append(res.Groups, g)
	}
	if len(d.Factors) >= 2 {
		// Least-squares cell means of the first two factors, for the
		// interaction plot, with the raw counts and SDs.
		byName := map[string]Group{}
		for _, g := range t.m.pairSummaries(0, 1) {
			if g.N > 0 {
				byName[g.Level] = g
			}
		}
		la := t.est.levels[0]
		lb := t.est.levels[1]
		for k, c := range t.LSCells() {
			g, ok := byName[c.Level]
			if !ok {
				continue // an empty cell has no mean to show
			}
			h := tq * c.SE
			g.Mean, g.Lower, g.Upper = c.Mean, c.Mean-h, c.Mean+h
			res.Cells = append(res.Cells, Cell{A: la[k/len(lb)], B: lb[k%len(lb)], Group: g})
		}
	}
	interaction := false
	for _, term := range t.Terms {
		if len(term.Factors) > 1 && !term.BlockInteraction && term.P < t.Alpha {
			interaction = true
		}
	}
	for fi, f := range d.Factors {
		var term *Term
		for i := range t.Terms {
			if len(t.Terms[i].Factors) == 1 && !t.Terms[i].BlockInteraction && t.Terms[i].Factors[0] == f.Name {
				term = &t.Terms[i]
			}
		}
		if term == nil || term.P >= t.Alpha || opt.PostHoc == MethodNone {
			continue
		}
		var ph *PostHoc
		switch opt.PostHoc {
		case MethodTukey:
			ph, err = Tukey(d, t, fi)
		case MethodHolm:
			ph, err = Holm(d, t, fi)
		case MethodDunnett:
			ph, err = Dunnett(d, t, fi, opt.Control, opt.Sides)
		}
		if err != nil {
			return nil, err
		}
		addLetters(ph)
		ph.Groups = res.Groups[fi]
		res.PostHoc = append(res.PostHoc, ph)
	}
	if interaction && opt.PostHoc != MethodNone {
		res.Simple, err = simpleEffects(d, t)
		if err != nil {
			return nil, err
		}
		res.Notes = append(res.Notes, "An interaction is significant: the effect of one factor depends on the level of another, so the main-effect comparisons average over effects that differ and can mislead; read the simple effects (one factor within each level of the other) instead.")
	}
	if !t.cells.balanced(t.m) {
		res.Notes = append(res.Notes, "The design is unbalanced (missing units or unequal groups): the means shown are least-squares means, adjusted for the other terms and averaged over their levels with equal weights; raw means would be biased by which units are missing.")
	}
	res.Assumptions = checkAssumptions(d, t)
	return res, nil
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
func (m *model) pairSummaries(a, b int) []Group {
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
	return m.summaries(g, names)
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
		cells := m.pairSummaries(bi, ai)
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
			ph := tukeyGroups(groups, t, d.Factors[ai].Name, rawSE(groups, t))
			ph.Within = d.Factors[bi].Name + " = " + blName
			addLetters(ph)
			out = append(out, ph)
		}
	}
	return out, nil
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

// checkAssumptions runs the residual checks: Shapiro–Wilk on the residuals,
// Brown–Forsythe on the residuals grouped by treatment cell, the ratio of
// the largest to the smallest cell SD, and studentized residuals:
// internally r_i = e_i/(s·sqrt(1 − h_ii)), and externally (deleted)
// t_i = r_i·sqrt((ν − 1)/(ν − r_i²)) with ν the residual df (Cook and
// Weisberg 1982, Residuals and Influence in Regression, eq. 2.2.9), listing
// the units with |t| > 3.
func checkAssumptions(d Data, t *Table) Assumptions {
	a := Assumptions{Residuals: t.Residuals, Fitted: t.Fitted}
	a.Stud = make([]float64, len(t.Residuals))
	a.Deleted = make([]float64, len(t.Residuals))
	nu := float64(t.Residual.DF)
	for i, e := range t.Residuals {
		h := t.Leverage[i]
		if h < 1-1e-10 && t.ResidSD > 0 {
			a.Stud[i] = e / (t.ResidSD * math.Sqrt(1-h))
		} else {
			a.Stud[i] = math.NaN()
		}
		a.Deleted[i] = math.NaN()
		if r := a.Stud[i]; nu > 1 && !math.IsNaN(r) {
			if den := nu - r*r; den > 1e-12 {
				a.Deleted[i] = r * math.Sqrt((nu-1)/den)
			} else {
				a.Deleted[i] = math.Copysign(math.Inf(1), r)
			}
		}
		if math.Abs(a.Deleted[i]) > 3 {
			o := Outlier{Value: d.Values[i], Residual: e, Studentized: a.Deleted[i]}
			if d.Units != nil {
				o.Unit = d.Units[i]
			}
			if d.Where != nil {
				o.Where = d.Where[i]
			}
			a.Outliers = append(a.Outliers, o)
		}
	}
	sort.Slice(a.Outliers, func(i, j int) bool { return math.Abs(a.Outliers[i].Studentized) > math.Abs(a.Outliers[j].Studentized) })
	var ok bool
	a.ShapiroW, a.ShapiroP, ok = ShapiroWilk(t.Residuals)
	a.NormalOK = ok
	// Residuals grouped by treatment cell (a counting sort into one array).
	cs := t.cells
	cellOf := func(i int) int { return int(cs.treat[cs.of[i]]) }
	start := make([]int, cs.nTreat+1)
	for i := range t.Residuals {
		start[cellOf(i)+1]++
	}
	for c := 1; c <= cs.nTreat; c++ {
		start[c] += start[c-1]
	}
	flat := make([]float64, len(t.Residuals))
	next := append([]int(nil), start[:cs.nTreat]...)
	for i, e := range t.Residuals {
		c := cellOf(i)
		flat[next[c]] = e
		next[c]++
	}
	var order [][]float64
	for c := 0; c < cs.nTreat; c++ {
		if start[c+1] > start[c] {
			order = append(order, flat[start[c]:start[c+1]])
		}
	}
	var groups [][]float64
	lo, hi := math.Inf(1), 0.0
	for _, g := range order {
		groups = append(groups, g)
		if len(g) > 1 {
			var m, ss float64
			for _, v := range g {
				m += v
			}
			m /= float64(len(g))
			for _, v := range g {
				ss += (v - m) * (v - m)
			}
			sd := math.Sqrt(ss / float64(len(g)-1))
			lo, hi = math.Min(lo, sd), math.Max(hi, sd)
		}
	}
	a.SDRatio = math.NaN()
	if lo > 0 && !math.IsInf(lo, 1) {
		a.SDRatio = hi / lo
	}
	var df1, df2 int
	// The groups are slices of flat, a copy this function owns.
	a.Levene, df1, df2, a.LeveneP, a.LeveneOK = brownForsythe(groups)
	a.LeveneDF = [2]int{df1, df2}
	a.Verdicts = verdicts(a, t.Alpha)
	return a
}

func verdicts(a Assumptions, alpha float64) []string {
	var v []string
	switch {
	case !a.NormalOK:
		v = append(v, "Normality of the residuals could not be tested (fewer than 3 or more than 5000 residuals, or all equal).")
	case a.ShapiroP < alpha:
		v = append(v, fmt.Sprintf("The residuals depart from a normal distribution (Shapiro–Wilk W = %.4f, p = %.4g). With moderate group sizes the F test is fairly robust to this, but look at the quantile plot and consider a transformation or a statistician's advice.", a.ShapiroW, a.ShapiroP))
	default:
		v = append(v, fmt.Sprintf("The residuals are consistent with a normal distribution (Shapiro–Wilk W = %.4f, p = %.4g); this does not prove normality, and small samples have little power to show departures.", a.ShapiroW, a.ShapiroP))
	}
	switch {
	case !a.LeveneOK:
		v = append(v, "Equal variances could not be tested (too few units per treatment).")
	case a.LeveneP < alpha:
		v = append(v, fmt.Sprintf("The spread differs between treatments (Brown–Forsythe F(%d, %d) = %.3f, p = %.4g): the equal-variance assumption is doubtful; consider a transformation or a method for unequal variances.", a.LeveneDF[0], a.LeveneDF[1], a.Levene, a.LeveneP))
	default:
		v = append(v, fmt.Sprintf("The spread is consistent with equal variances across treatments (Brown–Forsythe F(%d, %d) = %.3f, p = %.4g).", a.LeveneDF[0], a.LeveneDF[1], a.Levene, a.LeveneP))
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
