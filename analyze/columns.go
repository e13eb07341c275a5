package analyze

// termColumns returns each term's coded columns (its df columns, each of
// length n, sum-to-zero coding as in the least-squares fit), for the
// methods that fit their own design matrices (GLM, analysis of
// covariance). Term t's columns are out[t].
func (m *model) termColumns() [][][]float64 {
	out := make([][][]float64, len(m.terms))
	for t := range m.terms {
		out[t] = make([][]float64, m.terms[t].df)
		for j := range out[t] {
			out[t][j] = make([]float64, m.n)
		}
	}
	lv := make([]int32, len(m.index))
	var row []float64
	for i := 0; i < m.n; i++ {
		b := m.obsLevels(i, lv)
		for t := range m.terms {
			row = m.codeTerm(row[:0], &m.terms[t], b, lv)
			for j, v := range row {
				out[t][j][i] = v
			}
		}
	}
	return out
}

// contrasts returns the sum-to-zero coding of a factor as columns: L − 1
// columns, column j is 1 for level j, −1 for the last level, 0 otherwise
// (the coding of the least-squares fit, see code).
func contrasts(idx []int, levels int) [][]float64 {
	cols := make([][]float64, levels-1)
	for j := range cols {
		c := make([]float64, len(idx))
		for i, l := range idx {
			c[i] = code(l, levels, j)
		}
		cols[j] = c
	}
	return cols
}
