package analyze

import (
	"fmt"

	"github.com/allotproject/allot/column"
)

// SplitPlotTukey compares the means of a balanced split plot by Tukey's
// HSD, each kind of comparison with its own error (Gomez and Gomez 1984,
// section 3.4.2; Cochran and Cox 1957, section 7.14): the whole-plot means
// with error (a) (SE of a difference sqrt(2 Ea/(r b)), df(a)); the
// sub-plot means with error (b) (sqrt(2 Eb/(r a)), df(b)); and the sub-plot
// means within each whole-plot level with error (b) (sqrt(2 Eb/r), df(b)),
// one set per whole-plot level. res must be SplitPlotANOVA(d). Comparisons
// of whole-plot means at a sub-plot level, whose error combines both
// strata (Satterthwaite df in res.Diffs), are left to the SE table.
func SplitPlotTukey(d SplitPlot, res *SplitPlotResult, alpha float64) ([]*PostHoc, error) {
	if res == nil || len(res.Diffs) < 3 {
		return nil, fmt.Errorf("split plot: comparisons need the two-stratum analysis first")
	}
	run := func(values []string, c Column, se DiffSE, within string) (*PostHoc, error) {
		g, err := Summaries(Data{Values: column.Of(values), Factors: []Column{c}}, 0)
		if err != nil {
			return nil, err
		}
		// Balanced: each level's least-squares mean is its mean.
		for i := range g {
			g[i].LSMean = g[i].Mean
		}
		t := &Table{Alpha: alpha, Residual: Residual{DF: int(se.DF)}}
		ph := tukeyGroups(g, t, c.Name, func(i, j int) float64 { return se.SE })
		ph.Within = within
		return ph, nil
	}
	out := make([]*PostHoc, 0, 2+len(d.Whole.Levels))
	for k, c := range []Column{d.Whole, d.Sub} {
		ph, err := run(d.Values, c, res.Diffs[k], "")
		if err != nil {
			return nil, err
		}
		out = append(out, ph)
	}
	aL, aI, err := codes(d.Whole)
	if err != nil {
		return nil, err
	}
	for a, level := range aL {
		var vals, subs []string
		for i, ai := range aI {
			if ai == a {
				vals = append(vals, d.Values[i])
				subs = append(subs, d.Sub.Values.At(i))
			}
		}
		sub := Column{Name: d.Sub.Name, Levels: d.Sub.Levels, Values: column.Of(subs)}
		ph, err := run(vals, sub, res.Diffs[2], d.Whole.Name+" = "+level)
		if err != nil {
			return nil, err
		}
		out = append(out, ph)
	}
	return out, nil
}
