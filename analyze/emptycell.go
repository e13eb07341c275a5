package analyze

import "math"

// Empty cells. When some combination of levels has no observations, the
// interaction columns of the full model are linearly dependent. pruned
// keeps, in model order (intercept, blocks, main effects, interactions by
// degree), only the columns that are independent of those before them,
// judged by modified Gram–Schmidt with a relative tolerance of 1e-9 on the
// column norms (the codes are small integers, so true dependence leaves a
// remainder at rounding level). The terms keep the df they can estimate:
// Type I and Type II sums of squares are then those of the estimable
// hypotheses (the sequential and hierarchical comparisons of nested
// models, which need no empty cell's mean). Type III hypotheses are about
// unweighted means over every cell, which an empty cell makes untestable
// for every term whose factors are all in a term that lost columns.
//
// With absorb or more blocks (and no block × treatment terms), the blocks
// are absorbed here as in the fit: the treatment columns are centred
// within blocks, which leaves a column dependent on the intercept, the
// blocks and the earlier columns exactly when its centred version is
// dependent on the earlier centred ones, and the block term itself, fitted
// first, keeps all its columns.
func (m *model) pruned(cs *cellStats, absorb int) (*model, []bool) {
	out := *m
	out.terms = nil
	lost := make([]bool, len(m.terms))
	// The columns live on the cells, weighted by √n_c: inner products
	// there equal those over the observations.
	nc := len(cs.n)
	w := make([]float64, nc)
	for c, k := range cs.n {
		w[c] = math.Sqrt(float64(k))
	}
	absorbed := m.blockL != nil && len(m.blockL) >= absorb && !m.terms[len(m.terms)-1].blockInt
	var basis [][]float64
	if !absorbed {
		one := make([]float64, nc)
		for c := range one {
			one[c] = w[c] / math.Sqrt(float64(m.n))
		}
		basis = append(basis, one)
	}
	var nb []float64
	if absorbed {
		nb = make([]float64, len(m.blockL))
		for c, k := range cs.n {
			nb[cs.block[c]] += float64(k)
		}
	}
	var row []float64
	for k, t := range m.terms {
		if absorbed && t.block {
			out.terms = append(out.terms, t)
			continue
		}
		nt := t
		nt.keep = []int{}
		cols := make([][]float64, t.df)
		for j := range cols {
			cols[j] = make([]float64, nc)
		}
		for c := 0; c < nc; c++ {
			row = m.codeTerm(row[:0], &m.terms[k], int(cs.block[c]), cs.lv[c])
			for j, v := range row {
				cols[j][c] = v
			}
		}
		norms := make([]float64, len(cols))
		for j, v := range cols {
			for c, x := range v {
				norms[j] += float64(cs.n[c]) * x * x
			}
			if absorbed {
				mean := make([]float64, len(nb))
				for c, x := range v {
					mean[cs.block[c]] += float64(cs.n[c]) * x
				}
				for c := range v {
					v[c] -= mean[cs.block[c]] / nb[cs.block[c]]
				}
			}
			for c := range v {
				v[c] *= w[c]
			}
		}
		for j, v := range cols {
			norm0 := norms[j]
			for pass := 0; pass < 2; pass++ {
				for _, b := range basis {
					var dot float64
					for i := range v {
						dot += v[i] * b[i]
					}
					for i := range v {
						v[i] -= dot * b[i]
					}
				}
			}
			var norm float64
			for _, x := range v {
				norm += x * x
			}
			if norm <= 1e-18*norm0 {
				lost[k] = true
				continue
			}
			s := 1 / math.Sqrt(norm)
			for i := range v {
				v[i] *= s
			}
			basis = append(basis, v)
			nt.keep = append(nt.keep, j)
		}
		nt.df = len(nt.keep)
		if !lost[k] {
			nt.keep = nil
		}
		out.terms = append(out.terms, nt)
	}
	return &out, lost
}

// notTestable reports, per term, whether its Type III hypothesis involves
// an empty cell: some term containing it (or itself) lost columns.
func (m *model) notTestable(lost []bool) []bool {
	out := make([]bool, len(m.terms))
	for k := range m.terms {
		for j := range m.terms {
			if lost[j] && (j == k || m.contains(j, k)) && !m.terms[k].block {
				out[k] = true
			}
		}
	}
	return out
}
