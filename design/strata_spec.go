package design

import (
	"strconv"
	"strings"
)

// strata reports whether the spec asks for a split plot or a Latin square.
func (s Spec) strata() bool {
	k := Kind(strings.TrimSpace(s.Design))
	return k == SplitPlot || k == Latin
}

// refuseStrataKeys refuses the split-plot and Latin keys in a spec for
// another design.
func (s Spec) refuseStrataKeys() error {
	switch {
	case len(s.WholePlot) > 0 || len(s.SubPlot) > 0 || s.WholePlotName != "":
		return errf("design", "whole-plot and sub-plot factors need design %q", SplitPlot)
	case s.Squares != 0:
		return errf("squares", "squares need design %q", Latin)
	}
	return nil
}

// resolveStrata resolves a split-plot or Latin spec: the factors from the
// whole-plot and sub-plot lists (split plot) or the factor list (Latin),
// the main plots per whole-plot treatment from the replication, and the
// squares as blocks.
func (s Spec) resolveStrata(units []UnitRow) (Plan, error) {
	if units != nil || s.Units != "" {
		return Plan{}, errf("units", "design %s is laid out on numbered units; a unit list (--units) is not supported for it yet", s.Design)
	}
	if s.BlockColumn != "" || s.MatchOn != "" || s.PerBlock != 0 || s.AllowUnequal {
		return Plan{}, errf("units", "design %s takes no unit list options (--block-column, --match-on, --per-block, --allow-unequal)", s.Design)
	}
	if s.Design == string(Latin) {
		return s.resolveLatin()
	}
	if len(s.Factor) > 0 {
		return Plan{}, errf("factor", "a split plot takes its factors from --whole-plot NAME=L1,L2 and --sub-plot NAME=L1,L2, not --factor")
	}
	if len(s.WholePlot) == 0 {
		return Plan{}, errf("whole_plot", "a split plot needs a whole-plot factor, for example --whole-plot light=low,high")
	}
	if len(s.SubPlot) == 0 {
		return Plan{}, errf("sub_plot", "a split plot needs a sub-plot factor, for example --sub-plot variety=V1,V2,V3")
	}
	if s.Squares != 0 {
		return Plan{}, errf("squares", "--squares belongs to design %q", Latin)
	}
	sp := s
	sp.Factor = append(append([]string{}, s.WholePlot...), s.SubPlot...)
	p, err := sp.basePlan()
	if err != nil {
		return Plan{}, err
	}
	p.WholePlotFactors = len(s.WholePlot)
	p.WholePlotName = strings.TrimSpace(s.WholePlotName)
	if p.WholePlotName == "" {
		p.WholePlotName = "main plot"
	}
	if s.Blocks < 0 || s.Blocks == 1 || s.Blocks > MaxUnits {
		return Plan{}, errf("blocks", "%d blocks: give 2 or more for main plots in blocks, or leave --blocks out for main plots completely randomised", s.Blocks)
	}
	p.Blocks = max(s.Blocks, 1)
	r := 1
	if t := strings.TrimSpace(s.Reps); t != "" {
		if r, err = strconv.Atoi(t); err != nil || r < 1 || r > MaxUnits {
			return Plan{}, errf("reps", "replication %q: give the number of %s per whole-plot treatment (in each block) as one whole number, for example --reps 3", s.Reps, Plural(p.WholePlotName))
		}
	} else if p.Blocks == 1 {
		return Plan{}, errf("reps", "a split plot without blocks needs --reps R, the number of %s per whole-plot treatment (at least 2)", Plural(p.WholePlotName))
	}
	if s.Grid != "" || s.Numbering != "" {
		return Plan{}, errf("grid", "a grid (--grid) is not supported for a split plot yet")
	}
	return s.finishStrata(p, r)
}

func (s Spec) resolveLatin() (Plan, error) {
	switch {
	case len(s.WholePlot) > 0 || len(s.SubPlot) > 0 || s.WholePlotName != "":
		return Plan{}, errf("whole_plot", "--whole-plot, --sub-plot and --whole-plot-name belong to design %q", SplitPlot)
	case s.Reps != "":
		return Plan{}, errf("reps", "a Latin square sets its own replication (each treatment once in every row and column); give --squares S for more squares instead of --reps")
	case s.Blocks != 0:
		return Plan{}, errf("blocks", "the blocks of a Latin square are its rows and columns; give --squares S for several squares instead of --blocks")
	case s.Grid != "" || s.Numbering != "":
		return Plan{}, errf("grid", "a Latin square of t treatments is its own t × t grid; leave out --grid")
	case s.Squares < 0 || s.Squares > 1000:
		return Plan{}, errf("squares", "%d squares: give 1 to 1000", s.Squares)
	}
	p, err := s.basePlan()
	if err != nil {
		return Plan{}, err
	}
	if s.BlockName == "" {
		p.BlockName = "square"
	}
	p.Blocks = max(s.Squares, 1)
	t := p.NumTreatments()
	if t < 3 || t > MaxLatin {
		return Plan{}, errf("factor", "%d treatments: a Latin square needs 3 to %d (a 2 × 2 square leaves no error df)", t, MaxLatin)
	}
	p.Grid = &Grid{Rows: t, Cols: t, Numbering: RowWise}
	return s.finishStrata(p, t)
}

// finishStrata sets the equal replication r, validates and checks the
// expected number of units.
func (s Spec) finishStrata(p Plan, r int) (Plan, error) {
	if n := int64(p.NumTreatments()) * int64(r) * int64(p.Blocks); n > MaxUnits {
		return Plan{}, errf("reps", "%d units: more than a worksheet can hold (%d rows below the header)", n, MaxUnits)
	}
	p.Reps = make([]int, p.NumTreatments())
	for i := range p.Reps {
		p.Reps[i] = r
	}
	if err := p.Validate(); err != nil {
		return Plan{}, err
	}
	if err := s.checkExpectN(p); err != nil {
		return Plan{}, err
	}
	return p, nil
}
