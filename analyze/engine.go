package analyze

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/allotproject/allot/column"
)

// Engine fits one design's ANOVA to many response vectors, as Monte-Carlo
// power needs: the model matrix is coded once, and the QR factorisations
// for a pattern of present units are kept and reused while the pattern
// repeats (always, when no unit is lost). It computes the same sums of
// squares as Fit (Types I–III, sum-to-zero coding) from float64 responses.
// An Engine is not safe for concurrent use; give each goroutine its own.
type Engine struct {
	m      *model
	ssType int
	cache  map[string]*prepared
	// Terms names the model terms in table order.
	Terms []Term
}

type prepared struct {
	rows   []int      // units present
	fits   []*qrFit   // full fit, then one per term for Types II/III
	ranges [][][2]int // column ranges per fit
	p      int
	ok     bool
	orders [][]int
}

// NewEngine codes the design of d (its factor and block columns; Values are
// ignored) for repeated fits.
func NewEngine(d Data, ssType int) (*Engine, error) {
	if ssType == 0 {
		ssType = 3
	}
	if ssType < 1 || ssType > 3 {
		return nil, fmt.Errorf("sum-of-squares type %d: must be 1, 2 or 3", ssType)
	}
	n := 0
	if len(d.Factors) > 0 {
		n = d.Factors[0].Values.Len()
	}
	probe := d
	vs := make([]string, n)
	for i := range vs {
		vs[i] = strconv.Itoa(i % 7)
	}
	probe.Values = column.Of(vs)
	probe.Subsamples = nil
	m, err := buildModel(probe)
	if err != nil {
		return nil, err
	}
	e := &Engine{m: m, ssType: ssType, cache: map[string]*prepared{}}
	for _, t := range m.terms {
		row := Term{Source: t.name, DF: t.df, Block: t.block, BlockInteraction: t.blockInt}
		for _, fi := range t.factors {
			row.Factors = append(row.Factors, d.Factors[fi].Name)
		}
		e.Terms = append(e.Terms, row)
	}
	return e, nil
}

func (e *Engine) orders() [][]int {
	m := e.m
	all := make([]int, len(m.terms))
	for i := range all {
		all[i] = i
	}
	out := [][]int{all}
	if e.ssType == 1 {
		return out
	}
	for k := range m.terms {
		var order []int
		for j := range m.terms {
			if j == k || e.ssType == 2 && m.contains(j, k) {
				continue
			}
			order = append(order, j)
		}
		out = append(out, append(order, k))
	}
	return out
}

// prepare factorises the model for the units in rows.
func (e *Engine) prepare(rows []int) *prepared {
	m := e.m
	pr := &prepared{rows: rows, orders: e.orders()}
	lv := make([]int32, len(m.index))
	var row []float64
	for _, order := range pr.orders {
		p := 1
		for _, t := range order {
			p += m.terms[t].df
		}
		pr.p = p
		n := len(rows)
		x := make([]float64, n*p)
		ranges := make([][2]int, len(order))
		c := 1
		for k, t := range order {
			ranges[k] = [2]int{c, c + m.terms[t].df}
			c += m.terms[t].df
		}
		for r, i := range rows {
			b := m.obsLevels(i, lv)
			row = m.codeRow(row[:0], order, true, b, lv)
			copy(x[r*p:], row)
		}
		f := fitQR(x, n, p, make([]float64, n))
		pr.fits = append(pr.fits, f)
		pr.ranges = append(pr.ranges, ranges)
	}
	pr.ok = pr.fits[0].rank == pr.p && len(rows) > pr.p
	return pr
}

// Fitted is the result of one Engine fit: the table's sums of squares.
type Fitted struct {
	SS    []float64 // per term, in Terms order
	DF    []int
	ResSS float64
	ResDF int
}

// Fit returns the sums of squares for response y (one value per unit of
// the design), using only the units with keep[i] (nil keeps all). An
// empty cell, or no residual df, is an error.
func (e *Engine) Fit(y []float64, keep []bool) (Fitted, error) {
	var key string
	var rows []int
	if keep == nil {
		key = "all"
	} else {
		var b strings.Builder
		for _, k := range keep {
			if k {
				b.WriteByte('1')
			} else {
				b.WriteByte('0')
			}
		}
		key = b.String()
	}
	pr, ok := e.cache[key]
	if !ok {
		for i := 0; i < e.m.n; i++ {
			if keep == nil || keep[i] {
				rows = append(rows, i)
			}
		}
		pr = e.prepare(rows)
		if len(e.cache) > 64 {
			clear(e.cache) // random patterns rarely repeat; keep memory flat
		}
		e.cache[key] = pr
	}
	if !pr.ok {
		return Fitted{}, ErrEmptyCell
	}
	yk := make([]float64, len(pr.rows))
	for r, i := range pr.rows {
		yk[r] = y[i]
	}
	out := Fitted{SS: make([]float64, len(e.m.terms)), DF: make([]int, len(e.m.terms))}
	for fi, f := range pr.fits {
		qty := f.applyQT(yk)
		if fi == 0 {
			out.ResSS = sumSq(qty[pr.p:])
			out.ResDF = len(pr.rows) - pr.p
			if e.ssType == 1 {
				for k, r := range pr.ranges[0] {
					out.SS[pr.orders[0][k]] = sumSq(qty[r[0]:r[1]])
					out.DF[pr.orders[0][k]] = r[1] - r[0]
				}
			}
			continue
		}
		last := pr.ranges[fi][len(pr.ranges[fi])-1]
		t := pr.orders[fi][len(pr.orders[fi])-1]
		out.SS[t] = sumSq(qty[last[0]:last[1]])
		out.DF[t] = last[1] - last[0]
	}
	return out, nil
}

func sumSq(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x * x
	}
	return s
}
