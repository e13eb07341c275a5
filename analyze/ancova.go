package analyze

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// ANCOVAResult is the analysis of covariance of one response with one
// baseline covariate.
type ANCOVAResult struct {
	Response  string `json:"response"`
	Covariate string `json:"covariate"`
	SSType    int    `json:"ss_type"`
	N         int    `json:"n"`
	// Terms holds the covariate and the design's terms, each adjusted as
	// SSType says.
	Terms    []Term   `json:"terms"`
	Residual Residual `json:"residual"`
	// Slope is the common within-treatment regression coefficient of the
	// response on the covariate, with its SE, t and p.
	Slope   float64 `json:"slope"`
	SlopeSE float64 `json:"slope_se"`
	SlopeT  float64 `json:"slope_t"`
	SlopeP  float64 `json:"slope_p"`
	// CovMean is the covariate's mean, at which adjusted means are given.
	CovMean float64 `json:"covariate_mean"`
	// EqualSlopes is the F test of treatment × covariate (the slopes do
	// not differ between treatments), added to the full model.
	EqualSlopes struct {
		DF1 int     `json:"df1"`
		DF2 int     `json:"df2"`
		F   float64 `json:"f"`
		P   float64 `json:"p"`
	} `json:"equal_slopes"`
	// Balance is the one-way F test of the covariate on the treatments:
	// measured before randomisation, it should show no difference.
	Balance struct {
		F float64 `json:"f"`
		P float64 `json:"p"`
	} `json:"covariate_balance"`
	// Means holds the adjusted means of each factor's levels at CovMean.
	Means [][]AdjustedMean `json:"adjusted_means"`
	// Pairs holds Tukey–Kramer comparisons of the adjusted means of each
	// factor (simultaneous intervals at 1 − Alpha).
	Pairs [][]PairTest `json:"comparisons"`
	Alpha float64      `json:"alpha"`
	Notes []string     `json:"notes,omitempty"`
}

// AdjustedMean is a level's least-squares mean at the covariate's mean.
type AdjustedMean struct {
	Term    string  `json:"term"`
	Level   string  `json:"level"`
	N       int     `json:"n"`
	Raw     float64 `json:"raw_mean"`
	CovMean float64 `json:"covariate_mean"`
	Mean    float64 `json:"adjusted_mean"`
	SE      float64 `json:"se"`
	Lower   float64 `json:"ci_lower"`
	Upper   float64 `json:"ci_upper"`
	vec     []float64
}

// olsFit is a least-squares fit by QR of the centred response.
type olsFit struct {
	beta []float64
	rss  float64
	cov  *mat.Dense // (XᵀX)⁻¹
	rank int
}

func ols(y []float64, cols [][]float64) (*olsFit, error) {
	n, p := len(y), len(cols)
	if n <= p {
		return nil, fmt.Errorf("%d observations for %d parameters leave no residual degrees of freedom", n, p)
	}
	x := mat.NewDense(n, p, nil)
	for j, c := range cols {
		for i, v := range c {
			x.Set(i, j, v)
		}
	}
	var qr mat.QR
	qr.Factorize(x)
	var r mat.Dense
	qr.RTo(&r)
	f := &olsFit{}
	var maxd float64
	for j := 0; j < p; j++ {
		maxd = math.Max(maxd, math.Abs(r.At(j, j)))
	}
	for j := 0; j < p; j++ {
		if math.Abs(r.At(j, j)) > 1e-9*maxd {
			f.rank++
		}
	}
	if f.rank < p {
		return f, ErrEmptyCell
	}
	var b mat.VecDense
	if err := qr.SolveVecTo(&b, false, mat.NewVecDense(n, append([]float64(nil), y...))); err != nil {
		return nil, err
	}
	f.beta = make([]float64, p)
	for j := range f.beta {
		f.beta[j] = b.AtVec(j)
	}
	for i := 0; i < n; i++ {
		e := y[i]
		for j, c := range cols {
			e -= c[i] * f.beta[j]
		}
		f.rss += e * e
	}
	var ri mat.Dense
	if err := ri.Inverse(r.Slice(0, p, 0, p)); err == nil {
		f.cov = mat.NewDense(p, p, nil)
		f.cov.Mul(&ri, ri.T())
	}
	return f, nil
}

// ANCOVA fits the design's model with one baseline covariate x (one
// decimal text per observation, as the response), centred at its mean: the
// covariate first, then the block and treatment terms (Type 1 order), or
// each term adjusted for all others (Types 2 and 3, sum-to-zero coding; the
// covariate has no containing term, so Types 2 and 3 agree for it). It
// reports the common slope with its t test, adjusted means at the
// covariate's mean (the least-squares means of the model) with SEs and 95%
// intervals, Tukey–Kramer comparisons of the adjusted means on the model's
// error (Kramer 1956, Biometrics 12, 307–310, the usual extension to
// covariance analysis), the F test of equal slopes (treatment ×
// covariate, added to the full model), and a one-way F test of the
// covariate on the treatments (a warning when p < 0.05: a covariate
// measured before randomisation should not differ). Checked against
// statsmodels OLS with anova_lm (testdata/reference/gen_ancova.py).
func ANCOVA(d Data, covName string, x []string, opt Options) (*ANCOVAResult, error) {
	return ancova(d, covName, x, opt, true)
}

// ANCOVATests is ANCOVA without the adjusted means and their comparisons,
// for simulations that need only the F tests.
func ANCOVATests(d Data, covName string, x []string, opt Options) (*ANCOVAResult, error) {
	return ancova(d, covName, x, opt, false)
}

func ancova(d Data, covName string, x []string, opt Options, means bool) (*ANCOVAResult, error) {
	if opt.SSType == 0 {
		opt.SSType = 3
	}
	if opt.Alpha == 0 {
		opt.Alpha = 0.05
	}
	if len(x) != d.Values.Len() {
		return nil, fmt.Errorf("covariate %q has %d values for %d observations", covName, len(x), d.Values.Len())
	}
	if len(d.Subsamples) > 0 {
		var err error
		if d, _, err = Average(d); err != nil {
			return nil, err
		}
	}
	mdl, err := buildModel(d)
	if err != nil {
		return nil, err
	}
	xc, xs, err := centred(column.Of(x))
	if err != nil {
		return nil, fmt.Errorf("covariate %q: %w", covName, err)
	}
	// Centre the covariate at its mean exactly enough: subtract the mean of
	// the (already median-centred) values.
	var xm float64
	for _, v := range xc {
		xm += v
	}
	xm /= float64(len(xc))
	cov := make([]float64, len(xc))
	var sxx float64
	for i, v := range xc {
		cov[i] = v - xm
		sxx += cov[i] * cov[i]
	}
	if sxx == 0 {
		return nil, fmt.Errorf("covariate %q has the same value for every unit: it cannot adjust anything", covName)
	}
	shift, _ := xs.Float64()
	n := mdl.n
	one := make([]float64, n)
	for i := range one {
		one[i] = 1
	}
	// Term 0 is the covariate; terms 1.. are the model's.
	tc := mdl.termColumns()
	termCols := [][][]float64{{cov}}
	names := []string{covName}
	for k, t := range mdl.terms {
		termCols = append(termCols, tc[k])
		names = append(names, t.name)
	}
	design := func(keep []int) [][]float64 {
		cols := [][]float64{one}
		for _, k := range keep {
			cols = append(cols, termCols[k]...)
		}
		return cols
	}
	all := make([]int, len(termCols))
	for i := range all {
		all[i] = i
	}
	full, err := ols(mdl.y, design(all))
	if err != nil {
		return nil, fmt.Errorf("%w: some combinations of levels have no observations", err)
	}
	p := len(design(all))
	res := &ANCOVAResult{Response: d.Response, Covariate: covName, SSType: opt.SSType, N: n, Alpha: opt.Alpha, CovMean: shift + xm}
	res.Residual.DF = n - p
	res.Residual.SS = full.rss
	res.Residual.MS = full.rss / float64(res.Residual.DF)
	mse := res.Residual.MS
	fdist := func(df1 int) distuv.F { return distuv.F{D1: float64(df1), D2: float64(res.Residual.DF)} }
	contains := func(a, b int) bool {
		if a == 0 || b == 0 {
			return false
		}
		return mdl.contains(a-1, b-1)
	}
	prevRSS := 0.0
	if opt.SSType == 1 {
		f0, err := ols(mdl.y, design(nil))
		if err != nil {
			return nil, err
		}
		prevRSS = f0.rss
	}
	for k := range termCols {
		var ss float64
		switch opt.SSType {
		case 1:
			f, err := ols(mdl.y, design(all[:k+1]))
			if err != nil {
				return nil, err
			}
			ss = prevRSS - f.rss
			prevRSS = f.rss
		default:
			var without []int
			for j := range termCols {
				if j == k || opt.SSType == 2 && contains(j, k) {
					continue
				}
				without = append(without, j)
			}
			fw, err := ols(mdl.y, design(without))
			if err != nil {
				return nil, err
			}
			with := full.rss
			if opt.SSType == 2 {
				fwith, err := ols(mdl.y, design(append(append([]int(nil), without...), k)))
				if err != nil {
					return nil, err
				}
				with = fwith.rss
			}
			ss = fw.rss - with
		}
		df := len(termCols[k])
		row := Term{Source: names[k], DF: df, SS: math.Max(ss, 0)}
		row.MS = row.SS / float64(df)
		row.F = row.MS / mse
		row.P = fdist(df).Survival(row.F)
		row.PartialEta2 = row.SS / (row.SS + res.Residual.SS)
		row.PartialOmega2 = (row.SS - float64(df)*mse) / (row.SS + float64(n-df)*mse)
		if k > 0 {
			t := mdl.terms[k-1]
			row.Block, row.BlockInteraction = t.block, t.blockInt
			for _, fi := range t.factors {
				row.Factors = append(row.Factors, d.Factors[fi].Name)
			}
		}
		res.Terms = append(res.Terms, row)
	}
	res.Slope = full.beta[1]
	res.SlopeSE = math.Sqrt(mse * full.cov.At(1, 1))
	res.SlopeT = res.Slope / res.SlopeSE
	res.SlopeP = 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(res.Residual.DF)}.Survival(math.Abs(res.SlopeT))
	if err := res.equalSlopes(mdl, tc, cov, design(all), full.rss); err != nil {
		return nil, err
	}
	res.balance(mdl, tc, xc, one)
	if means {
		res.adjustedMeans(d, mdl, full, p, xc, shift)
	}
	return res, nil
}

// equalSlopes adds treatment × covariate columns (each treatment term's
// columns times the covariate) to the full model and tests them.
func (res *ANCOVAResult) equalSlopes(mdl *model, tc [][][]float64, cov []float64, cols [][]float64, rss float64) error {
	ext := append([][]float64(nil), cols...)
	extra := 0
	for k, t := range mdl.terms {
		if t.block || t.blockInt {
			continue
		}
		for _, c := range tc[k] {
			v := make([]float64, len(c))
			for i := range c {
				v[i] = c[i] * cov[i]
			}
			ext = append(ext, v)
			extra++
		}
	}
	f, err := ols(mdl.y, ext)
	if err != nil {
		res.Notes = append(res.Notes, "The test of equal slopes could not be made: some treatments have too few units or too little spread in the covariate.")
		return nil
	}
	df2 := len(mdl.y) - len(ext)
	es := &res.EqualSlopes
	es.DF1, es.DF2 = extra, df2
	es.F = (rss - f.rss) / float64(extra) / (f.rss / float64(df2))
	es.P = distuv.F{D1: float64(extra), D2: float64(df2)}.Survival(es.F)
	if es.P < res.Alpha {
		res.Notes = append(res.Notes, fmt.Sprintf("The slopes on %s differ between treatments (F = %.3g, p = %.3g): a common slope, and so the adjusted means, may mislead; compare the treatments at several values of %s instead.", res.Covariate, es.F, es.P, res.Covariate))
	}
	return nil
}

// balance tests the covariate on the treatment combinations (one way).
func (res *ANCOVAResult) balance(mdl *model, tc [][][]float64, xc, one []float64) {
	cols := [][]float64{one}
	for k, t := range mdl.terms {
		if !t.block && !t.blockInt {
			cols = append(cols, tc[k]...)
		}
	}
	f0, err0 := ols(xc, [][]float64{one})
	f1, err1 := ols(xc, cols)
	if err0 != nil || err1 != nil {
		return
	}
	df1, df2 := len(cols)-1, len(xc)-len(cols)
	res.Balance.F = (f0.rss - f1.rss) / float64(df1) / (f1.rss / float64(df2))
	res.Balance.P = distuv.F{D1: float64(df1), D2: float64(df2)}.Survival(res.Balance.F)
	if res.Balance.P < 0.05 {
		res.Notes = append(res.Notes, fmt.Sprintf("The covariate %s differs between treatments (F = %.3g, p = %.3g). Measured before treatment and randomised over, it should not: check that it was recorded before the treatments started; if the treatments changed it, adjusting for it removes part of their effect.", res.Covariate, res.Balance.F, res.Balance.P))
	}
}

// adjustedMeans fills each factor's adjusted means and their Tukey–Kramer
// comparisons. With the covariate centred at its mean, the adjusted mean of
// a level is the intercept plus its sum-to-zero coding; block and
// interaction columns average to zero.
func (res *ANCOVAResult) adjustedMeans(d Data, mdl *model, full *olsFit, p int, xc []float64, xshift float64) {
	mse := res.Residual.MS
	df := float64(res.Residual.DF)
	tq := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(1 - res.Alpha/2)
	for fi, f := range d.Factors {
		var row []AdjustedMean
		for l, name := range mdl.levels[fi] {
			v := make([]float64, p)
			v[0] = 1
			c := 2 // intercept, covariate
			for _, t := range mdl.terms {
				if !t.block && !t.blockInt && len(t.factors) == 1 && t.factors[0] == fi {
					L := t.df + 1
					for j := 0; j < L-1; j++ {
						v[c+j] = code(l, L, j)
					}
				}
				c += t.df
			}
			g := AdjustedMean{Term: f.Name, Level: name, vec: v}
			var sy, sx float64
			for i, li := range mdl.index[fi] {
				if int(li) == l {
					g.N++
					sy += mdl.y[i]
					sx += xc[i]
				}
			}
			g.Raw = sy/float64(g.N) + mdl.shift
			g.CovMean = sx/float64(g.N) + xshift
			for j, b := range full.beta {
				g.Mean += v[j] * b
			}
			g.Mean += mdl.shift
			g.SE = math.Sqrt(mse * quad(v, full.cov))
			g.Lower, g.Upper = g.Mean-tq*g.SE, g.Mean+tq*g.SE
			row = append(row, g)
		}
		res.Means = append(res.Means, row)
		k := float64(len(row))
		sr := prob.StudentizedRange{K: k, Nu: df}
		crit := sr.Quantile(1 - res.Alpha)
		var pairs []PairTest
		for i := 0; i < len(row); i++ {
			for j := i + 1; j < len(row); j++ {
				a, b := row[i], row[j]
				dv := make([]float64, p)
				for x := range dv {
					dv[x] = a.vec[x] - b.vec[x]
				}
				se := math.Sqrt(mse * quad(dv, full.cov))
				diff := a.Mean - b.Mean
				q := math.Abs(diff) / (se / math.Sqrt2)
				pairs = append(pairs, PairTest{Pair: a.Level + " − " + b.Level, A: a.Level, B: b.Level, Estimate: diff, SE: se,
					Stat: q, DF: df, P: sr.Survival(q), Lower: diff - crit*se/math.Sqrt2, Upper: diff + crit*se/math.Sqrt2})
			}
		}
		res.Pairs = append(res.Pairs, pairs)
	}
}
