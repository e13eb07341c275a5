package report

import (
	"fmt"
	"math"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// StrataFigures returns the figures of a split-plot or Latin-square
// analysis, named after the response: the interaction plot of the cell
// means of a split plot (sub-plot treatments along the axis, one line per
// whole-plot treatment; no intervals, as a cell mean's error mixes both
// strata), or the treatment means of a Latin square with their 95%
// intervals when the squares are complete.
func StrataFigures(a StrataAnalysis, unit string) ([]Figure, error) {
	ylab := a.Response
	if unit != "" {
		ylab += " (" + unit + ")"
	}
	var figs []Figure
	switch {
	case len(a.CellMeans) > 0:
		var whole, sub []string
		seenW, seenS := map[string]bool{}, map[string]bool{}
		for _, c := range a.CellMeans {
			if !seenW[c.A] {
				seenW[c.A] = true
				whole = append(whole, c.A)
			}
			if !seenS[c.B] {
				seenS[c.B] = true
				sub = append(sub, c.B)
			}
		}
		wName, sName := a.wholeSubNames()
		title := fmt.Sprintf("Mean %s by %s and %s (cell means)", a.Response, sName, wName)
		if a.Missing > 0 {
			title = fmt.Sprintf("Mean %s by %s and %s (raw cell means)", a.Response, sName, wName)
		}
		p := newPlot(title, sName, ylab)
		at := map[string]int{}
		for i, s := range sub {
			at[s] = i
		}
		for k, w := range whole {
			var xy plotter.XYs
			for _, c := range a.CellMeans {
				if c.A == w {
					xy = append(xy, plotter.XY{X: float64(at[c.B]), Y: c.Mean})
				}
			}
			l, pts, err := plotter.NewLinePoints(xy)
			if err != nil {
				return nil, err
			}
			col := palette[k%len(palette)]
			l.Color, l.Width = col, vg.Points(1.5)
			if k%2 == 1 {
				l.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
			}
			pts.Color, pts.Radius = col, vg.Points(3.5)
			pts.Shape = glyphShapes[k%len(glyphShapes)]
			p.Add(l, pts)
			p.Legend.Add(wName+" = "+w, l, pts)
		}
		// Room at the ends of the axis, and above the lines for the legend.
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, c := range a.CellMeans {
			lo, hi = math.Min(lo, c.Mean), math.Max(hi, c.Mean)
		}
		span := hi - lo
		if span == 0 {
			span = math.Max(math.Abs(hi), 1)
		}
		p.X.Min, p.X.Max = -0.5, float64(len(sub))-0.5
		p.Y.Min, p.Y.Max = lo-0.08*span, hi+(0.12+0.07*float64(len(whole)))*span
		p.Legend.Top = true
		p.Legend.YOffs = -vg.Points(14)
		p.NominalX(sub...)
		figs = append(figs, Figure{Name: "interaction", Title: p.Title.Text, plot: p, w: 7 * vg.Inch, h: 4.5 * vg.Inch})
	case len(a.TreatmentMeans) > 0:
		gs := a.TreatmentMeans
		title := fmt.Sprintf("Mean %s by %s, with 95%% confidence intervals", a.Response, gs[0].Term)
		withCI := !math.IsNaN(gs[0].LSMean)
		if withCI && a.Latin != nil && a.Latin.Missing > 0 {
			title = fmt.Sprintf("LS mean %s by %s, with 95%% confidence intervals", a.Response, gs[0].Term)
		}
		if !withCI {
			title = fmt.Sprintf("Mean %s by %s (raw means)", a.Response, gs[0].Term)
		}
		p := newPlot(title, gs[0].Term, ylab)
		var names []string
		e := errorBars{color: palette[0]}
		for i, g := range gs {
			names = append(names, g.Level)
			y, lo, hi := g.LSMean, g.Lower, g.Upper
			if !withCI {
				y, lo, hi = g.Mean, g.Mean, g.Mean
			}
			e.xy = append(e.xy, plotter.XY{X: float64(i), Y: y})
			e.lo, e.hi = append(e.lo, lo), append(e.hi, hi)
		}
		p.Add(e)
		p.NominalX(names...)
		figs = append(figs, Figure{Name: "means", Title: p.Title.Text, plot: p, w: 7 * vg.Inch, h: 4.5 * vg.Inch})
	}
	for i := range figs {
		figs[i].Name = a.Response + "-" + figs[i].Name
	}
	return figs, nil
}

// glyphShapes tell the lines of an interaction plot apart without colour.
var glyphShapes = []draw.GlyphDrawer{draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.PlusGlyph{}, draw.CrossGlyph{}, draw.RingGlyph{}}

// wholeSubNames names the split plot's whole-plot and sub-plot factors.
func (a StrataAnalysis) wholeSubNames() (string, string) {
	switch {
	case a.wholeName != "":
		return a.wholeName, a.subName
	case a.SplitPlot != nil:
		return a.SplitPlot.Whole, a.SplitPlot.Sub
	}
	return "whole plot", "sub-plot"
}
