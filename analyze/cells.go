package analyze

import (
	"math"
	"math/big"
	"math/bits"
)

// Large analyses are fitted from sufficient statistics. Every column of the
// model is constant within a cell (a combination of block and factor levels
// that occurs), so least squares on the n observations equals weighted
// least squares on the C cell means with weights n_c, plus the within-cell
// sum of squares, which is orthogonal to every column: with W = diag(√n_c),
//
//	XᵀX = (WX_c)ᵀ(WX_c),  Xᵀy = (WX_c)ᵀ(W ȳ_c),
//	‖y − Xb‖² = Σ_c Σ_{i∈c} (y_i − ȳ_c)² + ‖W(ȳ_c − X_c b)‖².
//
// The fit factorises a C×p matrix instead of n×p, and the per-observation
// work is one pass that adds each value to its cell. For decimal data the
// cell sums and sums of squares are exact (128-bit integers of the centred
// decimal digits), so the within-cell sums of squares and the cell means are
// each rounded once. Residuals, fitted values and leverages follow per cell:
// h_ii = x_cᵀ(XᵀX)⁻¹x_c is the same for every observation of a cell.
//
// Many blocks are absorbed instead of coded (Frisch and Waugh 1933,
// Econometrica 1(4) 387–401; Lovell 1963, JASA 58, 993–1010): the
// treatment columns and the response are centred within blocks, the
// treatment terms are fitted to the centred data, and the block term's sum
// of squares, the intercept and the hat matrix follow from the block means
// (H = H_blocks + H_centred, so h_ii = 1/n_b + x̃_iᵀ(X̃ᵀX̃)⁻¹x̃_i). Time and
// memory then grow linearly with the number of units rather than with the
// square of the number of blocks.
//
// Every term's Type II or III sum of squares comes from the one
// factorisation X = QR: since Qᵀy = (z, r) and the columns of X are Q times
// those of R, the fit of y on any subset of columns in any order is the fit
// of z on the same columns of R, a p×q problem factorised again in O(pq²)
// (Golub and Van Loan 2013, Matrix Computations, 4th ed., section 5.3,
// updating the QR factorisation after column deletion and permutation).

// absorbMin is the number of blocks from which blocks are absorbed rather
// than coded as columns (below it the coded fit is as fast, and gives the
// block coefficients directly).
const absorbMin = 64

// cellStats is the response collapsed to the cells of the design.
type cellStats struct {
	of     []int32   // cell of each observation
	n      []int     // observations per cell
	mean   []float64 // centred mean of each cell
	within []float64 // Σ (y − mean)² within each cell
	block  []int32   // block of each cell (0 without blocks)
	treat  []int32   // treatment combination of each cell (mixed radix, first factor slowest)
	lv     [][]int32 // factor levels of each cell
	nTreat int       // number of treatment combinations, Π L_f
}

// collapse adds every observation to its cell.
func (m *model) collapse() *cellStats {
	nf := len(m.index)
	stride := make([]int, nf)
	nt := 1
	for f := nf - 1; f >= 0; f-- {
		stride[f] = nt
		nt *= len(m.levels[f])
	}
	nb := max(len(m.blockL), 1)
	cs := &cellStats{of: make([]int32, m.n), nTreat: nt}
	keys := int64(nb) * int64(nt)
	var dense []int32
	var sparse map[int64]int32
	if keys <= int64(4*m.n+1024) {
		dense = make([]int32, keys)
		for i := range dense {
			dense[i] = -1
		}
	} else {
		sparse = map[int64]int32{}
	}
	for i := 0; i < m.n; i++ {
		t := 0
		for f := 0; f < nf; f++ {
			t += int(m.index[f][i]) * stride[f]
		}
		b := 0
		if m.blockI != nil {
			b = int(m.blockI[i])
		}
		key := int64(b)*int64(nt) + int64(t)
		var id int32
		var ok bool
		if dense != nil {
			id = dense[key]
			ok = id >= 0
		} else {
			id, ok = sparse[key]
		}
		if !ok {
			id = int32(len(cs.n))
			if dense != nil {
				dense[key] = id
			} else {
				sparse[key] = id
			}
			cs.n = append(cs.n, 0)
			cs.block = append(cs.block, int32(b))
			cs.treat = append(cs.treat, int32(t))
			lv := make([]int32, nf)
			for f := 0; f < nf; f++ {
				lv[f] = int32(t / stride[f] % len(m.levels[f]))
			}
			cs.lv = append(cs.lv, lv)
		}
		cs.of[i] = id
		cs.n[id]++
	}
	c := len(cs.n)
	cs.mean = make([]float64, c)
	cs.within = make([]float64, c)
	if m.ints == nil || !cs.exactSums(m.ints, m.exp) {
		cs.floatSums(m.y)
	}
	return cs
}

// exactSums sets the cell means and within sums of squares from the exact
// centred values ints[i]·10^exp, each rounded once; false when a sum of
// squares would overflow 128 bits.
func (cs *cellStats) exactSums(ints []int64, exp int) bool {
	type acc struct{ slo, shi, qlo, qhi uint64 }
	a := make([]acc, len(cs.n))
	for i, d := range ints {
		s := &a[cs.of[i]]
		var c uint64
		s.slo, c = bits.Add64(s.slo, uint64(d), 0)
		s.shi += uint64(d>>63) + c
		u := uint64(d)
		if d < 0 {
			u = uint64(-d)
		}
		h, l := bits.Mul64(u, u)
		s.qlo, c = bits.Add64(s.qlo, l, 0)
		s.qhi, c = bits.Add64(s.qhi, h, c)
		if c != 0 {
			return false
		}
	}
	// The denominators n·10^(−exp) and n·10^(−2exp) (or the numerators'
	// factors 10^exp, 10^2exp for exp > 0).
	var scale, scale2 big.Int
	scale.Exp(big.NewInt(10), big.NewInt(int64(abs(exp))), nil)
	scale2.Mul(&scale, &scale)
	const exact = 1 << 53
	for c, s := range a {
		n := uint64(cs.n[c])
		neg := s.shi>>63 == 1
		// |S| as 128 bits.
		alo, ahi := s.slo, s.shi
		if neg {
			var b uint64
			alo, b = bits.Sub64(0, alo, 0)
			ahi, _ = bits.Sub64(0, ahi, b)
		}
		// n·Q − S² ≥ 0 (Cauchy–Schwarz), exactly, when it fits 128 bits.
		fit := ahi == 0 && s.qhi == 0
		var num [2]uint64
		if fit {
			h1, l1 := bits.Mul64(n, s.qlo)
			h2, l2 := bits.Mul64(alo, alo)
			var b uint64
			num[1], b = bits.Sub64(l1, l2, 0)
			num[0], _ = bits.Sub64(h1, h2, b)
		}
		if fit && exp <= 0 && alo <= exact && scale.IsUint64() && scale2.IsUint64() {
			den := n * scale.Uint64()
			den2 := n * scale2.Uint64()
			if hi, _ := bits.Mul64(n, scale2.Uint64()); hi == 0 && den2 <= exact && num[0] == 0 && num[1] <= exact {
				m := float64(alo) / float64(den)
				if neg {
					m = -m
				}
				cs.mean[c] = m
				cs.within[c] = float64(num[1]) / float64(den2)
				continue
			}
		}
		// General case in big rationals.
		sum := new(big.Int).Lsh(new(big.Int).SetUint64(ahi), 64)
		sum.Or(sum, new(big.Int).SetUint64(alo))
		if neg {
			sum.Neg(sum)
		}
		q := new(big.Int).Lsh(new(big.Int).SetUint64(s.qhi), 64)
		q.Or(q, new(big.Int).SetUint64(s.qlo))
		bn := new(big.Int).SetUint64(n)
		w := new(big.Int).Mul(bn, q)
		w.Sub(w, new(big.Int).Mul(sum, sum))
		var mr, wr big.Rat
		if exp <= 0 {
			mr.SetFrac(sum, new(big.Int).Mul(bn, &scale))
			wr.SetFrac(w, new(big.Int).Mul(bn, &scale2))
		} else {
			mr.SetFrac(new(big.Int).Mul(sum, &scale), bn)
			wr.SetFrac(new(big.Int).Mul(w, &scale2), bn)
		}
		cs.mean[c], _ = mr.Float64()
		cs.within[c], _ = wr.Float64()
	}
	return true
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// floatSums sets the cell means and within sums of squares from y by two
// passes with Neumaier's compensated sums (Neumaier 1974, ZAMM 54, 39–51).
func (cs *cellStats) floatSums(y []float64) {
	c := len(cs.n)
	sum, comp := make([]float64, c), make([]float64, c)
	add := func(k int, v float64) {
		t := sum[k] + v
		if math.Abs(sum[k]) >= math.Abs(v) {
			comp[k] += (sum[k] - t) + v
		} else {
			comp[k] += (v - t) + sum[k]
		}
		sum[k] = t
	}
	for i, v := range y {
		add(int(cs.of[i]), v)
	}
	for k := range cs.mean {
		cs.mean[k] = (sum[k] + comp[k]) / float64(cs.n[k])
		sum[k], comp[k] = 0, 0
	}
	for i, v := range y {
		k := int(cs.of[i])
		d := v - cs.mean[k]
		add(k, d*d)
	}
	for k := range cs.within {
		cs.within[k] = sum[k] + comp[k]
	}
}

// totals returns the pooled within-cell sum of squares and the grand
// mean and total sum of squares about it.
func (cs *cellStats) totals() (within, grand, total float64) {
	var n float64
	var s neumaier
	for c, k := range cs.n {
		s.add(float64(k) * cs.mean[c])
		n += float64(k)
	}
	grand = s.sum() / n
	var w, t neumaier
	for c, k := range cs.n {
		w.add(cs.within[c])
		d := cs.mean[c] - grand
		t.add(float64(k) * d * d)
	}
	return w.sum(), grand, w.sum() + t.sum()
}

// neumaier is a compensated sum (Neumaier 1974).
type neumaier struct{ s, c float64 }

func (a *neumaier) add(v float64) {
	t := a.s + v
	if math.Abs(a.s) >= math.Abs(v) {
		a.c += (a.s - t) + v
	} else {
		a.c += (v - t) + a.s
	}
	a.s = t
}

func (a *neumaier) sum() float64 { return a.s + a.c }

// cellFit is the least-squares fit of the full model from cell statistics.
type cellFit struct {
	qr        *qrFit // of the weighted cell matrix WX_c (or of the block-centred one)
	p         int    // columns of R
	ranges    [][2]int
	intercept bool // false when blocks are absorbed
	absorbed  bool
	order     []int // terms in the columns of R
	within    float64
	resSS     float64
	totalSS   float64
	grand     float64
	// Absorbed blocks: per block the count, centred mean and mean of each
	// treatment column.
	nb    []int
	yb    []float64
	xb    []float64
	treat float64 // SS of the treatment cells about the grand mean (absorbed)
}

// fitCells fits the model to the cell statistics; blocks are absorbed when
// there are many and they do not interact with the treatments.
func (m *model) fitCells(cs *cellStats, absorb int) *cellFit {
	f := &cellFit{intercept: true}
	f.within, f.grand, f.totalSS = cs.totals()
	if m.blockL != nil && len(m.blockL) >= absorb && !m.terms[len(m.terms)-1].blockInt {
		f.intercept, f.absorbed = false, true
	}
	for k := range m.terms {
		if !(f.absorbed && m.terms[k].block) {
			f.order = append(f.order, k)
		}
	}
	f.ranges = make([][2]int, len(m.terms))
	p := 0
	if f.intercept {
		p = 1
	}
	for _, k := range f.order {
		f.ranges[k] = [2]int{p, p + m.terms[k].df}
		p += m.terms[k].df
	}
	f.p = p
	c := len(cs.n)
	x := make([]float64, c*p)
	wy := make([]float64, c)
	row := make([]float64, 0, p)
	for k := 0; k < c; k++ {
		row = m.codeRow(row[:0], f.order, f.intercept, int(cs.block[k]), cs.lv[k])
		copy(x[k*p:], row)
		wy[k] = cs.mean[k]
	}
	if f.absorbed {
		nb := len(m.blockL)
		f.nb, f.yb, f.xb = make([]int, nb), make([]float64, nb), make([]float64, nb*p)
		sums := make([]neumaier, nb)
		for k := 0; k < c; k++ {
			b := int(cs.block[k])
			f.nb[b] += cs.n[k]
			sums[b].add(float64(cs.n[k]) * cs.mean[k])
			for j := 0; j < p; j++ {
				f.xb[b*p+j] += float64(cs.n[k]) * x[k*p+j]
			}
		}
		for b := range f.nb {
			f.yb[b] = sums[b].sum() / float64(f.nb[b])
			for j := 0; j < p; j++ {
				f.xb[b*p+j] /= float64(f.nb[b])
			}
		}
		for k := 0; k < c; k++ {
			b := int(cs.block[k])
			for j := 0; j < p; j++ {
				x[k*p+j] -= f.xb[b*p+j]
			}
			wy[k] -= f.yb[b]
		}
		// The treatment cells' SS about the grand mean, for the block term
		// adjusted for the treatments.
		tn := make([]float64, cs.nTreat)
		ts := make([]neumaier, cs.nTreat)
		for k := 0; k < c; k++ {
			tn[cs.treat[k]] += float64(cs.n[k])
			ts[cs.treat[k]].add(float64(cs.n[k]) * (cs.mean[k] - f.grand))
		}
		var tss neumaier
		for t := range tn {
			if tn[t] > 0 {
				d := ts[t].sum() / tn[t]
				tss.add(tn[t] * d * d)
			}
		}
		f.treat = tss.sum()
	}
	for k := 0; k < c; k++ {
		w := math.Sqrt(float64(cs.n[k]))
		for j := 0; j < p; j++ {
			x[k*p+j] *= w
		}
		wy[k] *= w
	}
	f.qr = fitQR(x, c, p, wy)
	var r neumaier
	for _, v := range f.qr.qty[min(p, c):] {
		r.add(v * v)
	}
	f.resSS = f.within + r.sum()
	return f
}

// full reports whether R has full column rank.
func (f *cellFit) full() bool { return f.qr.rank == f.p }

// rTri returns R's element (i, j).
func (f *cellFit) rTri(i, j int) float64 { return f.qr.a.Data[i*f.p+j] }

// ss returns term k's sum of squares of the given type.
func (f *cellFit) ss(m *model, k, ssType int) float64 {
	z := f.qr.qty[:f.p]
	if m.terms[k].block && f.absorbed {
		// Blocks first: Σ n_b (ȳ_b − ȳ)².
		var s neumaier
		for b, n := range f.nb {
			d := f.yb[b] - f.grand
			s.add(float64(n) * d * d)
		}
		if ssType == 1 {
			return s.sum()
		}
		// SS(B | T) = SS(B) + SS(T | B) − SS(T).
		var zt neumaier
		for _, v := range z {
			zt.add(v * v)
		}
		return math.Max(0, s.sum()+zt.sum()-f.treat)
	}
	r := f.ranges[k]
	if ssType == 1 {
		return sumSq(z[r[0]:r[1]])
	}
	var cols []int
	if f.intercept {
		cols = append(cols, 0)
	}
	for _, j := range f.order {
		if j == k || ssType == 2 && m.contains(j, k) {
			continue
		}
		for c := f.ranges[j][0]; c < f.ranges[j][1]; c++ {
			cols = append(cols, c)
		}
	}
	for c := r[0]; c < r[1]; c++ {
		cols = append(cols, c)
	}
	prefix := true
	for i, c := range cols {
		prefix = prefix && c == i
	}
	if prefix {
		// The term is already last among the columns kept.
		return sumSq(z[r[0]:r[1]])
	}
	p, q := f.p, len(cols)
	a := make([]float64, p*q)
	for i := 0; i < p; i++ {
		for jj, c := range cols {
			if i <= c {
				a[i*q+jj] = f.rTri(i, c)
			}
		}
	}
	g := fitQR(a, p, q, z)
	return sumSq(g.qty[q-(r[1]-r[0]) : q])
}

// cellResiduals returns ȳ_c − fitted_c for each cell.
func (f *cellFit) cellResiduals(cs *cellStats) []float64 {
	e := f.qr.residuals()
	for k := range e {
		e[k] /= math.Sqrt(float64(cs.n[k]))
	}
	return e
}

// cellLeverage returns the leverage of each observation of each cell.
func (f *cellFit) cellLeverage(m *model, cs *cellStats) []float64 {
	p := f.p
	h := make([]float64, len(cs.n))
	x := make([]float64, 0, p)
	v := make([]float64, p)
	for k := range cs.n {
		b := int(cs.block[k])
		x = m.codeRow(x[:0], f.order, f.intercept, b, cs.lv[k])
		if f.absorbed {
			for j := range x {
				x[j] -= f.xb[b*p+j]
			}
		}
		// Solve Rᵀ v = x.
		var s float64
		for j := 0; j < p; j++ {
			acc := x[j]
			for i := 0; i < j; i++ {
				acc -= f.rTri(i, j) * v[i]
			}
			v[j] = acc / f.rTri(j, j)
			s += v[j] * v[j]
		}
		if f.absorbed {
			s += 1 / float64(f.nb[b])
		}
		h[k] = s
	}
	return h
}

// estimates returns the coefficients and their unscaled covariance in the
// parameterisation the least-squares means use: the intercept and every
// coded column (blocks included when coded); with absorbed blocks the
// intercept is the mean of the block intercepts and the block columns are
// left out (their contrast coefficients are all zero).
func (f *cellFit) estimates(m *model) *estimates {
	p := f.p
	b := make([]float64, p)
	for i := p - 1; i >= 0; i-- {
		s := f.qr.qty[i]
		for j := i + 1; j < p; j++ {
			s -= f.rTri(i, j) * b[j]
		}
		b[i] = s / f.rTri(i, i)
	}
	// R⁻¹ (upper triangular), then R⁻¹R⁻ᵀ.
	inv := make([][]float64, p)
	for i := range inv {
		inv[i] = make([]float64, p)
	}
	for j := 0; j < p; j++ {
		inv[j][j] = 1 / f.rTri(j, j)
		for i := j - 1; i >= 0; i-- {
			var s float64
			for k := i + 1; k <= j; k++ {
				s += f.rTri(i, k) * inv[k][j]
			}
			inv[i][j] = -s / f.rTri(i, i)
		}
	}
	cov := make([][]float64, p)
	for i := range cov {
		cov[i] = make([]float64, p)
		for j := range cov[i] {
			var s float64
			for k := max(i, j); k < p; k++ {
				s += inv[i][k] * inv[j][k]
			}
			cov[i][j] = s
		}
	}
	ranges := f.ranges
	if f.absorbed {
		// θ = (μ, b_T): μ̂ = mean_b ȳ_b − x̄ᵀb̂_T with x̄ the mean over blocks
		// of the block means of the treatment columns; the block means are
		// uncorrelated with b̂_T, which uses within-block contrasts only.
		nb := len(f.nb)
		xbar := make([]float64, p)
		var ybar, vy float64
		for bl := 0; bl < nb; bl++ {
			ybar += f.yb[bl]
			vy += 1 / float64(f.nb[bl])
			for j := 0; j < p; j++ {
				xbar[j] += f.xb[bl*p+j]
			}
		}
		ybar /= float64(nb)
		vy /= float64(nb) * float64(nb)
		for j := range xbar {
			xbar[j] /= float64(nb)
		}
		mu := ybar
		vx := make([]float64, p) // V x̄
		for i := 0; i < p; i++ {
			mu -= xbar[i] * b[i]
			for j := 0; j < p; j++ {
				vx[i] += cov[i][j] * xbar[j]
			}
		}
		vmu := vy
		for i := 0; i < p; i++ {
			vmu += xbar[i] * vx[i]
		}
		b = append([]float64{mu}, b...)
		full := make([][]float64, p+1)
		full[0] = make([]float64, p+1)
		full[0][0] = vmu
		for i := 0; i < p; i++ {
			full[0][i+1] = -vx[i]
			full[i+1] = append([]float64{-vx[i]}, cov[i]...)
		}
		cov = full
		ranges = make([][2]int, len(f.ranges))
		for k, r := range f.ranges {
			if !m.terms[k].block {
				ranges[k] = [2]int{r[0] + 1, r[1] + 1}
			}
		}
	}
	e := newEstimates(m, b, cov, ranges)
	e.absorbed = f.absorbed
	return e
}

// absorbedCheck reports whether the estimates came from a fit with absorbed
// blocks (for tests).
func (e *estimates) absorbedCheck() bool { return e.absorbed }
