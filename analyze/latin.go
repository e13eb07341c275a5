package analyze

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/allotproject/allot/column"
)

// LatinData is a Latin square (rows and columns are the two blocking
// directions, each treatment once in every row and column), or a series of
// squares.
type LatinData struct {
	Response string
	Values   []string
	Row, Col Column
	// Square, when set, names each observation's square in a series; rows
	// and columns are then taken within squares.
	Square    *Column
	Treatment Column
	Units     []string
}

// LatinResult is the ANOVA of a Latin square or a series of squares.
type LatinResult struct {
	Response string   `json:"response"`
	Terms    []Term   `json:"terms"`
	Residual Residual `json:"residual"`
	// Missing is the number of empty cells of the complete squares.
	Missing int `json:"missing_cells"`
}

// gsBasis accumulates an orthonormal basis by modified Gram–Schmidt with one
// reorthogonalisation, skipping columns that depend on those before (norm
// below 1e-9 of the original), for least squares with nested or aliased
// terms.
type gsBasis struct {
	q [][]float64
}

// project removes from v its components along the basis, twice over
// (Gram–Schmidt with reorthogonalisation, "twice is enough": Giraud,
// Langou and Rozložník 2005, Comput. Math. Appl. 50, 1069–1075).
func (g *gsBasis) project(v []float64) {
	for pass := 0; pass < 2; pass++ {
		for _, q := range g.q {
			var d float64
			for i := range v {
				d += v[i] * q[i]
			}
			for i := range v {
				v[i] -= d * q[i]
			}
		}
	}
}

func (g *gsBasis) add(c []float64) bool {
	v := append([]float64(nil), c...)
	var n0 float64
	for _, x := range v {
		n0 += x * x
	}
	n0 = math.Sqrt(n0)
	if n0 == 0 {
		return false
	}
	g.project(v)
	var n float64
	for _, x := range v {
		n += x * x
	}
	n = math.Sqrt(n)
	if n <= 1e-9*n0 {
		return false
	}
	for i := range v {
		v[i] /= n
	}
	g.q = append(g.q, v)
	return true
}

// rssOf returns the residual sum of squares of y on the span of cols and
// the dimension of that span.
func rssOf(y []float64, cols [][]float64) (float64, int) {
	var g gsBasis
	for _, c := range cols {
		g.add(c)
	}
	r := append([]float64(nil), y...)
	g.project(r)
	var s float64
	for _, v := range r {
		s += v * v
	}
	return s, len(g.q)
}

// indicators returns one 0/1 column per level of c.
func indicators(idx []int, levels int) [][]float64 {
	out := make([][]float64, levels)
	for l := range out {
		out[l] = make([]float64, len(idx))
	}
	for i, l := range idx {
		out[l][i] = 1
	}
	return out
}

// LatinSquareANOVA analyses a Latin square (rows, columns, treatments) or a
// series of squares (squares, rows within squares, columns within squares,
// treatments) by least squares on the additive model (Cochran and Cox
// 1957, Experimental Designs, 2nd ed., chapter 4.2; Montgomery 2017, Design
// and Analysis of Experiments, 9th ed., section 4.2). Each term's sum of
// squares is the increase in the residual sum of squares when it is left
// out of the full model, with df the loss of rank, so that a square with
// missing cells is analysed by least squares with the right df (for the
// complete square they are the usual orthogonal sums of squares). Checked
// against statsmodels OLS/anova_lm and nested fits
// (testdata/reference/gen_latin.py).
func LatinSquareANOVA(d LatinData) (*LatinResult, error) {
	n := len(d.Values)
	if d.Row.Values.Len() != n || d.Col.Values.Len() != n || d.Treatment.Values.Len() != n || d.Square != nil && d.Square.Values.Len() != n {
		return nil, fmt.Errorf("latin square: every column needs one value per observation")
	}
	y, _, err := centred(column.Of(d.Values))
	if err != nil {
		return nil, fmt.Errorf("response %q: %w", d.Response, err)
	}
	nest := func(c Column) Column {
		if d.Square == nil {
			return c
		}
		vs := make([]string, c.Values.Len())
		for i := range vs {
			vs[i] = d.Square.Values.At(i) + "\x00" + c.Values.At(i)
		}
		return Column{Name: c.Name, Values: column.Of(vs)}
	}
	type term struct {
		name string
		cols [][]float64
	}
	var terms []term
	if d.Square != nil {
		_, si, err := codes(*d.Square)
		if err != nil {
			return nil, err
		}
		terms = append(terms, term{d.Square.Name, indicators(si, maxIdx(si)+1)})
	}
	rowName, colName := d.Row.Name, d.Col.Name
	if d.Square != nil {
		rowName += " within " + d.Square.Name
		colName += " within " + d.Square.Name
	}
	_, ri, err := codes(nest(d.Row))
	if err != nil {
		return nil, err
	}
	_, ci, err := codes(nest(d.Col))
	if err != nil {
		return nil, err
	}
	tl, ti, err := codes(d.Treatment)
	if err != nil {
		return nil, err
	}
	terms = append(terms, term{rowName, indicators(ri, maxIdx(ri)+1)}, term{colName, indicators(ci, maxIdx(ci)+1)},
		term{d.Treatment.Name, indicators(ti, len(tl))})
	// Every cell of a complete square holds one unit: t² per square.
	t := len(tl)
	squares := 1
	if d.Square != nil {
		squares = len(terms[0].cols)
	}
	one := make([]float64, n)
	for i := range one {
		one[i] = 1
	}
	// In a series, rows and columns within squares contain the squares
	// term: it is tested without them (Type II containment), the others
	// after everything else.
	contains := func(a, b int) bool { return d.Square != nil && b == 0 && (a == 1 || a == 2) }
	design := func(skip int, drop bool) [][]float64 {
		cols := [][]float64{one}
		for k, tm := range terms {
			if k == skip && drop || skip >= 0 && contains(k, skip) {
				continue
			}
			cols = append(cols, tm.cols...)
		}
		return cols
	}
	rss, rank := rssOf(y, design(-1, false))
	res := &LatinResult{Response: d.Response, Missing: squares*t*t - n}
	res.Residual.DF = n - rank
	if res.Residual.DF < 1 {
		return nil, fmt.Errorf("latin square: %d observations leave no residual df; a %d×%d square needs at least 3 treatments", n, t, t)
	}
	res.Residual.SS = rss
	res.Residual.MS = rss / float64(res.Residual.DF)
	for k, tm := range terms {
		r1, rk1 := rssOf(y, design(k, false))
		r2, rk := rssOf(y, design(k, true))
		df := rk1 - rk
		row := Term{Source: tm.name, DF: df, SS: math.Max(0, r2-r1)}
		if df > 0 {
			row.MS = row.SS / float64(df)
			row.F = row.MS / res.Residual.MS
			row.P = distuv.F{D1: float64(df), D2: float64(res.Residual.DF)}.Survival(row.F)
			row.PartialEta2 = row.SS / (row.SS + rss)
		}
		row.Block = k < len(terms)-1
		res.Terms = append(res.Terms, row)
	}
	return res, nil
}

func maxIdx(v []int) int {
	m := 0
	for _, x := range v {
		m = max(m, x)
	}
	return m
}
