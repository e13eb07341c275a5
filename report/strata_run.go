package report

import (
	"errors"
	"fmt"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
)

// RunStrata chooses and runs the analysis of one response (comparisons at
// level alpha): the
// two-stratum ANOVA of a complete split plot, a mixed model by REML when
// sub-plots are missing, or the Latin-square ANOVA.
func RunStrata(p design.Plan, response string, obs workbook.StrataObservations, alpha float64) (StrataAnalysis, error) {
	a := StrataAnalysis{Response: response, Design: p.DesignName(), MainPlot: p.MainPlotWord(), Missing: obs.Total - obs.Values.Len(), Alpha: alpha}
	if p.Design == design.Latin {
		d := analyze.LatinData{Response: response, Values: obs.Values.Strings(), Units: obs.Units.Strings(),
			Row: analyze.Column{Name: "row", Values: column.Of(obs.Rows)}, Col: analyze.Column{Name: "column", Values: column.Of(obs.Cols)},
			Treatment: analyze.Column{Name: treatmentName(p.Factors), Values: column.Of(obs.Treatments), Levels: workbook.TreatmentLevels(p)}}
		if p.Blocks > 1 {
			d.Square = &analyze.Column{Name: p.BlockName, Values: column.Of(obs.Squares)}
		}
		res, err := analyze.LatinSquareANOVA(d)
		if err != nil {
			return a, err
		}
		a.Latin = res
		if a.TreatmentMeans, err = analyze.LatinMeans(d, res); err != nil {
			return a, err
		}
		ph, err := analyze.LatinTukey(d, res, a.TreatmentMeans, alpha)
		if err != nil {
			return a, err
		}
		if ph != nil {
			a.Comparisons = []*analyze.PostHoc{ph}
		}
		checks := analyze.LatinChecks(d, res, a.TreatmentMeans, alpha)
		a.Checks = &checks
		a.Method = "least-squares ANOVA with rows, columns and treatments"
		if p.Blocks > 1 {
			a.Method = fmt.Sprintf("least-squares ANOVA with %s, rows and columns within %s, and treatments", design.Plural(p.BlockName), design.Plural(p.BlockName))
		}
		if a.Missing > 0 {
			a.Method += fmt.Sprintf("; %d missing cell(s) handled by least squares with the df adjusted", a.Missing)
		}
		return a, nil
	}
	d := analyze.SplitPlot{Response: response, Values: obs.Values.Strings(), Units: obs.Units.Strings(),
		Whole:    analyze.Column{Name: treatmentName(p.Factors[:p.WholePlotFactors]), Values: column.Of(obs.Whole), Levels: workbook.WholeLevels(p)},
		Sub:      analyze.Column{Name: treatmentName(p.Factors[p.WholePlotFactors:]), Values: column.Of(obs.Sub), Levels: workbook.SubLevels(p)},
		MainPlot: analyze.Column{Name: p.MainPlotWord(), Values: column.Of(obs.MainPlots)}}
	if p.Blocks > 1 {
		d.Block = &analyze.Column{Name: p.BlockName, Values: obs.Blocks}
	}
	if nw := p.WholePlotFactors; nw > 1 || len(p.Factors)-nw > 1 {
		// Factorial treatments within a stratum: split them into their
		// main effects and interactions.
		for i, f := range p.Factors {
			c := analyze.Column{Name: f.Name, Levels: f.Levels, Values: obs.Levels[i]}
			if i < nw {
				d.WholeFactors = append(d.WholeFactors, c)
			} else {
				d.SubFactors = append(d.SubFactors, c)
			}
		}
	}
	cells, err := analyze.SplitPlotCellMeans(d)
	if err != nil {
		return a, err
	}
	a.CellMeans = cells
	a.wholeName, a.subName = d.Whole.Name, d.Sub.Name
	checks := analyze.SplitPlotChecks(d, alpha)
	a.Checks = &checks
	if a.Missing == 0 {
		res, err := analyze.SplitPlotANOVA(d)
		if err == nil {
			if a.Comparisons, err = analyze.SplitPlotTukey(d, res, alpha); err != nil {
				return a, err
			}
			a.SplitPlot = res
			a.Method = fmt.Sprintf("the classical two-stratum ANOVA of a balanced split plot (every %s complete)", p.MainPlotWord())
			return a, nil
		}
		if !errors.Is(err, analyze.ErrUnbalanced) {
			return a, err
		}
	}
	res, err := analyze.SplitPlotREML(d)
	if err != nil {
		return a, err
	}
	a.REML = res
	a.Method = fmt.Sprintf("%d sub-plot value(s) are missing, so the two-stratum ANOVA (which needs every sub-plot) does not apply: a linear mixed model fitted by REML, %s fixed, %s random, F tests with %s df",
		a.Missing, fixedTerms(d), design.Plural(p.MainPlotWord()), res.DFName)
	return a, nil
}

func fixedTerms(d analyze.SplitPlot) string {
	t := d.Whole.Name + ", " + d.Sub.Name + " and their interaction"
	if d.Block != nil {
		t = d.Block.Name + ", " + t
	}
	return t
}

// treatmentName names the factors of one stratum: the factor's name, or
// the names joined by " × " for a factorial.
func treatmentName(fs []design.Factor) string {
	var n []string
	for _, f := range fs {
		n = append(n, f.Name)
	}
	return strings.Join(n, " × ")
}
