package design

import (
	"fmt"
	"strings"
)

// Multi-stratum designs: the split plot (whole-plot treatments on main
// plots, sub-plot treatments on the sub-plots within each main plot) and
// the Latin square (rows and columns as two blocking directions).
//
// A split plot keeps every factor in Factors, the WholePlotFactors
// whole-plot factors first, so that Treatments is the full factorial with
// the whole-plot combination varying slowest: treatment index
// = whole-plot treatment × (number of sub-plot treatments) + sub-plot
// treatment. Reps[t] = r for every treatment: each block holds r main plots
// of each whole-plot treatment, and each main plot every sub-plot treatment
// once. A Latin plan has Reps[t] = t (each treatment t times in each t × t
// square), one block per square and a t × t grid numbered row by row.

// MaxLatin is the largest Latin square allot lays out (treatments per row).
const MaxLatin = 30

// Strata reports whether the plan is a split plot or a Latin square.
func (p Plan) Strata() bool { return p.Design == SplitPlot || p.Design == Latin }

// WholePlotTreatments returns the number of whole-plot treatments of a
// split plot (the product of the whole-plot factors' levels).
func (p Plan) WholePlotTreatments() int {
	n := 1
	for _, f := range p.Factors[:min(p.WholePlotFactors, len(p.Factors))] {
		n *= len(f.Levels)
	}
	return n
}

// SubPlotTreatments returns the number of sub-plot treatments of a split
// plot: the sub-plots in each main plot.
func (p Plan) SubPlotTreatments() int {
	n := 1
	for _, f := range p.Factors[min(p.WholePlotFactors, len(p.Factors)):] {
		n *= len(f.Levels)
	}
	return n
}

// MainPlotsPerBlock returns the number of main plots in each block of a
// split plot (all main plots, Blocks = 1, in a completely randomised one).
func (p Plan) MainPlotsPerBlock() int {
	if len(p.Reps) == 0 {
		return 0
	}
	return p.WholePlotTreatments() * p.Reps[0]
}

// MainPlotWord returns what a main plot is called: WholePlotName, or
// "main plot".
func (p Plan) MainPlotWord() string {
	if p.WholePlotName != "" {
		return p.WholePlotName
	}
	return "main plot"
}

// strataName names a split plot or Latin plan in words (empty for others).
func (p Plan) strataName() string {
	switch p.Design {
	case SplitPlot:
		if p.Blocks > 1 {
			return "split-plot design, main plots in randomised complete blocks"
		}
		return "split-plot design, main plots completely randomised"
	case Latin:
		if p.Blocks > 1 {
			return fmt.Sprintf("series of %d Latin squares", p.Blocks)
		}
		return "Latin square"
	}
	return ""
}

// validateStrata checks the fields of a split plot or Latin plan, and that
// other plans do not use them.
func (p Plan) validateStrata() error {
	if !p.Strata() {
		if p.WholePlotFactors != 0 || p.WholePlotName != "" {
			return errf("whole_plot", "whole-plot factors and names belong to design %q", SplitPlot)
		}
		return nil
	}
	word := map[Kind]string{SplitPlot: "a split plot", Latin: "a Latin square"}[p.Design]
	switch {
	case p.Units != nil:
		return errf("units", "%s is laid out on numbered units; a unit list (--units) is not supported for it yet", word)
	case p.Blind:
		return errf("blind", "%s shows its factor levels in the workbook; blinding (--blind) is not supported for it yet", word)
	case p.Subsamples > 0:
		return errf("subsamples", "subsamples are not supported in %s yet", word)
	case p.Control != "":
		return errf("control", "a control level is not supported in %s; give the comparisons at analysis", word)
	}
	for i, r := range p.Reps {
		if r != p.Reps[0] {
			return errf("reps", "treatment %q has replication %d, another %d: %s needs equal replication", p.Treatments()[i].Name, r, p.Reps[0], word)
		}
	}
	if p.Design == Latin {
		return p.validateLatin()
	}
	return p.validateSplitPlot()
}

func (p Plan) validateSplitPlot() error {
	if p.WholePlotFactors < 1 || p.WholePlotFactors >= len(p.Factors) {
		return errf("whole_plot", "a split plot needs at least one whole-plot factor (--whole-plot NAME=L1,L2) and at least one sub-plot factor (--sub-plot NAME=L1,L2)")
	}
	if p.Grid != nil {
		return errf("grid", "a grid (--grid) is not supported for a split plot yet: the positions are the sub-plots of each %s in turn", p.MainPlotWord())
	}
	if err := CheckText("whole_plot_name", "the whole-plot name", p.WholePlotName, MaxNameLen); err != nil {
		return err
	}
	if p.WholePlotName != "" && strings.TrimSpace(p.WholePlotName) == "" {
		return errf("whole_plot_name", "the whole-plot name is blank: give a word such as chamber, bench or cage")
	}
	if p.WholePlotName != "" && strings.EqualFold(p.WholePlotName, p.BlockName) {
		return errf("whole_plot_name", "the whole-plot name %q is also the block name; main plots stand within blocks, so give them different names", p.WholePlotName)
	}
	for _, f := range p.Factors {
		if strings.EqualFold(f.Name, p.MainPlotWord()) {
			return errf("whole_plot_name", "the whole-plot name %q is also a factor's name; the workbook needs a column for each", p.WholePlotName)
		}
	}
	for _, r := range p.Responses {
		if strings.EqualFold(r.Name, p.MainPlotWord()) {
			return errf("whole_plot_name", "the whole-plot name %q is also a response's name; the workbook needs a column for each", p.WholePlotName)
		}
	}
	if len(p.Reps) > 0 && p.Blocks > 1 && p.Reps[0] != 1 {
		return errf("reps", "replication %d: in blocks, each %s holds one %s of each whole-plot treatment; give more blocks instead", p.Reps[0], p.BlockName, p.MainPlotWord())
	}
	if len(p.Reps) > 0 && p.Blocks == 1 && p.Reps[0] < 2 {
		return errf("reps", "%d %s per whole-plot treatment: a split plot without blocks needs at least 2, or there is no error to test the whole-plot factor against", p.Reps[0], Plural(p.MainPlotWord()))
	}
	return nil
}

func (p Plan) validateLatin() error {
	t := p.NumTreatments()
	if t < 3 || t > MaxLatin {
		return errf("factor", "%d treatments: a Latin square needs 3 to %d (a 2 × 2 square leaves no error df)", t, MaxLatin)
	}
	if p.WholePlotFactors != 0 || p.WholePlotName != "" {
		return errf("whole_plot", "whole-plot factors and names belong to design %q, not %q", SplitPlot, Latin)
	}
	if len(p.Reps) > 0 && p.Reps[0] != t {
		return errf("reps", "a %d × %d Latin square holds each treatment %d times; the replication is set by the square (give --squares for more)", t, t, t)
	}
	if g := p.Grid; g == nil || g.Rows != t || g.Cols != t || g.Numbering != RowWise || g.Placement != "" {
		return errf("grid", "a Latin square is its own %d × %d grid, numbered row by row; leave out --grid", t, t)
	}
	return nil
}

// checkStrata checks a split plot's main plots (one whole-plot treatment
// each, every sub-plot treatment once, numbered block by block) and a Latin
// square's rows and columns (each treatment once in each).
func (l Layout) checkStrata() error {
	p := l.Plan
	switch p.Design {
	case SplitPlot:
		nb, m := p.SubPlotTreatments(), p.MainPlotsPerBlock()
		seen := map[[2]int]bool{}
		whole := map[int]int{}
		for _, u := range l.Units {
			want := (u.Block-1)*m + (u.Position-1)/nb + 1
			if u.MainPlot != want {
				return fmt.Errorf("unit %s is in main plot %d, its block and position say %d", u.ID, u.MainPlot, want)
			}
			if w, ok := whole[u.MainPlot]; ok && w != u.Treatment/nb {
				return fmt.Errorf("main plot %d holds two whole-plot treatments", u.MainPlot)
			}
			whole[u.MainPlot] = u.Treatment / nb
			k := [2]int{u.MainPlot, u.Treatment % nb}
			if seen[k] {
				return fmt.Errorf("main plot %d holds a sub-plot treatment twice", u.MainPlot)
			}
			seen[k] = true
		}
	case Latin:
		seen := map[[3]int]bool{}
		for _, u := range l.Units {
			r, c := [3]int{u.Block, -u.Row, u.Treatment}, [3]int{u.Block, u.Col, u.Treatment}
			if u.Row < 1 || u.Col < 1 || seen[r] || seen[c] {
				return fmt.Errorf("square %d: treatment %d twice in row %d or column %d", u.Block, u.Treatment, u.Row, u.Col)
			}
			seen[r], seen[c] = true, true
		}
	}
	return nil
}
