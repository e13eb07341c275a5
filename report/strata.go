package report

import (
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
)

// StrataAnalysis is the analysis of one response of a split plot (the
// two-stratum ANOVA, or a mixed model fitted by REML when sub-plots are
// missing) or of a Latin square (or a series of squares).
type StrataAnalysis struct {
	Response string `json:"response"`
	// Design names the design in words (design.Plan.DesignName).
	Design string `json:"design"`
	// Method says which analysis was run and why.
	Method    string                   `json:"method"`
	SplitPlot *analyze.SplitPlotResult `json:"split_plot,omitempty"`
	REML      *analyze.REMLResult      `json:"mixed_model,omitempty"`
	Latin     *analyze.LatinResult     `json:"latin,omitempty"`
	// Comparisons are the Tukey HSD comparisons of a balanced split plot,
	// each with its stratum's error (analyze.SplitPlotTukey).
	Comparisons []*analyze.PostHoc `json:"comparisons,omitempty"`
	// CellMeans are the raw means of the whole-plot × sub-plot cells of a
	// split plot (for the interaction plot); TreatmentMeans the treatment
	// means of a Latin square, with SEs and 95% intervals when the squares
	// are complete (analyze.LatinMeans).
	CellMeans      []analyze.Cell  `json:"cell_means,omitempty"`
	TreatmentMeans []analyze.Group `json:"treatment_means,omitempty"`
	// Checks are the residual checks (analyze.LatinChecks, or
	// analyze.SplitPlotChecks on the sub-plot residuals).
	Checks *analyze.Assumptions `json:"assumptions,omitempty"`
	// MainPlot is what a main plot is called (chamber, cage).
	MainPlot  string  `json:"main_plot_name,omitempty"`
	Missing   int     `json:"missing"`
	Alpha     float64 `json:"alpha"`
	Simulated bool    `json:"simulated,omitempty"`
	// wholeName and subName name a split plot's two treatment factors.
	wholeName, subName string
}

// strataSection is a titled table with notes below it.
type strataSection struct {
	title string
	tb    table
	notes []string
}

func (a StrataAnalysis) sections() []strataSection {
	var out []strataSection
	switch {
	case a.SplitPlot != nil:
		r := a.SplitPlot
		tb := table{head: []string{"stratum", "source of variation", "df", "SS", "MS", "F", "p", "F formed with"}, right: []bool{false, false, true, true, true, true, true, false}}
		for _, t := range r.Terms {
			row := []string{t.Stratum, t.Source, fmt.Sprint(t.DF), num(t.SS, 5), num(t.MS, 5), "", "", ""}
			if !t.IsError {
				row[5], row[6], row[7] = num(t.F, 4), pval(t.P), t.Error
			}
			tb.rows = append(tb.rows, row)
		}
		out = append(out, strataSection{title: "Two-stratum analysis of variance: " + a.Response, tb: tb, notes: []string{
			fmt.Sprintf("%s is tested against error (a), the variation between %s treated alike (MS %s on %d df); %s and the interaction against error (b), the variation between sub-plots within %s (MS %s on %d df).",
				r.Whole, plural2(a.MainPlot), num(r.MSa, 5), r.DFa, r.Sub, plural2(a.MainPlot), num(r.MSb, 5), r.DFb),
			fmt.Sprintf("For comparison only: treating every sub-plot as randomised on its own would test %s against the pooled residual and give p %s. That test is wrong for this design: the %s, not the sub-plots, were randomised to %s.",
				r.Whole, pvalPhrase(r.NaiveWholeP), plural2(a.MainPlot), r.Whole),
		}})
		se := table{head: []string{"difference between", "SE of the difference", "df"}, right: []bool{false, true, true}}
		for _, d := range r.Diffs {
			df := fmt.Sprint(int(d.DF))
			if d.Satterthwaite {
				df = fixed(d.DF, 1) + " (Satterthwaite)"
			}
			se.rows = append(se.rows, []string{d.Kind, num(d.SE, 4), df})
		}
		out = append(out, strataSection{title: "Standard errors of differences between means", tb: se, notes: []string{
			"Each kind of comparison has its own error: use its SE and df for a t test or a least significant difference (t at the df times the SE). The last combines both errors, with Satterthwaite's df (Gomez and Gomez 1984, Table 3.8).",
		}})
		for _, ph := range a.Comparisons {
			title := "Means of " + ph.Term
			if ph.Within != "" {
				title += " within " + ph.Within
			}
			out = append(out, strataSection{title: title, tb: levelMeansTable(ph.Groups)},
				strataSection{title: postHocTitle(ph), tb: pairTable(ph)})
		}
		if len(a.Comparisons) > 0 {
			out[len(out)-1].notes = []string{fmt.Sprintf("Each set of comparisons uses its own error: %s means error (a), %s means and %s means within a %s level error (b). Two %s means at one %s level combine both errors; compare them with the SE table above (Satterthwaite df).",
				r.Whole, r.Sub, r.Sub, r.Whole, r.Whole, r.Sub)}
		}
	case a.REML != nil:
		r := a.REML
		tb := table{head: []string{"source of variation", "df", "denominator df", "F", "p"}, right: []bool{false, true, true, true, true}}
		for _, t := range r.Terms {
			tb.rows = append(tb.rows, []string{t.Source, fmt.Sprint(t.DF), fixed(t.DDF, 1), num(t.F, 4), pval(t.P)})
		}
		vc := table{head: []string{"variance component", "estimate"}, right: []bool{false, true}}
		vc.rows = [][]string{{"between " + plural2(a.MainPlot), num(r.SigmaM2, 5)}, {"between sub-plots within " + plural2(a.MainPlot) + " (residual)", num(r.SigmaE2, 5)}}
		notes := []string{fmt.Sprintf("F tests of the fixed effects with %s denominator df; %d observations; REML log-likelihood %s.", r.DFName, r.N, num(r.LogLik, 6))}
		notes = append(notes, r.Notes...)
		out = append(out,
			strataSection{title: "Mixed model (REML, " + a.MainPlot + " random): " + a.Response, tb: tb, notes: notes},
			strataSection{title: "Variance components", tb: vc})
		if len(a.CellMeans) > 0 {
			var gs []analyze.Group
			for _, c := range a.CellMeans {
				gs = append(gs, c.Group)
			}
			out = append(out, strataSection{title: "Cell means (raw)", tb: levelMeansTable(gs), notes: []string{
				"Raw means of the cells that were measured: with sub-plots missing they are not adjusted for the main plots the values came from; the F tests above are."}})
		}
	case a.Latin != nil:
		r := a.Latin
		tb := table{head: []string{"source of variation", "df", "SS", "MS", "F", "p"}, right: []bool{false, true, true, true, true, true}}
		for _, t := range r.Terms {
			tb.rows = append(tb.rows, []string{t.Source, fmt.Sprint(t.DF), num(t.SS, 5), num(t.MS, 5), num(t.F, 4), pval(t.P)})
		}
		tb.rows = append(tb.rows, []string{"residual", fmt.Sprint(r.Residual.DF), num(r.Residual.SS, 5), num(r.Residual.MS, 5), "", ""})
		var notes []string
		if r.Missing > 0 {
			notes = append(notes, fmt.Sprintf("%d cell(s) of the square(s) have no value: each term's SS is the increase in the residual SS when it is left out of the full least-squares fit, with the df it loses, so the tests stay exact for the data there are.", r.Missing))
		}
		notes = append(notes, "Rows and columns remove the two gradients they stand for; every term is tested against the residual mean square.")
		out = append(out, strataSection{title: "Analysis of variance, " + a.Design + ": " + a.Response, tb: tb, notes: notes})
		if gs := a.TreatmentMeans; len(gs) > 0 {
			title := "Means of " + gs[0].Term
			switch {
			case math.IsNaN(gs[0].LSMean):
				out = append(out, strataSection{title: title + " (raw)", tb: levelMeansTable(gs), notes: []string{
					"Raw means: with cells missing they are not adjusted for the rows and columns those cells leave unbalanced; the F test above is."}})
			case r.Missing > 0:
				tm := table{head: []string{"level", "n", "mean", "SD", "LS mean", "SE", "95% CI"}, right: []bool{false, true, true, true, true, true, true}}
				for _, g := range gs {
					tm.rows = append(tm.rows, []string{g.Level, fmt.Sprint(g.N), num(g.Mean, 5), num(g.SD, 4), num(g.LSMean, 5), num(g.SE, 4), num(g.Lower, 5) + " to " + num(g.Upper, 5)})
				}
				out = append(out, strataSection{title: title, tb: tm, notes: []string{
					fmt.Sprintf("With cells missing the raw means would be biased by which rows and columns lost them: the LS means are the additive model's predictions averaged over the rows and columns with equal weights; SEs and intervals use the residual mean square (df %d).", r.Residual.DF)}})
			default:
				tm := table{head: []string{"level", "n", "mean", "SD", "SE", "95% CI"}, right: []bool{false, true, true, true, true, true}}
				for _, g := range gs {
					tm.rows = append(tm.rows, []string{g.Level, fmt.Sprint(g.N), num(g.Mean, 5), num(g.SD, 4), num(g.SE, 4), num(g.Lower, 5) + " to " + num(g.Upper, 5)})
				}
				out = append(out, strataSection{title: title, tb: tm, notes: []string{
					fmt.Sprintf("In complete squares every treatment meets every row and column equally often, so these means are adjusted for both; SEs and intervals use the residual mean square (df %d).", r.Residual.DF)}})
			}
		}
		for _, ph := range a.Comparisons {
			out = append(out, strataSection{title: postHocTitle(ph), tb: pairTable(ph), notes: []string{"Family: " + ph.Family + ". Error rate controlled: " + ph.ErrorRate + ". p-values are adjusted for the family; the residual mean square and df are the table's."}})
		}
	}
	if c := a.Checks; c != nil {
		sec := strataSection{title: "Checks of the residuals", notes: append([]string{"Checked on the " + c.Basis + "."}, c.Verdicts...)}
		if len(c.Outliers) > 0 {
			sec.tb = outlierTable(c.Outliers)
		}
		out = append(out, sec)
	}
	return out
}

func plural2(word string) string {
	if word == "" {
		word = "main plot"
	}
	return design.Plural(word)
}

// cautions are the warnings under every strata analysis.
func (a StrataAnalysis) cautions() []string {
	c := []string{"The p-values assume normally distributed errors with equal variances within each stratum, and that the randomisation was carried out as planned; check the residuals, and ask a qualified statistician before drawing conclusions that matter."}
	if a.Missing > 0 {
		c = append(c, fmt.Sprintf("%d unit(s) had no value; if losses depend on the treatment, the comparison is biased.", a.Missing))
	}
	if a.Simulated {
		c = append(c, "These data are SIMULATED by allot's demo, not measurements.")
	}
	return c
}

// StrataText writes a split-plot or Latin-square analysis as aligned text.
func StrataText(w io.Writer, a StrataAnalysis) error {
	var b strings.Builder
	fmt.Fprintf(&b, "Design: %s\n", a.Design)
	b.WriteString(wrap("Method: "+a.Method, 78, ""))
	for _, s := range a.sections() {
		b.WriteString("\n" + s.title + "\n")
		if len(s.tb.head) > 0 {
			b.WriteString(s.tb.text("  "))
		}
		for _, n := range s.notes {
			b.WriteString(wrap(n, 78, "  "))
		}
	}
	b.WriteString("\nCautions\n")
	for _, c := range a.cautions() {
		b.WriteString(wrap(c, 78, "  "))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// StrataMarkdown writes a split-plot or Latin-square analysis as Markdown.
func StrataMarkdown(w io.Writer, a StrataAnalysis) error {
	var b strings.Builder
	fmt.Fprintf(&b, "## %s\n\n*Design:* %s\n\n*Method:* %s\n", escapeMD([]string{a.Response})[0], escapeMD([]string{a.Design})[0], escapeMD([]string{a.Method})[0])
	for _, s := range a.sections() {
		fmt.Fprintf(&b, "\n### %s\n\n", escapeMD([]string{s.title})[0])
		if len(s.tb.head) > 0 {
			b.WriteString(s.tb.markdown())
		}
		for _, n := range s.notes {
			b.WriteString("\n" + escapeMD([]string{n})[0] + "\n")
		}
	}
	b.WriteString("\n### Cautions\n\n")
	for _, c := range a.cautions() {
		b.WriteString("- " + escapeMD([]string{c})[0] + "\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// StrataFormat names the JSON document format of split-plot and
// Latin-square analyses.
const StrataFormat = "allot.strata-analysis/v1"

// strataDoc is one response of a StrataAnalysesJSON document.
type strataDoc struct {
	StrataAnalysis
	Cautions []string `json:"cautions"`
}

// StrataAnalysesJSON writes one JSON document for a run of split-plot or
// Latin-square analyses: the format name, the program version and one
// object per response (schema/strata-analysis.v1.json).
func StrataAnalysesJSON(w io.Writer, version string, as []StrataAnalysis) error {
	docs := []strataDoc{}
	for _, a := range as {
		docs = append(docs, strataDoc{a, a.cautions()})
	}
	return writeJSON(w, struct {
		Format    string      `json:"format"`
		Version   string      `json:"allot_version,omitempty"`
		Responses []strataDoc `json:"responses"`
	}{StrataFormat, version, docs})
}

// levelMeansTable lists each level's n, mean and SD.
func levelMeansTable(gs []analyze.Group) table {
	tb := table{head: []string{"level", "n", "mean", "SD"}, right: []bool{false, true, true, true}}
	for _, g := range gs {
		tb.rows = append(tb.rows, []string{g.Level, fmt.Sprint(g.N), num(g.Mean, 5), num(g.SD, 4)})
	}
	return tb
}
