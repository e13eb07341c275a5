package analyze

import (
	"math"
	"math/big"

	"github.com/allotproject/allot/column"
)

// Exact decisions about zero.
//
// A sum of squares computed in floating point is never exactly zero when it
// should be: Householder QR leaves rounding noise of about n·ε²·SS_total
// (ε = 2⁻⁵³) in every component of Qᵀy, and a ratio of two such noises is an
// F statistic like any other (an exactly additive 2×2 gave F = 12.1, p =
// 0.026 on noise alone). So when a floating-point sum of squares is below
// zeroTrigger·SS_total, the question "is it exactly zero?" is answered in
// exact rational arithmetic from the decimal texts of the data: the normal
// equations XᵀX b = Xᵀy are solved by Gaussian elimination over math/big
// rationals (X holds the integer codes −1, 0, 1 and their products, y the
// exact decimal values), and
//
//   - the residual SS is exactly zero iff yᵀy − bᵀXᵀy = 0;
//   - a term's SS, with the term fitted last in the order its type of sum of
//     squares prescribes, is exactly zero iff the term's coefficients in that
//     fit are all zero (its columns add nothing to the fitted values).
//
// For models with more than exactParams parameters the exact solve would
// take too long; there a sum of squares below zeroBound·SS_total (a bound
// well above the rounding noise and far below any difference a decimal
// instrument records) is taken as zero. The result says which rule decided.
const (
	zeroTrigger = 1e-12
	zeroBound   = 1e-20
	exactParams = 80
)

// exactValues parses the decimal (or ratio) texts exactly.
func exactValues(values column.Text) ([]*big.Rat, bool) {
	out := make([]*big.Rat, values.Len())
	for i := range out {
		s := values.At(i)
		r, ok := new(big.Rat).SetString(s)
		if !ok {
			return nil, false
		}
		out[i] = r
	}
	return out, true
}

// exactFit solves the normal equations of the intercept and the terms in
// order exactly and returns the coefficients and the residual SS. The
// equations come from the cells (every column is constant within a cell):
// XᵀX = Σ_c n_c x_c x_cᵀ in integers and Xᵀy = Σ_c x_c S_c with S_c the
// exact sum of cell c, and yᵀy is the exact sum of squares. ok is false
// when the codes are not integers or XᵀX is singular.
func (z *zeroJudge) exactFit(order []int) (b []*big.Rat, ranges [][2]int, rss *big.Rat, ok bool) {
	m, cs := z.m, z.cs
	ranges = make([][2]int, len(order))
	p := 1
	for k, t := range order {
		ranges[k] = [2]int{p, p + m.terms[t].df}
		p += m.terms[t].df
	}
	xtx := make([]int64, p*p)
	a := make([][]*big.Rat, p)
	for i := range a {
		a[i] = make([]*big.Rat, p+1)
		a[i][p] = new(big.Rat)
	}
	var row []float64
	ix := make([]int64, p)
	var t big.Rat
	for c := range cs.n {
		row = m.codeRow(row[:0], order, true, int(cs.block[c]), cs.lv[c])
		for j, v := range row {
			if v != math.Trunc(v) || math.Abs(v) > 1<<20 {
				return nil, nil, nil, false
			}
			ix[j] = int64(v)
		}
		n := int64(cs.n[c])
		for i := 0; i < p; i++ {
			if ix[i] == 0 {
				continue
			}
			for j := 0; j < p; j++ {
				xtx[i*p+j] += n * ix[i] * ix[j]
			}
			t.SetInt64(ix[i])
			t.Mul(&t, z.sums[c])
			a[i][p].Add(a[i][p], &t)
		}
	}
	xty := make([]*big.Rat, p)
	for i := range a {
		for j := 0; j < p; j++ {
			a[i][j] = new(big.Rat).SetInt64(xtx[i*p+j])
		}
		xty[i] = new(big.Rat).Set(a[i][p])
	}
	var f big.Rat
	for c := 0; c < p; c++ {
		piv := -1
		for r := c; r < p; r++ {
			if a[r][c].Sign() != 0 {
				piv = r
				break
			}
		}
		if piv < 0 {
			return nil, nil, nil, false
		}
		a[c], a[piv] = a[piv], a[c]
		for r := c + 1; r < p; r++ {
			if a[r][c].Sign() == 0 {
				continue
			}
			f.Quo(a[r][c], a[c][c])
			for j := c; j <= p; j++ {
				t.Mul(&f, a[c][j])
				a[r][j].Sub(a[r][j], &t)
			}
		}
	}
	b = make([]*big.Rat, p)
	for i := p - 1; i >= 0; i-- {
		s := new(big.Rat).Set(a[i][p])
		for j := i + 1; j < p; j++ {
			t.Mul(a[i][j], b[j])
			s.Sub(s, &t)
		}
		b[i] = s.Quo(s, a[i][i])
	}
	rss = new(big.Rat).Set(z.yy)
	for i := range b {
		t.Mul(b[i], xty[i])
		rss.Sub(rss, &t)
	}
	return b, ranges, rss, true
}

// zeroJudge decides which floating-point sums of squares are exactly zero.
// The exact cell sums are formed only when a sum of squares is suspect, so
// the usual analysis pays nothing for them.
type zeroJudge struct {
	m      *model
	cs     *cellStats
	values column.Text
	exact  bool // the exact path may be tried (few enough parameters)
	parsed bool // sums and yy are set (or the values were not exact)
	sums   []*big.Rat
	yy     *big.Rat
	total  float64
	// Rule names the rule that decided, for the report.
	rule string
}

func newZeroJudge(m *model, cs *cellStats, values column.Text, total float64) *zeroJudge {
	z := &zeroJudge{m: m, cs: cs, values: values, total: total}
	p := 1
	for _, t := range m.terms {
		p += t.df
	}
	z.exact = p <= exactParams
	return z
}

// ready parses the values and forms the exact cell sums once; false when
// the exact path is not available.
func (z *zeroJudge) ready() bool {
	if !z.exact {
		return false
	}
	if !z.parsed {
		z.parsed = true
		y, ok := exactValues(z.values)
		if !ok {
			z.exact = false
			return false
		}
		z.sums = make([]*big.Rat, len(z.cs.n))
		for c := range z.sums {
			z.sums[c] = new(big.Rat)
		}
		z.yy = new(big.Rat)
		var t big.Rat
		for i, v := range y {
			c := z.cs.of[i]
			z.sums[c].Add(z.sums[c], v)
			t.Mul(v, v)
			z.yy.Add(z.yy, &t)
		}
	}
	return true
}

// suspect reports whether ss is small enough to need a decision.
func (z *zeroJudge) suspect(ss float64) bool {
	return ss <= zeroTrigger*z.total
}

// residualZero reports whether the residual SS of the full model (terms
// in order) is exactly zero.
func (z *zeroJudge) residualZero(order []int, ss float64) bool {
	if !z.suspect(ss) {
		return false
	}
	if z.ready() {
		if _, _, rss, ok := z.exactFit(order); ok {
			z.rule = "exact"
			return rss.Sign() == 0
		}
	}
	z.rule = "bound"
	return ss <= zeroBound*z.total
}

// termZero reports whether the SS of the last term of order is exactly
// zero.
func (z *zeroJudge) termZero(order []int, ss float64) bool {
	if !z.suspect(ss) {
		return false
	}
	if z.ready() {
		if b, ranges, _, ok := z.exactFit(order); ok {
			z.rule = "exact"
			last := ranges[len(ranges)-1]
			for _, v := range b[last[0]:last[1]] {
				if v.Sign() != 0 {
					return false
				}
			}
			return true
		}
	}
	z.rule = "bound"
	return ss <= zeroBound*z.total
}

// Scaling. Sums of squares of values near 1e-300 underflow to zero, and of
// values near 1e154 overflow to +Inf, although every ratio the analysis
// reports (F, p, R², standardised residuals) is scale-free. When the centred
// values' largest magnitude is outside [scaleLo, scaleHi], the model is
// fitted to (y − shift)·10^−k, formed exactly from the decimal texts and
// rounded once, with 10^k near that magnitude; first-order results (means,
// SEs, intervals, residuals) are multiplied back by 10^k, and the sums of
// squares and mean squares are reported in units of 10^(2k) (Table.SSExp10).
const (
	scaleLo = 1e-60
	scaleHi = 1e60
)

// rescale applies the scaling above to m.y when it is needed.
func (m *model) rescale(values column.Text) {
	m.scale = 1
	var big0 float64
	for _, v := range m.y {
		big0 = math.Max(big0, math.Abs(v))
	}
	if big0 == 0 || big0 >= scaleLo && big0 <= scaleHi && !math.IsInf(big0, 0) {
		return
	}
	k := int(math.Round(math.Log10(big0)))
	if math.IsInf(big0, 0) {
		k = 308
	}
	shift := new(big.Rat)
	if m.shiftRat != nil {
		shift = m.shiftRat
	}
	p := new(big.Rat).SetInt(new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(abs(k))), nil))
	var r, d big.Rat
	for i := range values.Len() {
		if _, ok := r.SetString(values.At(i)); !ok {
			return
		}
		d.Sub(&r, shift)
		if k > 0 {
			d.Quo(&d, p)
		} else {
			d.Mul(&d, p)
		}
		m.y[i], _ = d.Float64()
	}
	m.scale = math.Pow(10, float64(k))
	m.exp10 = k
	// The exact centred values ints·10^exp become ints·10^(exp−k).
	m.exp -= k
}
