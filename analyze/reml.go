package analyze

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// REMLTerm is the F test of one fixed term of a mixed model.
type REMLTerm struct {
	Source string  `json:"source"`
	DF     int     `json:"df"`
	F      float64 `json:"f"`
	DDF    float64 `json:"denominator_df"`
	P      float64 `json:"p"`
}

// REMLResult is a split plot with random main plots fitted by restricted
// maximum likelihood.
type REMLResult struct {
	Response string `json:"response"`
	N        int    `json:"n"`
	// SigmaE2 and SigmaM2 are the residual and main-plot variance
	// components.
	SigmaE2 float64    `json:"var_residual"`
	SigmaM2 float64    `json:"var_main_plot"`
	Beta    []float64  `json:"fixed_effects"`
	Terms   []REMLTerm `json:"terms"`
	DFName  string     `json:"df_method"`
	LogLik  float64    `json:"reml_loglik"`
	Notes   []string   `json:"notes,omitempty"`
}

// remlModel holds the pieces of y = Xβ + Zu + e with u the main-plot
// effects: V = σ²_e I + σ²_m ZZᵀ is block diagonal by main plot.
type remlModel struct {
	y      []float64
	x      *mat.Dense
	groups [][]int // observation indices of each main plot
	terms  [][2]int
	names  []string
}

// vinvApply returns V⁻¹ M for V = s2e (I + γ ZZᵀ), main plot by main plot:
// (I + γJ)⁻¹ = I − γ/(1 + nγ) J.
func (m *remlModel) vinvApply(dst, src *mat.Dense, s2e, s2m float64) {
	r, c := src.Dims()
	dst.ReuseAs(r, c)
	dst.Copy(src)
	for _, g := range m.groups {
		w := s2m / (s2e + float64(len(g))*s2m)
		for j := 0; j < c; j++ {
			var s float64
			for _, i := range g {
				s += src.At(i, j)
			}
			for _, i := range g {
				dst.Set(i, j, (src.At(i, j)-w*s)/s2e)
			}
		}
	}
}

// loglik returns the REML log-likelihood at (s2e, s2m) with β̂ and
// (XᵀV⁻¹X)⁻¹ (Patterson and Thompson 1971, Biometrika 58, 545–554):
//
//	ℓ_R = −½[log|V| + log|XᵀV⁻¹X| + (y − Xβ̂)ᵀV⁻¹(y − Xβ̂) + (n − p) log 2π].
func (m *remlModel) loglik(s2e, s2m float64) (float64, []float64, *mat.Dense, error) {
	n, p := m.x.Dims()
	var logdet float64
	for _, g := range m.groups {
		logdet += float64(len(g)-1)*math.Log(s2e) + math.Log(s2e+float64(len(g))*s2m)
	}
	var vx mat.Dense
	m.vinvApply(&vx, m.x, s2e, s2m)
	var xtvx mat.Dense
	xtvx.Mul(m.x.T(), &vx)
	var chol mat.Cholesky
	sym := mat.NewSymDense(p, nil)
	for i := 0; i < p; i++ {
		for j := i; j < p; j++ {
			sym.SetSym(i, j, xtvx.At(i, j))
		}
	}
	if !chol.Factorize(sym) {
		return 0, nil, nil, errors.New("the fixed-effects design is singular (an empty cell)")
	}
	yv := mat.NewDense(n, 1, append([]float64(nil), m.y...))
	var vy mat.Dense
	m.vinvApply(&vy, yv, s2e, s2m)
	var xtvy mat.Dense
	xtvy.Mul(m.x.T(), &vy)
	var beta mat.Dense
	if err := chol.SolveTo(&beta, &xtvy); err != nil {
		return 0, nil, nil, err
	}
	var fit mat.Dense
	fit.Mul(m.x, &beta)
	res := mat.NewDense(n, 1, nil)
	res.Sub(yv, &fit)
	var vr mat.Dense
	m.vinvApply(&vr, res, s2e, s2m)
	q := mat.Dot(res.ColView(0), vr.ColView(0))
	ll := -0.5 * (logdet + chol.LogDet() + q + float64(n-p)*math.Log(2*math.Pi))
	var cov mat.Dense
	var inv mat.SymDense
	if err := chol.InverseTo(&inv); err != nil {
		return 0, nil, nil, err
	}
	cov.CloneFrom(&inv)
	b := make([]float64, p)
	for i := range b {
		b[i] = beta.At(i, 0)
	}
	return ll, b, &cov, nil
}

// SplitPlotREML fits the split plot with main plots as random effects and
// blocks (if any), the whole-plot factor, the sub-plot factor and their
// interaction as fixed effects, by restricted maximum likelihood, for data
// with missing sub-plots. The variance ratio γ = σ²_m/σ²_e is found by
// golden-section search on the profiled REML likelihood (σ²_e profiled
// out), over γ from 0 to 10⁴, and the boundary γ = 0 is taken when it is
// the maximum (then σ²_m = 0 and a note says so). Each fixed term is tested
// by the Wald F statistic β̂ᵀLᵀ(L C Lᵀ)⁻¹Lβ̂/q, C = (XᵀV̂⁻¹X)⁻¹, with
// Satterthwaite denominator degrees of freedom for multi-df terms as given
// by Fai and Cornelius (1996, J. Statist. Comput. Simul. 54, 363–378): for
// each eigenvector of L C Lᵀ with eigenvalue λ_k, ν_k = 2λ_k²/(g_kᵀ A g_k),
// g_k the gradient of its variance with respect to (σ²_e, σ²_m) and A the
// inverse of the observed REML information (numerical derivatives), then
// E = Σ ν_k/(ν_k − 2) and ν = 2E/(E − q). For balanced data these are the
// two-stratum F tests and df. Checked against statsmodels' MixedLM (REML)
// for the variance components and fixed effects
// (testdata/reference/gen_splitplot.py).
func SplitPlotREML(d SplitPlot) (*REMLResult, error) {
	sc, err := d.coded()
	if err != nil {
		return nil, err
	}
	n, sh := len(d.Values), sc.shift
	aL, aI, bL, bI := sc.aL, sc.aI, sc.bL, sc.bI
	m := &remlModel{y: sc.y, groups: make([][]int, len(sc.mL))}
	for i, g := range sc.mI {
		m.groups[g] = append(m.groups[g], i)
	}
	var cols [][]float64
	one := make([]float64, n)
	for i := range one {
		one[i] = 1
	}
	cols = append(cols, one)
	addTerm := func(name string, c [][]float64) {
		m.terms = append(m.terms, [2]int{len(cols), len(cols) + len(c)})
		m.names = append(m.names, name)
		cols = append(cols, c...)
	}
	if d.Block != nil {
		bl, bi, err := codes(*d.Block)
		if err != nil {
			return nil, err
		}
		addTerm(d.Block.Name, contrasts(bi, len(bl)))
	}
	ac := contrasts(aI, len(aL))
	bc := contrasts(bI, len(bL))
	addTerm(d.Whole.Name, ac)
	addTerm(d.Sub.Name, bc)
	var ab [][]float64
	for _, ca := range ac {
		for _, cb := range bc {
			v := make([]float64, n)
			for i := range v {
				v[i] = ca[i] * cb[i]
			}
			ab = append(ab, v)
		}
	}
	addTerm(d.Whole.Name+" × "+d.Sub.Name, ab)
	p := len(cols)
	m.x = mat.NewDense(n, p, nil)
	for j, c := range cols {
		for i, v := range c {
			m.x.Set(i, j, v)
		}
	}
	// Profile over γ with σ²_e = 1 scaling: ℓ(σ²_e, γσ²_e) is maximised in
	// σ²_e at r'(I+γZZ')⁻¹r/(n − p).
	prof := func(g float64) (float64, float64) {
		_, _, _, err := m.loglik(1, g)
		if err != nil {
			return math.Inf(-1), 0
		}
		// σ̂²_e at γ: the quadratic form at s2e = 1 over (n − p).
		s2 := m.quadForm(g) / float64(n-p)
		ll, _, _, _ := m.loglik(s2, g*s2)
		return ll, s2
	}
	lo, hi := -12.0, math.Log(1e4)
	phi := (math.Sqrt(5) - 1) / 2
	x1, x2 := hi-phi*(hi-lo), lo+phi*(hi-lo)
	f1, _ := prof(math.Exp(x1))
	f2, _ := prof(math.Exp(x2))
	for it := 0; it < 200 && hi-lo > 1e-10; it++ {
		if f1 > f2 {
			hi, x2, f2 = x2, x1, f1
			x1 = hi - phi*(hi-lo)
			f1, _ = prof(math.Exp(x1))
		} else {
			lo, x1, f1 = x1, x2, f2
			x2 = lo + phi*(hi-lo)
			f2, _ = prof(math.Exp(x2))
		}
	}
	gamma := math.Exp((lo + hi) / 2)
	best, s2 := prof(gamma)
	if b0, s0 := prof(0); b0 >= best {
		best, s2, gamma = b0, s0, 0
	}
	res := &REMLResult{Response: d.Response, N: n, SigmaE2: s2, SigmaM2: gamma * s2, LogLik: best,
		DFName: "Satterthwaite (Fai and Cornelius 1996)"}
	if gamma == 0 {
		res.Notes = append(res.Notes, "The REML estimate of the main-plot variance is 0: the main plots vary no more than the sub-plots within them.")
	}
	_, beta, cov, err := m.loglik(res.SigmaE2, res.SigmaM2)
	if err != nil {
		return nil, err
	}
	res.Beta = append([]float64(nil), beta...)
	res.Beta[0] += sh // the intercept on the response's scale
	A, err := m.varCovOfVariances(res.SigmaE2, res.SigmaM2)
	if err != nil {
		return nil, err
	}
	for k, rg := range m.terms {
		q := rg[1] - rg[0]
		L := mat.NewDense(q, p, nil)
		for j := 0; j < q; j++ {
			L.Set(j, rg[0]+j, 1)
		}
		t := REMLTerm{Source: m.names[k], DF: q}
		lcl := lcl(L, cov)
		var es mat.EigenSym
		if !es.Factorize(lcl, true) {
			return nil, errors.New("the covariance of a term's estimates could not be decomposed")
		}
		vals := es.Values(nil)
		var vecs mat.Dense
		es.VectorsTo(&vecs)
		var lb mat.VecDense
		lb.MulVec(L, mat.NewVecDense(p, beta))
		var f, e float64
		for j, lam := range vals {
			pj := mat.Dot(vecs.ColView(j), &lb)
			f += pj * pj / lam
			// Gradient of the contrast's variance in (σ²_e, σ²_m).
			cj := mat.NewDense(1, p, nil)
			var lj mat.VecDense
			lj.MulVec(L.T(), vecs.ColView(j))
			for c := 0; c < p; c++ {
				cj.Set(0, c, lj.AtVec(c))
			}
			g := m.varGradient(cj, res.SigmaE2, res.SigmaM2)
			var ag mat.VecDense
			ag.MulVec(A, g)
			nu := 2 * lam * lam / mat.Dot(g, &ag)
			if nu > 2 {
				e += nu / (nu - 2)
			} else {
				e = math.Inf(1)
			}
		}
		t.F = f / float64(q)
		if e > float64(q) && !math.IsInf(e, 1) {
			t.DDF = 2 * e / (e - float64(q))
		} else {
			t.DDF = math.Inf(1)
		}
		if math.IsInf(t.DDF, 1) {
			t.P = distuv.ChiSquared{K: float64(q)}.Survival(f)
		} else {
			t.P = distuv.F{D1: float64(q), D2: t.DDF}.Survival(t.F)
		}
		res.Terms = append(res.Terms, t)
	}
	return res, nil
}

// quadForm returns r'(I + γZZ')⁻¹r at the GLS fit for ratio γ (s2e = 1).
func (m *remlModel) quadForm(g float64) float64 {
	_, beta, _, err := m.loglik(1, g)
	if err != nil {
		return math.NaN()
	}
	n, _ := m.x.Dims()
	r := mat.NewDense(n, 1, nil)
	for i := 0; i < n; i++ {
		var f float64
		for j, b := range beta {
			f += m.x.At(i, j) * b
		}
		r.Set(i, 0, m.y[i]-f)
	}
	var vr mat.Dense
	m.vinvApply(&vr, r, 1, g)
	return mat.Dot(r.ColView(0), vr.ColView(0))
}

func lcl(L *mat.Dense, c *mat.Dense) *mat.SymDense {
	var t, out mat.Dense
	t.Mul(L, c)
	out.Mul(&t, L.T())
	q, _ := out.Dims()
	s := mat.NewSymDense(q, nil)
	for i := 0; i < q; i++ {
		for j := i; j < q; j++ {
			s.SetSym(i, j, (out.At(i, j)+out.At(j, i))/2)
		}
	}
	return s
}

// varGradient returns the gradient of l C(θ) lᵀ in θ = (σ²_e, σ²_m) by
// central differences.
func (m *remlModel) varGradient(l *mat.Dense, s2e, s2m float64) *mat.VecDense {
	v := func(a, b float64) float64 {
		_, _, c, err := m.loglik(a, b)
		if err != nil {
			return math.NaN()
		}
		var t, o mat.Dense
		t.Mul(l, c)
		o.Mul(&t, l.T())
		return o.At(0, 0)
	}
	he := 1e-4 * s2e
	hm := 1e-4 * math.Max(s2m, s2e)
	g := mat.NewVecDense(2, nil)
	g.SetVec(0, (v(s2e+he, s2m)-v(s2e-he, s2m))/(2*he))
	lo := math.Max(0, s2m-hm)
	g.SetVec(1, (v(s2e, s2m+hm)-v(s2e, lo))/(s2m+hm-lo))
	return g
}

// varCovOfVariances returns the inverse of the observed REML information of
// (σ²_e, σ²_m), from a central-difference Hessian of the log-likelihood.
func (m *remlModel) varCovOfVariances(s2e, s2m float64) (*mat.Dense, error) {
	f := func(a, b float64) float64 {
		ll, _, _, err := m.loglik(a, b)
		if err != nil {
			return math.NaN()
		}
		return ll
	}
	he := 1e-3 * s2e
	hm := 1e-3 * math.Max(s2m, s2e)
	m0 := math.Max(s2m, hm) // keep σ²_m − h positive at the boundary
	h := mat.NewDense(2, 2, nil)
	h.Set(0, 0, (f(s2e+he, m0)-2*f(s2e, m0)+f(s2e-he, m0))/(he*he))
	h.Set(1, 1, (f(s2e, m0+hm)-2*f(s2e, m0)+f(s2e, m0-hm))/(hm*hm))
	c := (f(s2e+he, m0+hm) - f(s2e+he, m0-hm) - f(s2e-he, m0+hm) + f(s2e-he, m0-hm)) / (4 * he * hm)
	h.Set(0, 1, c)
	h.Set(1, 0, c)
	h.Scale(-1, h)
	var inv mat.Dense
	if err := inv.Inverse(h); err != nil {
		return nil, fmt.Errorf("the REML information is singular: %w", err)
	}
	return &inv, nil
}
