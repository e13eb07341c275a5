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
func (m *model) pruned() (*model, []bool) {
	out := *m
	out.terms = nil
	lost := make([]bool, len(m.terms))
	var basis [][]float64
	one := make([]float64, m.n)
	for i := range one {
		one[i] = 1 / math.Sqrt(float64(m.n))
	}
	basis = append(basis, one)
	for k, t := range m.terms {
		nt := t
		nt.cols = nil
		for _, c := range t.cols {
			v := append([]float64(nil), c...)
			var norm0 float64
			for _, x := range v {
				norm0 += x * x
			}
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
			nt.cols = append(nt.cols, c)
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
