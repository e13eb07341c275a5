package analyze

import (
	"fmt"
	"math"
	"sort"

	"github.com/allotproject/allot/column"
	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// SplitPlotCellMeans returns the raw means of the whole-plot × sub-plot
// cells of a split plot (n, mean, SD), whole-plot level varying slowest,
// in the level orders of d.Whole and d.Sub, for the interaction plot. In a
// balanced split plot they are the least-squares cell means; with missing
// sub-plots they are not adjusted.
func SplitPlotCellMeans(d SplitPlot) ([]Cell, error) {
	if d.Whole.Values.Len() != len(d.Values) || d.Sub.Values.Len() != len(d.Values) {
		return nil, fmt.Errorf("split plot: every column needs one value per observation")
	}
	wl, wi, err := d.Whole.levels()
	if err != nil {
		return nil, err
	}
	sl, si, err := d.Sub.levels()
	if err != nil {
		return nil, err
	}
	labels := make([]string, len(d.Values))
	var order []string
	for _, w := range wl {
		for _, s := range sl {
			order = append(order, w+"\x00"+s)
		}
	}
	for i := range labels {
		labels[i] = wl[wi[i]] + "\x00" + sl[si[i]]
	}
	gs, err := Summaries(Data{Response: d.Response, Values: column.Of(d.Values), Factors: []Column{{Name: d.Whole.Name + " × " + d.Sub.Name, Levels: order, Values: column.Of(labels)}}}, 0)
	if err != nil {
		return nil, err
	}
	var out []Cell
	for _, g := range gs {
		var w, s string
		for k := 0; k < len(g.Level); k++ {
			if g.Level[k] == 0 {
				w, s = g.Level[:k], g.Level[k+1:]
				break
			}
		}
		g.Level = w + " × " + s
		out = append(out, Cell{A: w, B: s, Group: g})
	}
	return out, nil
}

// LatinMeans returns the treatment means of a Latin square (or series):
// n, raw mean and SD, and the least-squares mean with its standard error
// and 95% confidence interval on the residual df. In complete squares,
// where every treatment meets every row and column equally often, the LS
// mean is the raw mean and its SE sqrt(MS_residual/n). With empty cells it
// is the fitted treatment effect of the additive model (rows, columns and
// treatments coded to sum to zero; rows and columns within squares for a
// series, which absorb the squares) added to the intercept: the model's
// prediction averaged with equal weights over the rows and columns, with
// SE s·sqrt(cᵀ(XᵀX)⁻¹c). NaN where the model cannot be fitted.
func LatinMeans(d LatinData, res *LatinResult) ([]Group, error) {
	gs, err := Summaries(Data{Response: d.Response, Values: column.Of(d.Values), Factors: []Column{d.Treatment}}, 0)
	if err != nil {
		return nil, err
	}
	for i := range gs {
		g := &gs[i]
		g.LSMean, g.SE, g.Lower, g.Upper = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	}
	if res == nil || res.Residual.DF <= 0 {
		return gs, nil
	}
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(res.Residual.DF)}.Quantile(0.975)
	if res.Missing == 0 {
		for i := range gs {
			g := &gs[i]
			g.LSMean, g.SE = g.Mean, math.Sqrt(res.Residual.MS/float64(g.N))
			g.Lower, g.Upper = g.LSMean-tq*g.SE, g.LSMean+tq*g.SE
		}
		return gs, nil
	}
	mean, se, _, ok := latinLSMeans(d, gs, res.Residual.MS)
	if !ok {
		return gs, nil
	}
	for i := range gs {
		g := &gs[i]
		g.LSMean, g.SE = mean[i], se[i]
		g.Lower, g.Upper = g.LSMean-tq*g.SE, g.LSMean+tq*g.SE
	}
	return gs, nil
}

// latinLSMeans fits the additive Latin-square model by QR and returns the
// least-squares mean and SE of each treatment of gs (in its order), and the
// SE of the difference of two of them; ok is false when the design matrix
// is rank deficient.
func latinLSMeans(d LatinData, gs []Group, ms float64) (mean, se []float64, diffSE func(i, j int) float64, ok bool) {
	f, ok := fitLatin(d, gs, ms)
	if !ok {
		return nil, nil, nil, false
	}
	return f.mean, f.se, f.diffSE, true
}

// latinFit is the additive Latin-square model fitted by QR: the treatments'
// LS means and SEs, the SE of a difference, and each observation's
// residual and leverage.
type latinFit struct {
	mean, se    []float64
	diffSE      func(i, j int) float64
	resid, leve []float64
}

// fitLatin fits the additive model (see LatinMeans); ok is false when the
// design matrix is rank deficient.
func fitLatin(d LatinData, gs []Group, ms float64) (latinFit, bool) {
	var none latinFit
	n := len(d.Values)
	y, shift, err := centred(column.Of(d.Values))
	if err != nil {
		return none, false
	}
	sh, _ := shift.Float64()
	label := func(c Column, i int) string {
		if d.Square != nil {
			return d.Square.Values.At(i) + "\x00" + c.Values.At(i)
		}
		return c.Values.At(i)
	}
	// Sum-to-zero coding of a factor: level j < L−1 its own column, the
	// last level −1 in every column.
	type coded struct {
		of     []int
		levels int
		in     []bool // the observations the factor applies to (nil: all)
	}
	levelsOf := func(at func(i int) string, order []string) coded {
		idx := map[string]int{}
		for _, l := range order {
			idx[l] = len(idx)
		}
		c := coded{of: make([]int, n)}
		for i := range n {
			l := at(i)
			j, seen := idx[l]
			if !seen {
				j = len(idx)
				idx[l] = j
			}
			c.of[i] = j
		}
		c.levels = len(idx)
		return c
	}
	var trtOrder []string
	for _, g := range gs {
		trtOrder = append(trtOrder, g.Level)
	}
	factors := []coded{levelsOf(func(i int) string { return label(d.Row, i) }, nil)}
	if d.Square == nil {
		factors = append(factors, levelsOf(d.Col.Values.At, nil))
	} else {
		// Rows within squares carry the squares; columns are coded within
		// each square (their effects sum to zero in every square), which
		// keeps the design of full rank.
		sq := levelsOf(d.Square.Values.At, nil)
		for g := range sq.levels {
			in := make([]bool, n)
			var order []string
			seen := map[string]bool{}
			for i := range n {
				if in[i] = sq.of[i] == g; in[i] && !seen[d.Col.Values.At(i)] {
					seen[d.Col.Values.At(i)] = true
					order = append(order, d.Col.Values.At(i))
				}
			}
			c := levelsOf(d.Col.Values.At, order)
			c.in = in
			factors = append(factors, c)
		}
	}
	trt := levelsOf(d.Treatment.Values.At, trtOrder)
	factors = append(factors, trt)
	p := 1
	start := make([]int, len(factors))
	for k, f := range factors {
		start[k] = p
		p += f.levels - 1
	}
	if n <= p {
		return none, false
	}
	x := mat.NewDense(n, p, nil)
	for i := range n {
		x.Set(i, 0, 1)
		for k, f := range factors {
			if f.in != nil && !f.in[i] {
				continue
			}
			for j := 0; j < f.levels-1; j++ {
				x.Set(i, start[k]+j, code(f.of[i], f.levels, j))
			}
		}
	}
	ls, ok := leastSquares(x, y)
	if !ok {
		return none, false
	}
	b, cov := ls.b, ls.cov
	ts := start[len(factors)-1]
	mean, se := make([]float64, len(gs)), make([]float64, len(gs))
	contrasts := make([][]float64, len(gs))
	quad := func(c []float64) float64 {
		var q float64
		for i := range p {
			if c[i] == 0 {
				continue
			}
			for j := range p {
				q += c[i] * cov.At(i, j) * c[j]
			}
		}
		return q
	}
	for k := range gs {
		c := make([]float64, p)
		c[0] = 1
		for j := 0; j < trt.levels-1; j++ {
			c[ts+j] = code(k, trt.levels, j)
		}
		var m float64
		for i := range p {
			m += c[i] * b[i]
		}
		contrasts[k] = c
		mean[k], se[k] = sh+m, math.Sqrt(ms*quad(c))
	}
	diffSE := func(i, j int) float64 {
		dc := make([]float64, p)
		for k := range dc {
			dc[k] = contrasts[i][k] - contrasts[j][k]
		}
		return math.Sqrt(ms * quad(dc))
	}
	return latinFit{mean: mean, se: se, diffSE: diffSE, resid: ls.resid, leve: ls.lev}, true
}

// lsFit is a least-squares fit of y on the columns of X by QR.
type lsFit struct {
	b          []float64
	cov        *mat.Dense // (XᵀX)⁻¹ = R⁻¹R⁻ᵀ
	resid, lev []float64  // y − Xb, and the leverages (diagonal of the hat matrix)
	df         int        // n − p
}

// leastSquares fits y on X (n > p, full column rank; ok is false
// otherwise). The leverages are the squared row norms of the first p
// columns of Q.
func leastSquares(x *mat.Dense, y []float64) (lsFit, bool) {
	n, p := x.Dims()
	if n <= p {
		return lsFit{}, false
	}
	var qr mat.QR
	qr.Factorize(x)
	var rd mat.Dense
	qr.RTo(&rd)
	r := mat.NewTriDense(p, mat.Upper, nil)
	for i := range p {
		for j := i; j < p; j++ {
			r.SetTri(i, j, rd.At(i, j))
		}
	}
	for j := range p {
		if math.Abs(r.At(j, j)) < 1e-9*math.Sqrt(float64(n)) {
			return lsFit{}, false
		}
	}
	var b mat.Dense
	if err := qr.SolveTo(&b, false, mat.NewDense(n, 1, y)); err != nil {
		return lsFit{}, false
	}
	var rinv mat.TriDense
	if err := rinv.InverseTri(r); err != nil {
		return lsFit{}, false
	}
	cov := new(mat.Dense)
	cov.Mul(&rinv, rinv.T())
	var q mat.Dense
	qr.QTo(&q)
	f := lsFit{b: make([]float64, p), cov: cov, resid: make([]float64, n), lev: make([]float64, n), df: n - p}
	for j := range p {
		f.b[j] = b.At(j, 0)
	}
	for i := range n {
		fit, h := 0.0, 0.0
		for j := range p {
			fit += x.At(i, j) * f.b[j]
			h += q.At(i, j) * q.At(i, j)
		}
		f.resid[i], f.lev[i] = y[i]-fit, h
	}
	return f, true
}

// LatinTukey compares every pair of treatment means of a Latin square (or
// series) by Tukey HSD on the residual mean square and df: in complete
// squares the means are the raw ones and SE(i − j) = sqrt(MS(1/n_i +
// 1/n_j)); with cells missing, the least-squares means of LatinMeans with
// the SE of each difference from the additive model (Tukey–Kramer). means
// is LatinMeans's result; nil when its LS means are not available.
func LatinTukey(d LatinData, res *LatinResult, means []Group, alpha float64) (*PostHoc, error) {
	if res == nil || res.Residual.DF <= 0 || len(means) < 2 || math.IsNaN(means[0].LSMean) {
		return nil, nil
	}
	se := func(i, j int) float64 {
		return math.Sqrt(res.Residual.MS * (1/float64(means[i].N) + 1/float64(means[j].N)))
	}
	if res.Missing > 0 {
		_, _, diffSE, ok := latinLSMeans(d, means, res.Residual.MS)
		if !ok {
			return nil, nil
		}
		se = diffSE
	}
	t := &Table{Alpha: alpha, Residual: Residual{DF: res.Residual.DF}}
	ph := tukeyGroups(append([]Group(nil), means...), t, d.Treatment.Name, se)
	addLetters(ph)
	return ph, nil
}

// LatinChecks runs the residual checks of a Latin square (or series) on the
// additive model's residuals: Shapiro–Wilk on them (approximate, as they
// are correlated: they sum to zero along every row, column and treatment;
// 3 to 5000 values), and the units whose externally studentized residual
// exceeds 3 in size (Cook and Weisberg 1982, eq. 2.2.9), largest first.
func LatinChecks(d LatinData, res *LatinResult, means []Group, alpha float64) Assumptions {
	a := residualBasis("residuals of the additive model (rows, columns and treatments); they are correlated, so the normality test is approximate")
	if res == nil || res.Residual.DF <= 1 {
		a.Verdicts = []string{"The residual checks need at least 2 residual df."}
		return a
	}
	f, ok := fitLatin(d, means, res.Residual.MS)
	if !ok {
		a.Verdicts = []string{"The residual checks were not run: the model could not be fitted by least squares."}
		return a
	}
	where := func(i int) string {
		w := d.Row.Name + " " + d.Row.Values.At(i) + ", " + d.Col.Name + " " + d.Col.Values.At(i)
		if d.Square != nil {
			w = d.Square.Name + " " + d.Square.Values.At(i) + ", " + w
		}
		return w
	}
	return residualChecks(a, f.resid, f.leve, res.Residual.MS, res.Residual.DF, d.Values, d.Units, where, alpha)
}

// residualBasis returns checks not yet run, on the residuals basis names:
// no statistic is set until residualChecks sets it (no test of equal
// variances runs here).
func residualBasis(basis string) Assumptions {
	return Assumptions{ShapiroW: math.NaN(), ShapiroP: math.NaN(), Levene: math.NaN(), LeveneP: math.NaN(), SDRatio: math.NaN(), Basis: basis}
}

// residualChecks completes a with the checks of residuals resid (leverages
// lev, residual mean square ms on df): Shapiro–Wilk on them (approximate:
// they are correlated) and the units whose externally studentized residual
// exceeds 3, named by where(i), largest first.
func residualChecks(a Assumptions, resid, lev []float64, ms float64, df int, values, units []string, where func(int) string, alpha float64) Assumptions {
	sd := math.Sqrt(ms)
	for i, e := range resid {
		_, del := studentizedOf(e, lev[i], sd, df)
		if math.Abs(del) > 3 {
			o := Outlier{Value: values[i], Residual: e, Studentized: del, Where: where(i)}
			if i < len(units) {
				o.Unit = units[i]
			}
			a.Outliers = append(a.Outliers, o)
		}
	}
	sort.Slice(a.Outliers, func(i, j int) bool { return math.Abs(a.Outliers[i].Studentized) > math.Abs(a.Outliers[j].Studentized) })
	var ok2 bool
	a.ShapiroW, a.ShapiroP, ok2 = ShapiroWilk(resid)
	a.NormalOK = ok2 && !math.IsNaN(a.ShapiroW) && !math.IsNaN(a.ShapiroP)
	switch {
	case !a.NormalOK:
		a.Verdicts = append(a.Verdicts, "Normality of the residuals could not be tested (fewer than 3 or more than 5000 values, or all equal).")
	case a.ShapiroP < alpha:
		a.Verdicts = append(a.Verdicts, fmt.Sprintf("The residuals depart from a normal distribution (Shapiro–Wilk W = %.3f, p = %.4f; approximate for correlated residuals): look at the units listed and consider a transformation or a rank-based analysis, with a statistician.", a.ShapiroW, a.ShapiroP))
	default:
		v := fmt.Sprintf("The residuals are consistent with a normal distribution (Shapiro–Wilk W = %.3f, p = %.4f; approximate for correlated residuals).", a.ShapiroW, a.ShapiroP)
		if df < 20 {
			v += fmt.Sprintf(" With %d residual df this test has little power.", df)
		}
		a.Verdicts = append(a.Verdicts, v)
	}
	if len(a.Outliers) > 0 {
		a.Verdicts = append(a.Verdicts, fmt.Sprintf("%d unit(s) have a studentized residual beyond ±3: check them for typing or measuring slips before trusting the tests.", len(a.Outliers)))
	}
	return a
}

// SplitPlotChecks checks the sub-plot residuals of a split plot: those of
// the model within main plots (main plots as fixed effects, the sub-plot
// factor and its interaction with the whole-plot factor), whose mean
// square is error (b), with or without missing sub-plots. Shapiro–Wilk on
// them is approximate (they are correlated: they sum to zero within every
// main plot and every cell), and the units beyond ±3 externally
// studentized are listed by main plot and sub-plot treatment. The
// whole-plot stratum (error (a)) has too few df in most trials for a
// useful check of its own.
func SplitPlotChecks(d SplitPlot, alpha float64) Assumptions {
	a := residualBasis("sub-plot residuals of the model within main plots (main plots, the sub-plot factor and its interaction with the whole-plot factor), whose mean square is error (b); they are correlated, so the normality test is approximate")
	fail := func(why string) Assumptions {
		a.Verdicts = []string{"The residual checks were not run: " + why + "."}
		return a
	}
	n := len(d.Values)
	if d.Whole.Values.Len() != n || d.Sub.Values.Len() != n || d.MainPlot.Values.Len() != n {
		return fail("every column needs one value per observation")
	}
	y, _, err := centred(column.Of(d.Values))
	if err != nil {
		return fail(err.Error())
	}
	mL, mI, err1 := d.MainPlot.levels()
	sL, sI, err2 := d.Sub.levels()
	wL, wI, err3 := d.Whole.levels()
	if err1 != nil || err2 != nil || err3 != nil {
		return fail("a column has a value outside its levels")
	}
	nm, ns, nw := len(mL), len(sL), len(wL)
	p := nm + (ns - 1) + (nw-1)*(ns-1)
	x := mat.NewDense(n, p, nil)
	for i := range n {
		x.Set(i, 0, 1)
		col := 1
		for j := 0; j < nm-1; j++ {
			x.Set(i, col+j, code(mI[i], nm, j))
		}
		col += nm - 1
		for j := 0; j < ns-1; j++ {
			x.Set(i, col+j, code(sI[i], ns, j))
		}
		col += ns - 1
		for k := 0; k < nw-1; k++ {
			for j := 0; j < ns-1; j++ {
				x.Set(i, col+k*(ns-1)+j, code(wI[i], nw, k)*code(sI[i], ns, j))
			}
		}
	}
	ls, ok := leastSquares(x, y)
	if !ok || ls.df < 2 {
		return fail("the model within main plots leaves fewer than 2 residual df, or cannot be fitted")
	}
	var rss float64
	for _, e := range ls.resid {
		rss += e * e
	}
	where := func(i int) string {
		return d.MainPlot.Name + " " + mL[mI[i]] + ", " + d.Sub.Name + " " + sL[sI[i]]
	}
	return residualChecks(a, ls.resid, ls.lev, rss/float64(ls.df), ls.df, d.Values, d.Units, where, alpha)
}
