package workbook

import (
	"strconv"
	"strings"

	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/design"
)

// mainPlotHeader is the Entry heading of a split plot's main-plot column:
// the whole-plot name, capitalised ("Chamber", "Main plot").
func mainPlotHeader(p design.Plan) string {
	n := p.MainPlotWord()
	return strings.ToUpper(n[:1]) + n[1:]
}

// StrataObservations holds one response of a split plot or Latin square
// for analysis: for each unit with a value, its factor levels and the
// strata it belongs to, read back from the workbook's verified layout (the
// Entry sheet's design cells are checked against it by Read).
type StrataObservations struct {
	Observations
	// MainPlots holds each observation's main plot number (split plot).
	MainPlots []string
	// Whole and Sub hold each observation's whole-plot and sub-plot
	// treatment (the factor levels joined by " × "; one factor's level
	// when there is one).
	Whole, Sub []string
	// Rows, Cols and Squares place each observation of a Latin plan;
	// Treatments holds its treatment name.
	Rows, Cols, Squares, Treatments []string
	// Total is the number of units of the plan (with and without values).
	Total int
}

// StrataObservations collects the non-missing values of response r of a
// split-plot or Latin workbook. It panics for a sealed workbook or another
// design.
func (fl *Filled) StrataObservations(r int) StrataObservations {
	p := fl.Layout.Plan
	if !p.Strata() {
		panic("workbook: StrataObservations of a " + string(p.Design) + " plan")
	}
	o := StrataObservations{Observations: fl.Observations(r), Total: len(fl.Layout.Units)}
	tr := p.Treatments()
	var blocks []string
	for i, u := range fl.Layout.Units {
		if fl.Values[r][i].Missing {
			continue
		}
		levels := tr[u.Treatment].Levels
		if p.Blocks > 1 {
			blocks = append(blocks, p.BlockLabel(u.Block))
		}
		switch p.Design {
		case design.SplitPlot:
			o.MainPlots = append(o.MainPlots, strconv.Itoa(u.MainPlot))
			o.Whole = append(o.Whole, strings.Join(levels[:p.WholePlotFactors], " × "))
			o.Sub = append(o.Sub, strings.Join(levels[p.WholePlotFactors:], " × "))
		case design.Latin:
			o.Rows = append(o.Rows, strconv.Itoa(u.Row))
			o.Cols = append(o.Cols, strconv.Itoa(u.Col))
			o.Squares = append(o.Squares, p.BlockLabel(u.Block))
			o.Treatments = append(o.Treatments, tr[u.Treatment].Name)
		}
	}
	if p.Blocks > 1 {
		o.Blocks = column.Code(blocks)
	}
	return o
}

// WholeLevels and SubLevels return the whole-plot and sub-plot treatments
// of a split plot in plan order, named as StrataObservations names them.
func WholeLevels(p design.Plan) []string { return comboNames(p.Factors[:p.WholePlotFactors]) }

// SubLevels: see WholeLevels.
func SubLevels(p design.Plan) []string { return comboNames(p.Factors[p.WholePlotFactors:]) }

func comboNames(fs []design.Factor) []string {
	var out []string
	for _, t := range (design.Plan{Factors: fs}).Treatments() {
		out = append(out, t.Name)
	}
	return out
}

// TreatmentLevels returns the plan's treatment names in plan order.
func TreatmentLevels(p design.Plan) []string { return comboNames(p.Factors) }
