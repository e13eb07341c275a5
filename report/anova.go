package report

import (
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
)

// Analysis is everything reported for one response.
type Analysis struct {
	*analyze.Result
	Missing int `json:"missing"`
	// Unit names the experimental unit (pot, plot, animal) for the
	// unit-of-analysis reminder.
	Unit      string `json:"unit"`
	BlockName string `json:"block_name,omitempty"`
	Simulated bool   `json:"simulated,omitempty"`
}

func (a Analysis) anovaTable() table {
	t := a.Table
	tb := table{
		head:  []string{"source of variation", "df", "SS", "MS", "F", "p", "partial η²"},
		right: []bool{false, true, true, true, true, true, true},
	}
	for _, r := range t.Terms {
		tb.rows = append(tb.rows, []string{r.Source, fmt.Sprint(r.DF), num(r.SS, 5), num(r.MS, 5), num(r.F, 4), pval(r.P), fixed(r.PartialEta2, 3)})
	}
	tb.rows = append(tb.rows,
		[]string{"residual", fmt.Sprint(t.Residual.DF), num(t.Residual.SS, 5), num(t.Residual.MS, 5), "", "", ""},
		[]string{"total (corrected)", fmt.Sprint(t.TotalDF), num(t.TotalSS, 5), "", "", "", ""},
	)
	return tb
}

func ssTypeText(k int) string {
	switch k {
	case 1:
		return "Type I (sequential) sums of squares"
	case 2:
		return "Type II sums of squares"
	}
	return "Type III sums of squares, sum-to-zero coding"
}

func (a Analysis) summaryLines() []string {
	t := a.Table
	lines := []string{fmt.Sprintf("n = %d, grand mean %s, residual SD %s, R² %s, CV %s%%",
		t.N, num(t.GrandMean, 5), num(t.ResidSD, 4), fixed(t.R2, 3), num(t.CV, 3))}
	if s := a.Sampling; s != nil {
		per := fmt.Sprint(s.MinPerUnit)
		if s.MaxPerUnit != s.MinPerUnit {
			per = fmt.Sprintf("%d to %d", s.MinPerUnit, s.MaxPerUnit)
		}
		lines = append(lines, fmt.Sprintf("Subsamples: %d measurements on %d units (%s per unit) were averaged to the unit, the unit of analysis; variance between subsamples of a unit %s (df %d).",
			s.Measurements, s.Units, per, num(s.Variance, 4), s.DF))
	}
	if t.RelEfficiency > 0 {
		lines = append(lines, fmt.Sprintf("Relative efficiency of blocking by %s: %s (a completely randomised layout would have needed about %s times as many units for the same precision; Cochran and Cox 1957).",
			a.BlockName, num(t.RelEfficiency, 3), num(t.RelEfficiency, 2)))
	}
	return lines
}

func groupTable(gs []analyze.Group, letters []string) table {
	tb := table{head: []string{"level", "n", "mean", "SD"}, right: []bool{false, true, true, true}}
	if letters != nil {
		tb.head = append(tb.head, "group")
		tb.right = append(tb.right, false)
	}
	for i, g := range gs {
		row := []string{g.Level, fmt.Sprint(g.N), num(g.Mean, 5), num(g.SD, 4)}
		if letters != nil {
			row = append(row, letters[i])
		}
		tb.rows = append(tb.rows, row)
	}
	return tb
}

func pairTable(ph *analyze.PostHoc) table {
	tb := table{head: []string{"comparison", "difference", "lower", "upper", ph.StatName, "p (adjusted)"}, right: []bool{false, true, true, true, true, true}}
	for _, c := range ph.Pairs {
		tb.rows = append(tb.rows, []string{c.Pair, num(c.Diff, 4), num(c.Lower, 4), num(c.Upper, 4), num(c.Q, 4), pval(c.P)})
	}
	return tb
}

func postHocTitle(ph *analyze.PostHoc) string {
	s := fmt.Sprintf("%s comparisons of %s", ph.Method, ph.Term)
	if ph.Within != "" {
		s += " within " + ph.Within
	}
	return fmt.Sprintf("%s: %s%% simultaneous intervals, df %d, critical %s %s", s, short(100*(1-ph.Alpha)), ph.DF, ph.StatName, num(ph.Crit, 4))
}

func letterNote(ph *analyze.PostHoc) string {
	if ph.Letters == nil {
		return ""
	}
	return fmt.Sprintf("Levels sharing a letter in the group column do not differ at α = %s.", short(ph.Alpha))
}

func outlierTable(os []analyze.Outlier) table {
	tb := table{head: []string{"unit", "cell", "value", "residual", "studentized (deleted)"}, right: []bool{false, false, true, true, true}}
	for _, o := range os {
		tb.rows = append(tb.rows, []string{o.Unit, o.Where, o.Value, num(o.Residual, 4), fixed(o.Studentized, 2)})
	}
	return tb
}

// Reading returns the plain-language reading of each treatment term. It does
// not over-claim: a non-significant F is "consistent with equal means", a
// significant one says at least one mean differs.
func (a Analysis) Reading() []string {
	t := a.Table
	var out []string
	for _, r := range t.Terms {
		stat := fmt.Sprintf("F(%d, %d) = %s, p %s", r.DF, t.Residual.DF, num(r.F, 4), pvalPhrase(r.P))
		switch {
		case r.BlockInteraction:
			verdict := "the data are consistent with the same treatment effect in every " + a.BlockName
			if r.P < t.Alpha {
				verdict = "the treatment effect differs between " + design.Plural(a.BlockName) + "; read the treatment comparisons with that in mind"
			}
			out = append(out, fmt.Sprintf("%s: %s (%s).", r.Source, verdict, stat))
		case r.Block:
			out = append(out, fmt.Sprintf("Differences between %s (%s) are taken out of the error; they are not a question the study asks.", design.Plural(r.Source), stat))
		case r.P < t.Alpha:
			what := "the mean " + t.Response + " differs between at least two levels of " + r.Source
			if len(r.Factors) > 1 {
				what = "the effect of one of " + strings.Join(r.Factors, ", ") + " depends on the level of the other(s) (an interaction), so their main effects should be read level by level"
			}
			out = append(out, fmt.Sprintf("%s: at α = %s the data show that %s (%s). The comparisons say which levels differ.", r.Source, short(t.Alpha), what, stat))
		default:
			out = append(out, fmt.Sprintf("%s: at α = %s the data are consistent with equal means (%s). This is not evidence that the means are equal: a difference smaller than the study could detect may exist.", r.Source, short(t.Alpha), stat))
		}
	}
	return out
}

func pvalPhrase(p float64) string {
	if p < 0.0001 {
		return "< 0.0001"
	}
	return "= " + pval(p)
}

// Cautions returns the reminders printed with every analysis.
func (a Analysis) Cautions() []string {
	unit := a.Unit
	if unit == "" {
		unit = "unit"
	}
	c := []string{
		fmt.Sprintf("Unit of analysis: each %s that was randomised to a treatment is one observation; measurements repeated on the same %s are not independent replicates and must be averaged first.", unit, unit),
		"The p-values assume independent units, normally distributed errors and equal variances across treatments; see the checks above.",
	}
	if a.Missing > 0 {
		c = append(c, fmt.Sprintf("%d unit(s) had no value and were left out; if losses depend on the treatment, the comparison is biased.", a.Missing))
	}
	if a.Simulated {
		c = append(c, "These data are SIMULATED by allot's demo, not measurements.")
	}
	return c
}

// AnalysisText writes the analysis as aligned text.
func AnalysisText(w io.Writer, a Analysis) error {
	var b strings.Builder
	t := a.Table
	fmt.Fprintf(&b, "Analysis of variance: %s (%s)\n", t.Response, ssTypeText(t.SSType))
	b.WriteString(a.anovaTable().text("  "))
	for _, l := range a.summaryLines() {
		b.WriteString(wrap(l, 78, "  "))
	}
	for _, ph := range append(append([]*analyze.PostHoc{}, a.PostHoc...), a.Simple...) {
		if ph.Within == "" {
			fmt.Fprintf(&b, "\nMeans of %s\n", ph.Term)
		} else {
			fmt.Fprintf(&b, "\nMeans of %s within %s\n", ph.Term, ph.Within)
		}
		b.WriteString(groupTable(ph.Groups, ph.Letters).text("  "))
		if n := letterNote(ph); n != "" {
			b.WriteString(wrap(n, 78, "  "))
		}
		b.WriteString("\n" + wrap(postHocTitle(ph), 78, ""))
		b.WriteString(pairTable(ph).text("  "))
	}
	for _, n := range a.Notes {
		b.WriteString("\n" + wrap("Note: "+n, 78, ""))
	}
	b.WriteString("\nChecks of the assumptions\n")
	for _, v := range a.Assumptions.Verdicts {
		b.WriteString(wrap(v, 78, "  "))
	}
	if len(a.Assumptions.Outliers) > 0 {
		b.WriteString(outlierTable(a.Assumptions.Outliers).text("  "))
	}
	b.WriteString("\nReading\n")
	for _, r := range a.Reading() {
		b.WriteString(wrap(r, 78, "  "))
	}
	b.WriteString("\nCautions\n")
	for _, c := range a.Cautions() {
		b.WriteString(wrap(c, 78, "  "))
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// PostHocText writes one set of comparisons as aligned text.
func PostHocText(w io.Writer, ph *analyze.PostHoc) error {
	var b strings.Builder
	b.WriteString(wrap(postHocTitle(ph), 78, "  "))
	b.WriteString(pairTable(ph).text("  "))
	_, err := io.WriteString(w, b.String())
	return err
}

// AnalysisMarkdown writes the analysis as Markdown.
func AnalysisMarkdown(w io.Writer, a Analysis) error {
	var b strings.Builder
	t := a.Table
	fmt.Fprintf(&b, "## Analysis of variance: %s\n\n%s.\n\n", t.Response, ssTypeText(t.SSType))
	b.WriteString(a.anovaTable().markdown())
	b.WriteString("\n")
	for _, l := range a.summaryLines() {
		b.WriteString(l + "\n\n")
	}
	for _, ph := range append(append([]*analyze.PostHoc{}, a.PostHoc...), a.Simple...) {
		if ph.Within == "" {
			fmt.Fprintf(&b, "### Means of %s\n\n", ph.Term)
		} else {
			fmt.Fprintf(&b, "### Means of %s within %s\n\n", ph.Term, ph.Within)
		}
		b.WriteString(groupTable(ph.Groups, ph.Letters).markdown())
		if n := letterNote(ph); n != "" {
			b.WriteString("\n" + n + "\n")
		}
		b.WriteString("\n" + postHocTitle(ph) + ".\n\n")
		b.WriteString(pairTable(ph).markdown())
		b.WriteString("\n")
	}
	for _, n := range a.Notes {
		b.WriteString("**Note.** " + n + "\n\n")
	}
	b.WriteString("### Checks of the assumptions\n\n")
	for _, v := range a.Assumptions.Verdicts {
		b.WriteString("- " + v + "\n")
	}
	if len(a.Assumptions.Outliers) > 0 {
		b.WriteString("\n" + outlierTable(a.Assumptions.Outliers).markdown())
	}
	b.WriteString("\n### Reading\n\n")
	for _, r := range a.Reading() {
		b.WriteString("- " + r + "\n")
	}
	b.WriteString("\n### Cautions\n\n")
	for _, c := range a.Cautions() {
		b.WriteString("- " + c + "\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// AnalysisJSON writes the analysis as one JSON object.
func AnalysisJSON(w io.Writer, a Analysis) error {
	t := a.Table
	return writeJSON(w, struct {
		Analysis
		Terms     []analyze.Term   `json:"terms"`
		Residual  analyze.Residual `json:"residual"`
		R2        float64          `json:"r2"`
		ResidSD   float64          `json:"resid_sd"`
		GrandMean float64          `json:"grand_mean"`
		CV        float64          `json:"cv_percent"`
		SSType    int              `json:"ss_type"`
		Reading   []string         `json:"reading"`
		Cautions  []string         `json:"cautions"`
	}{a, t.Terms, t.Residual, t.R2, t.ResidSD, t.GrandMean, t.CV, t.SSType, a.Reading(), a.Cautions()})
}
