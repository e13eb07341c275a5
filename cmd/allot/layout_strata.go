package main

import (
	"github.com/allotproject/allot/design"

	"github.com/spf13/pflag"
)

// addStrataFlags defines the split-plot and Latin-square flags of allot
// layout.
func addStrataFlags(f *pflag.FlagSet, s *design.Spec) {
	f.StringArrayVar(&s.WholePlot, "whole-plot", nil, "split-plot: a whole-plot factor `NAME=L1,L2,...` applied to whole main plots; repeat for a factorial")
	f.StringArrayVar(&s.SubPlot, "sub-plot", nil, "split-plot: a sub-plot factor `NAME=L1,L2,...` applied within each main plot; repeat for a factorial")
	f.StringVar(&s.WholePlotName, "whole-plot-name", "", "split-plot: what a main plot is called, `NAME` such as chamber, bench or cage (default main plot)")
	f.IntVar(&s.Squares, "squares", 0, "latin: the number of independent squares `S` (default 1)")
}

// mergeStrataFlags lets the flags that were set override a spec file.
func mergeStrataFlags(changed func(string) bool, sp *design.Spec, flags design.Spec) {
	if changed("whole-plot") {
		sp.WholePlot = flags.WholePlot
	}
	if changed("sub-plot") {
		sp.SubPlot = flags.SubPlot
	}
	if changed("whole-plot-name") {
		sp.WholePlotName = flags.WholePlotName
	}
	if changed("squares") {
		sp.Squares = flags.Squares
	}
}
