package analyze

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/allotproject/allot/prob"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// GLM families.
const (
	FamilyBinomial = "binomial"
	FamilyPoisson  = "poisson"
)

// GLMOptions controls FitGLM.
type GLMOptions struct {
	// Family is FamilyBinomial (logit link; the response is the number of
	// successes out of Trials) or FamilyPoisson (log link; counts).
	Family string
	// Trials holds the number of trials of each observation (binomial).
	Trials []float64
	// SSType is 1 (terms added in order), 2 or 3 (each term dropped from
	// the model that holds every other term, sum-to-zero coding). 0 means 3.
	SSType int
	// Alpha is the level of intervals and comparisons; 0 means 0.05.
	Alpha float64
	// PostHoc is MethodHolm (default), MethodTukey or MethodNone.
	PostHoc string
}

// GLMTerm is one likelihood-ratio test of a term.
type GLMTerm struct {
	Source string `json:"source"`
	DF     int    `json:"df"`
	// Deviance is the increase in deviance when the term is removed, the
	// likelihood-ratio χ² statistic; P its χ² p-value.
	Deviance float64 `json:"deviance_change"`
	P        float64 `json:"p_chisq"`
	// F and PF are the quasi-likelihood F test, (ΔD/df)/φ on df and the
	// residual df, reported when the dispersion φ exceeds 1.
	F  float64 `json:"f,omitempty"`
	PF float64 `json:"p_f,omitempty"`
	// Block marks the block term.
	Block bool `json:"block,omitempty"`
}

// GLMMean is a treatment level's estimated marginal mean, back-transformed.
type GLMMean struct {
	Term  string  `json:"term"`
	Level string  `json:"level"`
	N     int     `json:"n"`
	Total float64 `json:"total"`
	// Observed is the raw proportion (successes/trials) or mean count.
	Observed float64 `json:"observed"`
	// Estimate, Lower and Upper are the model's probability or rate with
	// its 1 − α interval, back-transformed from the link scale.
	Estimate float64 `json:"estimate"`
	Lower    float64 `json:"lower"`
	Upper    float64 `json:"upper"`
	Link     float64 `json:"link"`
	LinkSE   float64 `json:"link_se"`
	// Boundary marks a level whose data lie on the edge of the parameter
	// space (all zero, or all successes), whose link is not finite.
	Boundary bool `json:"boundary,omitempty"`
	// vec is the mean's contrast vector on the coefficients.
	vec []float64
}

// GLMComparison is a pairwise comparison on the link scale with its ratio.
type GLMComparison struct {
	Term string `json:"term"`
	PairTest
	// Ratio is exp(estimate): an odds ratio (binomial) or rate ratio
	// (Poisson), with its simultaneous interval.
	Ratio      float64 `json:"ratio"`
	RatioLower float64 `json:"ratio_lower"`
	RatioUpper float64 `json:"ratio_upper"`
}

// GLMResult is a fitted generalised linear model of a designed experiment.
type GLMResult struct {
	Response     string  `json:"response"`
	Family       string  `json:"family"`
	Link         string  `json:"link"`
	N            int     `json:"n"`
	SSType       int     `json:"test_type"`
	Alpha        float64 `json:"alpha"`
	Deviance     float64 `json:"residual_deviance"`
	NullDeviance float64 `json:"null_deviance"`
	ResidDF      int     `json:"residual_df"`
	Pearson      float64 `json:"pearson_chisq"`
	// Dispersion is Pearson χ²/residual df; Quasi reports that it exceeds 1
	// and the F tests, standard errors and intervals use it.
	Dispersion  float64           `json:"dispersion"`
	Quasi       bool              `json:"quasi"`
	Terms       []GLMTerm         `json:"terms"`
	Coef        []float64         `json:"coefficients"`
	Means       [][]GLMMean       `json:"means"`
	PairMethod  string            `json:"pairwise_method,omitempty"`
	Comparisons [][]GLMComparison `json:"comparisons,omitempty"`
	Iterations  int               `json:"iterations"`
	Notes       []string          `json:"notes,omitempty"`
}

// glmFamily is a family with its canonical link.
type glmFamily struct {
	name, link string
	// mu returns the mean of observation i from the linear predictor.
	mu func(eta, m float64) float64
	// variance returns Var(Y)/φ at mean μ (m trials for the binomial).
	variance func(mu, m float64) float64
	// dev returns the unit deviance of y at μ.
	dev func(y, mu, m float64) float64
	// start returns a starting mean.
	start func(y, m float64) float64
	// eta returns the link of μ.
	eta func(mu, m float64) float64
	// inv back-transforms a link value to the response scale (per trial).
	inv func(eta float64) float64
}

func xlogy(x, y float64) float64 {
	if x == 0 {
		return 0
	}
	return x * math.Log(y)
}

var binomialFamily = glmFamily{
	name: FamilyBinomial, link: "logit",
	mu: func(eta, m float64) float64 {
		eta = math.Max(-30, math.Min(30, eta))
		return m / (1 + math.Exp(-eta))
	},
	variance: func(mu, m float64) float64 { return mu * (m - mu) / m },
	dev: func(y, mu, m float64) float64 {
		return 2 * (xlogy(y, y/mu) + xlogy(m-y, (m-y)/(m-mu)))
	},
	start: func(y, m float64) float64 { return m * (y + 0.5) / (m + 1) },
	eta:   func(mu, m float64) float64 { return math.Log(mu / (m - mu)) },
	inv:   func(eta float64) float64 { return 1 / (1 + math.Exp(-eta)) },
}

var poissonFamily = glmFamily{
	name: FamilyPoisson, link: "log",
	mu:       func(eta, _ float64) float64 { return math.Exp(math.Max(-30, math.Min(700, eta))) },
	variance: func(mu, _ float64) float64 { return mu },
	dev: func(y, mu, _ float64) float64 {
		return 2 * (xlogy(y, y/mu) - (y - mu))
	},
	start: func(y, _ float64) float64 { return y + 0.5 },
	eta:   func(mu, _ float64) float64 { return math.Log(mu) },
	inv:   math.Exp,
}

// glmFit is one IRLS fit.
type glmFit struct {
	beta     []float64
	mu       []float64
	deviance float64
	cov      *mat.Dense // (XᵀWX)⁻¹, unscaled
	iter     int
	rank     int
}

// irls fits y (with m trials) on the columns cols (the intercept first) by
// iteratively reweighted least squares (Nelder and Wedderburn 1972,
// "Generalized linear models", JRSS A 135, 370–384; McCullagh and Nelder
// 1989, Generalized Linear Models, 2nd ed., section 2.5), each step a
// Householder QR solve of the weighted working regression, until the
// deviance changes by less than 1e-12 relative (at most 100 steps).
func irls(fam glmFamily, y, m []float64, cols [][]float64) (*glmFit, error) {
	n, p := len(y), len(cols)
	mu := make([]float64, n)
	eta := make([]float64, n)
	for i := range y {
		mu[i] = fam.start(y[i], m[i])
		eta[i] = fam.eta(mu[i], m[i])
	}
	dev := math.Inf(1)
	x := mat.NewDense(n, p, nil)
	z := mat.NewVecDense(n, nil)
	var beta mat.VecDense
	var qr mat.QR
	fit := &glmFit{}
	for it := 1; it <= 100; it++ {
		for i := 0; i < n; i++ {
			// d μ/d η for the canonical link is Var(μ) (times m/m).
			v := fam.variance(mu[i], m[i])
			w := math.Max(v, 1e-300)
			sw := math.Sqrt(w)
			for j, c := range cols {
				x.Set(i, j, sw*c[i])
			}
			z.SetVec(i, sw*(eta[i]+(y[i]-mu[i])/w))
		}
		qr.Factorize(x)
		if err := qr.SolveVecTo(&beta, false, z); err != nil {
			return nil, fmt.Errorf("the model's design is singular: %w", err)
		}
		var nd float64
		for i := 0; i < n; i++ {
			var e float64
			for j, c := range cols {
				e += c[i] * beta.AtVec(j)
			}
			eta[i] = e
			mu[i] = fam.mu(e, m[i])
			nd += fam.dev(y[i], mu[i], m[i])
		}
		fit.iter = it
		if math.Abs(nd-dev) <= 1e-12*(math.Abs(nd)+0.1) {
			dev = nd
			break
		}
		dev = nd
	}
	fit.deviance = dev
	fit.mu = mu
	fit.beta = make([]float64, p)
	for j := range fit.beta {
		fit.beta[j] = beta.AtVec(j)
	}
	// Rank and covariance from the final R: (XᵀWX)⁻¹ = R⁻¹R⁻ᵀ.
	var r mat.Dense
	qr.RTo(&r)
	var maxd float64
	for j := 0; j < p; j++ {
		maxd = math.Max(maxd, math.Abs(r.At(j, j)))
	}
	for j := 0; j < p; j++ {
		if math.Abs(r.At(j, j)) > 1e-9*maxd {
			fit.rank++
		}
	}
	rp := r.Slice(0, p, 0, p)
	var ri mat.Dense
	if err := ri.Inverse(rp); err == nil {
		fit.cov = mat.NewDense(p, p, nil)
		fit.cov.Mul(&ri, ri.T())
	}
	return fit, nil
}

// FitGLM fits a binomial (logit) or Poisson (log) generalised linear model
// with the design's terms (block, treatment main effects and interactions,
// in hierarchical order, sum-to-zero coding) and reports likelihood-ratio
// tests of each term, the Pearson dispersion with quasi-likelihood F tests
// when it exceeds 1 (McCullagh and Nelder 1989, section 4.5.2 and 9.2.4),
// back-transformed estimated marginal means with Wald intervals on the link
// scale, and pairwise comparisons on the link scale (odds or rate ratios)
// adjusted by Holm's method (Bonferroni intervals) or, with MethodTukey, by
// the studentized range with infinite df, exact for equally correlated
// comparisons and an approximation otherwise (the Tukey–Kramer
// approximation on the link scale). Levels whose data lie all at zero (or
// all at the number of trials) are detected and explained: their estimates
// are not finite, the likelihood-ratio tests stay valid.
//
// Type 1 tests add the terms in order; Type 2 compare the model without the
// term and the terms containing it with that model plus the term; Type 3
// drop the term from the full model. Checked against statsmodels' GLM
// (testdata/reference/gen_glm.py): deviances, coefficients, dispersion and
// likelihood-ratio statistics.
func FitGLM(d Data, opt GLMOptions) (*GLMResult, error) {
	var fam glmFamily
	switch opt.Family {
	case FamilyBinomial:
		fam = binomialFamily
	case FamilyPoisson:
		fam = poissonFamily
	default:
		return nil, fmt.Errorf("family %q: must be %s or %s", opt.Family, FamilyBinomial, FamilyPoisson)
	}
	if opt.SSType == 0 {
		opt.SSType = 3
	}
	if opt.SSType < 1 || opt.SSType > 3 {
		return nil, fmt.Errorf("test type %d: must be 1, 2 or 3", opt.SSType)
	}
	if opt.Alpha == 0 {
		opt.Alpha = 0.05
	}
	if opt.PostHoc == "" {
		opt.PostHoc = MethodHolm
	}
	if len(d.Subsamples) > 0 {
		return nil, errors.New("a count or proportion response cannot have subsamples: add the counts of a unit together first")
	}
	y, m, err := glmResponse(d, fam, opt.Trials)
	if err != nil {
		return nil, err
	}
	mdl, err := buildModel(d)
	if err != nil {
		return nil, err
	}
	n := len(y)
	intercept := make([]float64, n)
	for i := range intercept {
		intercept[i] = 1
	}
	tc := mdl.termColumns()
	design := func(terms []int) [][]float64 {
		cols := [][]float64{intercept}
		for _, t := range terms {
			cols = append(cols, tc[t]...)
		}
		return cols
	}
	all := make([]int, len(mdl.terms))
	for i := range all {
		all[i] = i
	}
	full, err := irls(fam, y, m, design(all))
	if err != nil {
		return nil, err
	}
	p := len(design(all))
	if full.rank < p {
		return nil, fmt.Errorf("%w: some combinations of levels have no observations, so the model with all interactions cannot be estimated", ErrEmptyCell)
	}
	res := &GLMResult{Response: d.Response, Family: fam.name, Link: fam.link, N: n, SSType: opt.SSType, Alpha: opt.Alpha,
		Deviance: full.deviance, ResidDF: n - p, Coef: full.beta, Iterations: full.iter}
	if res.ResidDF < 1 {
		return nil, fmt.Errorf("response %q: %d observations for %d parameters leave no residual degrees of freedom", d.Response, n, p)
	}
	for i := range y {
		e := y[i] - full.mu[i]
		if v := fam.variance(full.mu[i], m[i]); v > 0 {
			res.Pearson += e * e / v
		}
	}
	res.Dispersion = res.Pearson / float64(res.ResidDF)
	res.Quasi = res.Dispersion > 1
	null, err := irls(fam, y, m, design(nil))
	if err != nil {
		return nil, err
	}
	res.NullDeviance = null.deviance
	if err := res.termTests(fam, y, m, mdl, design, opt.SSType, full); err != nil {
		return nil, err
	}
	res.boundaries(d, mdl, y, m, fam)
	res.means(d, mdl, y, m, fam, full)
	if opt.PostHoc != MethodNone {
		res.compare(opt.PostHoc, full)
	}
	if res.Quasi {
		res.Notes = append(res.Notes, fmt.Sprintf("The Pearson dispersion is %.3g (> 1: more variation than the %s model allows), so the F tests, standard errors and intervals are scaled by it (quasi-likelihood).", res.Dispersion, fam.name))
	}
	return res, nil
}

// glmResponse parses the response (whole numbers ≥ 0; at most the trials for
// the binomial) and the trials.
func glmResponse(d Data, fam glmFamily, trials []float64) (y, m []float64, err error) {
	n := d.Values.Len()
	y = make([]float64, n)
	m = make([]float64, n)
	if fam.name == FamilyBinomial && len(trials) != n {
		return nil, nil, fmt.Errorf("binomial response %q: the number of trials is needed for each of the %d observations (--trials N or --trials COLUMN)", d.Response, n)
	}
	where := func(i int) string {
		if d.Units.Len() > 0 && i < d.Units.Len() {
			return fmt.Sprintf("unit %s", d.Units.At(i))
		}
		return fmt.Sprintf("observation %d", i+1)
	}
	for i := range d.Values.Len() {
		s := d.Values.At(i)
		v, perr := strconv.ParseFloat(strings.TrimSpace(s), 64)
		if perr != nil || v < 0 || v != math.Trunc(v) || math.IsInf(v, 0) {
			return nil, nil, fmt.Errorf("%s: %q is not a count (a whole number 0 or more)", where(i), s)
		}
		y[i] = v
		m[i] = 1
		if fam.name == FamilyBinomial {
			t := trials[i]
			if !(t >= 1) || t != math.Trunc(t) || math.IsInf(t, 0) {
				return nil, nil, fmt.Errorf("%s: %v trials: must be a whole number 1 or more", where(i), t)
			}
			if v > t {
				return nil, nil, fmt.Errorf("%s: %g successes out of %g trials: cannot exceed the trials", where(i), v, t)
			}
			m[i] = t
		}
	}
	return y, m, nil
}

// termTests fills the likelihood-ratio test of each term.
func (res *GLMResult) termTests(fam glmFamily, y, m []float64, mdl *model, design func([]int) [][]float64, ssType int, full *glmFit) error {
	devOf := func(terms []int) (float64, error) {
		f, err := irls(fam, y, m, design(terms))
		if err != nil {
			return 0, err
		}
		return f.deviance, nil
	}
	prevDev := res.NullDeviance
	for k, term := range mdl.terms {
		var with, without []int
		switch ssType {
		case 1:
			for j := 0; j <= k; j++ {
				with = append(with, j)
			}
			without = with[:k]
		case 2, 3:
			for j := range mdl.terms {
				if j == k || ssType == 2 && mdl.contains(j, k) {
					continue
				}
				without = append(without, j)
			}
			with = append(append([]int(nil), without...), k)
		}
		dWithout, err := devOf(without)
		if err != nil {
			return err
		}
		dWith := full.deviance
		if ssType == 1 {
			dWith, err = devOf(with)
			if err != nil {
				return err
			}
			dWithout = prevDev
			prevDev = dWith
		} else if ssType == 2 {
			dWith, err = devOf(with)
			if err != nil {
				return err
			}
		}
		df := term.df
		lr := math.Max(0, dWithout-dWith)
		row := GLMTerm{Source: term.name, DF: df, Deviance: lr, Block: term.block}
		row.P = distuv.ChiSquared{K: float64(df)}.Survival(lr)
		if res.Quasi {
			row.F = lr / float64(df) / res.Dispersion
			row.PF = distuv.F{D1: float64(df), D2: float64(res.ResidDF)}.Survival(row.F)
		}
		res.Terms = append(res.Terms, row)
	}
	return nil
}

// boundaries notes the treatment levels and cells whose responses are all 0
// (or all equal to their trials).
func (res *GLMResult) boundaries(d Data, mdl *model, y, m []float64, fam glmFamily) {
	for fi, f := range d.Factors {
		for l, name := range mdl.levels[fi] {
			var sy, sm float64
			for i, li := range mdl.index[fi] {
				if int(li) == l {
					sy += y[i]
					sm += m[i]
				}
			}
			switch {
			case sy == 0:
				res.Notes = append(res.Notes, fmt.Sprintf("%s %s: every unit is 0, so its %s is −∞ (a zero cell); its mean is reported as 0 without an interval, and comparisons with it are left out. The likelihood-ratio tests remain valid.", f.Name, name, fam.link))
			case fam.name == FamilyBinomial && sy == sm:
				res.Notes = append(res.Notes, fmt.Sprintf("%s %s: every trial is a success, so its logit is +∞ (complete separation); its mean is reported as 1 without an interval, and comparisons with it are left out. The likelihood-ratio tests remain valid.", f.Name, name))
			}
		}
	}
}

// levelVector returns the contrast vector of the LS mean of level l of
// factor fi on the link scale: the intercept and the factor's main-effect
// coding; block and interaction columns average to zero under sum-to-zero
// coding over equally weighted levels.
func levelVector(mdl *model, fi, l, p int) []float64 {
	v := make([]float64, p)
	v[0] = 1
	c := 1
	for _, t := range mdl.terms {
		if !t.block && !t.blockInt && len(t.factors) == 1 && t.factors[0] == fi {
			L := t.df + 1
			for j := 0; j < L-1; j++ {
				switch l {
				case j:
					v[c+j] = 1
				case L - 1:
					v[c+j] = -1
				}
			}
		}
		c += t.df
	}
	return v
}

func quad(a []float64, cov *mat.Dense) float64 {
	var s float64
	for i := range a {
		for j := range a {
			s += a[i] * cov.At(i, j) * a[j]
		}
	}
	return s
}

// means fills the back-transformed marginal means of each factor's levels.
func (res *GLMResult) means(d Data, mdl *model, y, m []float64, fam glmFamily, full *glmFit) {
	p := len(full.beta)
	scale := 1.0
	crit := distuv.UnitNormal.Quantile(1 - res.Alpha/2)
	if res.Quasi {
		scale = res.Dispersion
		crit = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(res.ResidDF)}.Quantile(1 - res.Alpha/2)
	}
	res.Means = nil
	for fi, f := range d.Factors {
		var row []GLMMean
		for l, name := range mdl.levels[fi] {
			g := GLMMean{Term: f.Name, Level: name}
			var sy, sm float64
			for i, li := range mdl.index[fi] {
				if int(li) == l {
					g.N++
					sy += y[i]
					sm += m[i]
				}
			}
			g.Total = sy
			g.Observed = sy / sm
			v := levelVector(mdl, fi, l, p)
			for j, b := range full.beta {
				g.Link += v[j] * b
			}
			g.vec = v
			g.Estimate = fam.inv(g.Link)
			g.Boundary = sy == 0 || fam.name == FamilyBinomial && sy == sm
			if g.Boundary {
				g.Estimate = g.Observed
				g.Lower, g.Upper = math.NaN(), math.NaN()
			} else if full.cov != nil {
				g.LinkSE = math.Sqrt(scale * quad(v, full.cov))
				g.Lower, g.Upper = fam.inv(g.Link-crit*g.LinkSE), fam.inv(g.Link+crit*g.LinkSE)
			}
			row = append(row, g)
		}
		res.Means = append(res.Means, row)
	}
}

// compare fills the pairwise comparisons of each factor's levels on the
// link scale.
func (res *GLMResult) compare(method string, full *glmFit) {
	if full.cov == nil {
		return
	}
	scale := 1.0
	nu := math.Inf(1)
	if res.Quasi {
		scale = res.Dispersion
		nu = float64(res.ResidDF)
	}
	res.PairMethod = "Holm-adjusted Wald tests on the " + res.Link + " scale (Bonferroni intervals)"
	if method == MethodTukey {
		res.PairMethod = "Tukey-type Wald tests on the " + res.Link + " scale (studentized range, Tukey–Kramer approximation)"
	}
	res.Comparisons = nil
	for _, row := range res.Means {
		var ok []GLMMean
		for _, g := range row {
			if !g.Boundary {
				ok = append(ok, g)
			}
		}
		k := len(ok)
		if k < 2 {
			res.Comparisons = append(res.Comparisons, nil)
			continue
		}
		mc := k * (k - 1) / 2
		var crit float64
		var sr prob.StudentizedRange
		st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: nu}
		if method == MethodTukey {
			sr = prob.StudentizedRange{K: float64(k), Nu: nu}
			crit = sr.Quantile(1-res.Alpha) / math.Sqrt2
		} else if math.IsInf(nu, 1) {
			crit = distuv.UnitNormal.Quantile(1 - res.Alpha/(2*float64(mc)))
		} else {
			crit = st.Quantile(1 - res.Alpha/(2*float64(mc)))
		}
		var cmp []GLMComparison
		var raw []float64
		for i := 0; i < k; i++ {
			for j := i + 1; j < k; j++ {
				a, b := ok[i], ok[j]
				va, vb := a.vec, b.vec
				diffV := make([]float64, len(va))
				for x := range va {
					diffV[x] = va[x] - vb[x]
				}
				se := math.Sqrt(scale * quad(diffV, full.cov))
				est := a.Link - b.Link
				z := est / se
				var pv float64
				switch {
				case method == MethodTukey:
					pv = sr.Survival(math.Abs(z) * math.Sqrt2)
				case math.IsInf(nu, 1):
					pv = 2 * distuv.UnitNormal.Survival(math.Abs(z))
				default:
					pv = 2 * st.Survival(math.Abs(z))
				}
				raw = append(raw, pv)
				c := GLMComparison{Term: a.Term, PairTest: PairTest{Pair: a.Level + " − " + b.Level, A: a.Level, B: b.Level,
					Estimate: est, SE: se, Stat: z, DF: nu, Lower: est - crit*se, Upper: est + crit*se}}
				c.Ratio, c.RatioLower, c.RatioUpper = math.Exp(est), math.Exp(c.Lower), math.Exp(c.Upper)
				cmp = append(cmp, c)
			}
		}
		if method == MethodTukey {
			for i := range cmp {
				cmp[i].P = raw[i]
			}
		} else {
			for i, pv := range HolmAdjust(raw) {
				cmp[i].P = pv
			}
		}
		res.Comparisons = append(res.Comparisons, cmp)
	}
}
