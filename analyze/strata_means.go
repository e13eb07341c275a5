package analyze

import (
	"fmt"
	"math"

	"github.com/allotproject/allot/column"
	"gonum.org/v1/gonum/stat/distuv"
)

// SplitPlotCellMeans returns the raw means of the whole-plot × sub-plot
// cells of a split plot (n, mean, SD), whole-plot level varying slowest,
// in the level orders of d.Whole and d.Sub, for the interaction plot. In a
// balanced split plot they are the least-squares cell means; with missing
// sub-plots they are not adjusted.
func SplitPlotCellMeans(d SplitPlot) ([]Cell, error) {
	if d.Whole.Values.Len() != len(d.Values) || d.Sub.Values.Len() != len(d.Values) {
		return nil, fmt.Errorf("split plot: every column needs one value per observation")
	}
	wl, wi, err := d.Whole.levels()
	if err != nil {
		return nil, err
	}
	sl, si, err := d.Sub.levels()
	if err != nil {
		return nil, err
	}
	labels := make([]string, len(d.Values))
	var order []string
	for _, w := range wl {
		for _, s := range sl {
			order = append(order, w+"\x00"+s)
		}
	}
	for i := range labels {
		labels[i] = wl[wi[i]] + "\x00" + sl[si[i]]
	}
	gs, err := Summaries(Data{Response: d.Response, Values: column.Of(d.Values), Factors: []Column{{Name: d.Whole.Name + " × " + d.Sub.Name, Levels: order, Values: column.Of(labels)}}}, 0)
	if err != nil {
		return nil, err
	}
	var out []Cell
	for _, g := range gs {
		var w, s string
		for k := 0; k < len(g.Level); k++ {
			if g.Level[k] == 0 {
				w, s = g.Level[:k], g.Level[k+1:]
				break
			}
		}
		g.Level = w + " × " + s
		out = append(out, Cell{A: w, B: s, Group: g})
	}
	return out, nil
}

// LatinMeans returns the treatment means of a Latin square (or series) with
// n, mean and SD; in complete squares, where every treatment meets every
// row and column equally often and the raw means are the least-squares
// means, also their standard errors sqrt(MS_residual/n) and 95% confidence
// intervals on the residual df. With empty cells LSMean, SE and the
// interval are NaN: the raw means are not adjusted for the rows and
// columns the missing cells leave unbalanced.
func LatinMeans(d LatinData, res *LatinResult) ([]Group, error) {
	gs, err := Summaries(Data{Response: d.Response, Values: column.Of(d.Values), Factors: []Column{d.Treatment}}, 0)
	if err != nil {
		return nil, err
	}
	complete := res != nil && res.Missing == 0 && res.Residual.DF > 0
	var tq float64
	if complete {
		tq = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(res.Residual.DF)}.Quantile(0.975)
	}
	for i := range gs {
		g := &gs[i]
		g.LSMean, g.SE, g.Lower, g.Upper = math.NaN(), math.NaN(), math.NaN(), math.NaN()
		if complete {
			g.LSMean, g.SE = g.Mean, math.Sqrt(res.Residual.MS/float64(g.N))
			g.Lower, g.Upper = g.LSMean-tq*g.SE, g.LSMean+tq*g.SE
		}
	}
	return gs, nil
}
