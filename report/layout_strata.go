package report

import (
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design"
)

// strataLayoutText writes the summary of a split plot (each main plot with
// its whole-plot treatment and its sub-plots) or a Latin square (each square
// as its grid).
func strataLayoutText(w io.Writer, l design.Layout) error {
	p := l.Plan
	var b strings.Builder
	tr := p.Treatments()
	fmt.Fprintf(&b, "Layout: %s\n", p.Title)
	factors := func(fs []design.Factor) string {
		var out []string
		for _, f := range fs {
			out = append(out, f.Name+": "+strings.Join(f.Levels, ", "))
		}
		return strings.Join(out, "; ")
	}
	var rows [][2]string
	if p.Design == design.SplitPlot {
		kind := p.DesignName()
		if p.Blocks > 1 {
			kind += ", " + plural(p.Blocks, p.BlockName, design.Plural(p.BlockName))
		}
		mp, mps := p.MainPlotWord(), design.Plural(p.MainPlotWord())
		rows = [][2]string{
			{"design", kind},
			{"whole plot", fmt.Sprintf("%s (%d treatments, one per %s)", factors(p.Factors[:p.WholePlotFactors]), p.WholePlotTreatments(), mp)},
			{"sub plot", fmt.Sprintf("%s (%d treatments, each once in every %s)", factors(p.Factors[p.WholePlotFactors:]), p.SubPlotTreatments(), mp)},
			{mps, fmt.Sprintf("%d (%d of each whole-plot treatment%s)", p.MainPlotsPerBlock()*p.Blocks, p.Reps[0], map[bool]string{true: " in each " + p.BlockName}[p.Blocks > 1])},
			{"units", fmt.Sprintf("%d sub-plots", p.NumUnits())},
		}
	} else {
		t := p.NumTreatments()
		rows = [][2]string{
			{"design", fmt.Sprintf("%s, %d × %d (rows and columns are the two blocking directions)", p.DesignName(), t, t)},
			{"treatments", fmt.Sprintf("%d (%s)", t, factors(p.Factors))},
			{"units", fmt.Sprintf("%d (each treatment once in every row and column)", p.NumUnits())},
		}
	}
	rows = append(rows, [2]string{"seed", fmt.Sprintf("%d (generator %s, %s)", p.Seed, p.Generator, map[bool]string{true: "step 9", false: "step 10"}[p.Design == design.SplitPlot])},
		[2]string{"fingerprint", p.Fingerprint()})
	width := 0
	for _, r := range rows {
		width = max(width, len(r[0]))
	}
	for _, r := range rows {
		fmt.Fprintf(&b, "  %-*s %s\n", max(width, 12), r[0], r[1])
	}
	if len(l.Units) > MaxMapUnits {
		fmt.Fprintf(&b, "\nMap: %d units are too many to print here; see the workbook's Map sheet.\n", len(l.Units))
		_, err := io.WriteString(w, b.String())
		return err
	}
	labels := p.BlockLabels()
	order := func(u design.Unit) string {
		if u.Order > 0 {
			return fmt.Sprintf(" #%d", u.Order)
		}
		return ""
	}
	if p.Design == design.SplitPlot {
		nb := p.SubPlotTreatments()
		fmt.Fprintf(&b, "\nMain plots: each %s with its whole-plot treatment, then position → unit ID and sub-plot treatment\n", p.MainPlotWord())
		for i := 0; i < len(l.Units); i += nb {
			u0 := l.Units[i]
			if p.Blocks > 1 && (i == 0 || l.Units[i-1].Block != u0.Block) {
				fmt.Fprintf(&b, "  %s %s\n", p.BlockName, labels[u0.Block-1])
			}
			whole := strings.Join(tr[u0.Treatment].Levels[:p.WholePlotFactors], " × ")
			fmt.Fprintf(&b, "    %s %-4d %-12s", p.MainPlotWord(), u0.MainPlot, whole)
			for _, u := range l.Units[i : i+nb] {
				fmt.Fprintf(&b, "  %d→%s %s%s", u.Position, u.ID, strings.Join(tr[u.Treatment].Levels[p.WholePlotFactors:], " × "), order(u))
			}
			b.WriteString("\n")
		}
	} else {
		t := p.NumTreatments()
		fmt.Fprintf(&b, "\nMap: each %s as its %d × %d grid, rows down and columns across; unit ID and treatment\n", p.BlockName, t, t)
		for s := 0; s < p.Blocks; s++ {
			tb := table{head: []string{p.BlockName + " " + labels[s]}}
			for c := 1; c <= t; c++ {
				tb.head = append(tb.head, fmt.Sprintf("col %d", c))
			}
			tb.right = make([]bool, t+1)
			for r := 0; r < t; r++ {
				row := []string{fmt.Sprintf("row %d", r+1)}
				for _, u := range l.Units[s*t*t+r*t : s*t*t+(r+1)*t] {
					row = append(row, u.ID+" "+tr[u.Treatment].Name+order(u))
				}
				tb.rows = append(tb.rows, row)
			}
			if s > 0 {
				b.WriteString("\n")
			}
			b.WriteString(tb.text("  "))
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}
