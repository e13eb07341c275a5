package analyze

import "math"

// estimates holds the fitted coefficients and (XᵀX)⁻¹ of the full model.
type estimates struct {
	b      []float64
	cov    [][]float64 // (XᵀX)⁻¹ = R⁻¹R⁻ᵀ
	shift  float64
	scale  float64
	main   map[int][2]int    // factor index → column range of its main effect
	pair   map[[2]int][2]int // factors (i < j) → column range of their interaction
	levels [][]string
	// absorbed marks estimates whose block columns were absorbed.
	absorbed bool
}

func newEstimates(m *model, b []float64, cov [][]float64, ranges [][2]int) *estimates {
	e := &estimates{b: b, cov: cov, shift: m.shift, scale: m.scale, main: map[int][2]int{}, pair: map[[2]int][2]int{}, levels: m.levels}
	for k, t := range m.terms {
		switch {
		case t.block || t.blockInt:
		case len(t.factors) == 1:
			e.main[t.factors[0]] = ranges[k]
		case len(t.factors) == 2:
			e.pair[[2]int{t.factors[0], t.factors[1]}] = ranges[k]
		}
	}
	return e
}

// code returns the sum-to-zero coding of level l of a factor with L levels:
// column j is 1 for l = j, −1 for the last level, 0 otherwise.
func code(l, levels, j int) float64 {
	switch {
	case l == levels-1:
		return -1
	case l == j:
		return 1
	}
	return 0
}

// cellContrast returns the coefficient vector of the cell (level la of
// factor 0, level lb of factor 1), averaged over every other term.
func (e *estimates) cellContrast(la, lb int) []float64 { return e.pairContrast(0, 1, la, lb) }

// hasPair reports whether the model has the interaction of factors fa and
// fb, so that pairContrast can form their cells.
func (e *estimates) hasPair(fa, fb int) bool {
	_, ok := e.pair[[2]int{min(fa, fb), max(fa, fb)}]
	return ok
}

// pairContrast returns the coefficient vector of the cell (level la of
// factor fa, level lb of factor fb), averaged over every other term: with
// sum-to-zero coding the columns of the other terms average to zero over
// a balanced grid of their levels. The interaction columns are the
// products of the main-effect columns, the lower-numbered factor's index
// varying slowest, as buildModel makes them.
func (e *estimates) pairContrast(fa, fb, la, lb int) []float64 {
	if fa > fb {
		fa, fb, la, lb = fb, fa, lb, la
	}
	c := make([]float64, len(e.b))
	c[0] = 1
	ra, rb, rab := e.main[fa], e.main[fb], e.pair[[2]int{fa, fb}]
	na, nb := ra[1]-ra[0], rb[1]-rb[0]
	for i := 0; i < na; i++ {
		c[ra[0]+i] = code(la, na+1, i)
	}
	for j := 0; j < nb; j++ {
		c[rb[0]+j] = code(lb, nb+1, j)
	}
	for i := 0; i < na; i++ {
		for j := 0; j < nb; j++ {
			c[rab[0]+i*nb+j] = code(la, na+1, i) * code(lb, nb+1, j)
		}
	}
	return c
}

// lsMean returns the least-squares mean that contrast c gives, and its
// standard error.
func (t *Table) lsMean(c []float64) (mean, se float64) {
	e := t.est
	var m float64
	for i := range c {
		m += c[i] * e.b[i]
	}
	return e.shift + e.scale*m, t.ResidSD * math.Sqrt(e.quad(c))
}

// lsDiffSE returns the standard error of the difference of the least-squares
// means that contrasts a and b give.
func (t *Table) lsDiffSE(a, b []float64) float64 {
	d := make([]float64, len(a))
	for i := range a {
		d[i] = a[i] - b[i]
	}
	return t.ResidSD * math.Sqrt(t.est.quad(d))
}

// LSCells returns the least-squares means of the cells of the first two
// factors (factorial designs), with standard errors, the first factor
// varying slowest; nil without two factors.
func (t *Table) LSCells() []LSMean {
	e := t.est
	if len(e.levels) < 2 {
		return nil
	}
	var out []LSMean
	for la, a := range e.levels[0] {
		for lb, b := range e.levels[1] {
			c := e.cellContrast(la, lb)
			var m float64
			for i := range c {
				m += c[i] * e.b[i]
			}
			out = append(out, LSMean{Level: a + " × " + b, Mean: e.shift + e.scale*m, SE: t.ResidSD * math.Sqrt(e.quad(c))})
		}
	}
	return out
}

// contrast returns the coefficient vector of factor fi's level l averaged
// over every other term: with sum-to-zero coding the other terms' columns
// average to zero over a balanced grid, so only the intercept and the
// level's own coding remain.
func (e *estimates) contrast(fi, l int) []float64 {
	c := make([]float64, len(e.b))
	c[0] = 1
	rg := e.main[fi]
	for j := 0; j < rg[1]-rg[0]; j++ {
		c[rg[0]+j] = code(l, rg[1]-rg[0]+1, j)
	}
	return c
}

func (e *estimates) quad(c []float64) float64 {
	var s float64
	for i := range c {
		if c[i] == 0 {
			continue
		}
		for j := range c {
			s += c[i] * e.cov[i][j] * c[j]
		}
	}
	return s
}

// LSMean is the least-squares (estimated marginal) mean of one level: the
// model's prediction averaged with equal weights over the levels of every
// other factor and block (Searle, Speed and Milliken 1980, "Population
// marginal means in the linear model", Amer. Statist. 34(4) 216–221).
type LSMean struct {
	Level string
	Mean  float64
	SE    float64
}

// LSMeans returns the least-squares means of factor fi with their standard
// errors, in level order.
func (t *Table) LSMeans(fi int) []LSMean {
	e := t.est
	var out []LSMean
	for l, name := range e.levels[fi] {
		c := e.contrast(fi, l)
		var m float64
		for i := range c {
			m += c[i] * e.b[i]
		}
		out = append(out, LSMean{Level: name, Mean: e.shift + e.scale*m, SE: t.ResidSD * math.Sqrt(e.quad(c))})
	}
	return out
}

// DiffSE returns the standard error of the difference between the
// least-squares means of levels a and b of factor fi.
func (t *Table) DiffSE(fi, a, b int) float64 {
	e := t.est
	ca, cb := e.contrast(fi, a), e.contrast(fi, b)
	for i := range ca {
		ca[i] -= cb[i]
	}
	return t.ResidSD * math.Sqrt(e.quad(ca))
}
