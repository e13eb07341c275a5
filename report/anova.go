package report

import (
	"fmt"
	"io"
	"math"
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
		head:  []string{"source of variation", "df", "SS", "MS", "F", "p"},
		right: []bool{false, true, true, true, true, true},
	}
	for _, r := range t.Terms {
		f, p := num(r.F, 4), pval(r.P)
		if t.ExactFit {
			f, p = "undefined", "–"
		}
		tb.rows = append(tb.rows, []string{r.Source, fmt.Sprint(r.DF), ssNum(r.SS, r.SSZero), ssNum(r.MS, r.SSZero), f, p})
	}
	tb.rows = append(tb.rows,
		[]string{"residual", fmt.Sprint(t.Residual.DF), ssNum(t.Residual.SS, t.ExactFit), ssNum(t.Residual.MS, t.ExactFit), "", ""},
		[]string{"total", fmt.Sprint(t.TotalDF), num(t.TotalSS, 5), "", "", ""},
	)
	return tb
}

// shareTable is the effect size of each treatment term in its own small
// table: the share of variation explained (partial η²). Blocks have none.
func (a Analysis) shareTable() (table, bool) {
	tb := table{head: []string{"term", "partial η²"}, right: []bool{false, true}}
	for _, r := range a.Table.Terms {
		if r.Block {
			continue
		}
		tb.rows = append(tb.rows, []string{r.Source, fixed(r.PartialEta2, 3)})
	}
	return tb, len(tb.rows) > 0
}

// ssNum writes a sum of squares, "0 (exact)" when it is exactly zero.
func ssNum(x float64, exact bool) string {
	if exact && x == 0 {
		return "0 (exact)"
	}
	return num(x, 5)
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
	var lines []string
	if s := a.Sampling; s != nil {
		per := fmt.Sprint(s.MinPerUnit)
		if s.MaxPerUnit != s.MinPerUnit {
			per = fmt.Sprintf("%d to %d", s.MinPerUnit, s.MaxPerUnit)
		}
		lines = append(lines, fmt.Sprintf("Subsamples: %d measurements on %d units (%s per unit) were averaged to the unit, the unit of analysis; variance between subsamples of a unit %s (df %d).",
			s.Measurements, s.Units, per, num(s.Variance, 4), s.DF))
	}
	if t.SSExp10 != 0 {
		lines = append(lines, fmt.Sprintf("The values are of order 1e%d: the SS and MS columns are in units of 1e%d (the response unit squared), because the plain squares would underflow or overflow; F, p and every mean, SD and interval are unaffected.", t.SSExp10/2, t.SSExp10))
	}
	for _, r := range t.Terms {
		if r.NotTestable != "" {
			lines = append(lines, fmt.Sprintf("%s: not testable — %s.", r.Source, r.NotTestable))
		}
		if r.ErrorTerm != "" && r.ErrorTerm != "residual" {
			lines = append(lines, fmt.Sprintf("F for %s uses the %s mean square as its error (df %d).", r.Source, r.ErrorTerm, r.ErrorDF))
		}
	}
	if t.RelEfficiency > 0 && !math.IsInf(t.RelEfficiency, 0) {
		lines = append(lines, fmt.Sprintf("Relative efficiency of blocking by %s: %s (a completely randomised layout would have needed about %s times as many units for the same precision; Cochran and Cox 1957).",
			a.BlockName, num(t.RelEfficiency, 3), num(t.RelEfficiency, 2)))
	}
	return lines
}

// fitTable is the fit of the model as a labelled block: the units
// analysed, the mean of all values, the residual SD, the share of the
// variation the model explains and, where the trade expects it (field and
// greenhouse trials), the coefficient of variation in words.
func (a Analysis) fitTable() table {
	t := a.Table
	tb := table{head: []string{"fit of the model", ""}, right: []bool{false, true}}
	tb.rows = [][]string{
		{"variation explained (R²)", fixed(t.R2, 3)},
		{"residual SD", num(t.ResidSD, 4)},
		{"mean of all values", num(t.GrandMean, 5)},
		{"units analysed", fmt.Sprint(t.N)},
	}
	if (plantUnit(a.Unit) || plantUnit(a.BlockName)) && !math.IsInf(t.CV, 0) && !math.IsNaN(t.CV) {
		tb.rows = append(tb.rows, []string{"coefficient of variation", num(t.CV, 3) + "% of the mean"})
	}
	return tb
}

// plantUnit reports whether the experimental unit is one of a field or
// greenhouse trial, where the coefficient of variation is customary.
func plantUnit(u string) bool {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "pot", "pots", "plot", "plots", "plant", "plants", "tray", "trays", "bed", "beds", "row", "rows", "tree", "trees",
		"flat", "flats", "seedling", "seedlings", "strip", "strips", "bench", "benches", "container", "containers", "field", "fields":
		return true
	}
	return false
}

// fitSentence is the fit in the reading's words: the share of variation
// explained and the residual SD, as a percentage of the mean where that
// means something.
func (a Analysis) fitSentence() string {
	t := a.Table
	if t.ExactFit {
		return ""
	}
	s := fmt.Sprintf("The model explains %s%% of the variation in %s; the residual SD is %s", num(100*t.R2, 3), t.Response, num(t.ResidSD, 4))
	if t.GrandMean != 0 && !math.IsInf(t.CV, 0) && !math.IsNaN(t.CV) && t.GrandMean > 0 {
		s += fmt.Sprintf(", %s%% of the mean", num(t.CV, 3))
	}
	return s + "."
}

// meansTable is the means table of one term: n, raw mean, SD, LS mean,
// its SE and 95% confidence interval, and the letters when given.
func meansTable(gs []analyze.Group, letters []string) table {
	tb := table{head: []string{"level", "n", "mean", "SD", "LS mean", "SE", "95% CI"}, right: []bool{false, true, true, true, true, true, false}}
	if letters != nil {
		tb.head = append(tb.head, "letters")
		tb.right = append(tb.right, false)
	}
	for i, g := range gs {
		row := []string{g.Level, fmt.Sprint(g.N), num(g.Mean, 5), num(g.SD, 4), num(g.LSMean, 5), num(g.SE, 4), num(g.Lower, 5) + " to " + num(g.Upper, 5)}
		if letters != nil {
			row = append(row, letters[i])
		}
		tb.rows = append(tb.rows, row)
	}
	return tb
}

func pairTable(ph *analyze.PostHoc) table {
	tb := table{head: []string{"comparison", "difference [interval]", ph.StatName, "p (adjusted)"}, right: []bool{false, true, true, true}}
	for _, c := range ph.Pairs {
		tb.rows = append(tb.rows, []string{c.Pair, interval(c.Diff, c.Lower, c.Upper, 4), num(c.Q, 4), pval(c.P)})
	}
	return tb
}

func postHocTitle(ph *analyze.PostHoc) string {
	s := fmt.Sprintf("%s comparisons of %s", ph.Method, ph.Term)
	if ph.Within != "" {
		s += " within " + ph.Within
	}
	return fmt.Sprintf("%s: %s, df %d, critical %s %s", s, ph.Intervals, ph.DF, ph.StatName, num(ph.Crit, 4))
}

// postHocLines states the family, the error rate and the notes of a set
// of comparisons.
func postHocLines(ph *analyze.PostHoc) []string {
	var out []string
	if ph.Family != "" {
		out = append(out, fmt.Sprintf("Family: %s. Error rate controlled: %s. p-values are adjusted for the family.", ph.Family, ph.ErrorRate))
	}
	if ph.ErrorBound > 0 {
		out = append(out, fmt.Sprintf("p-values are within ±%.1g (randomised quasi-Monte-Carlo error bound).", ph.ErrorBound))
	}
	return append(out, ph.Notes...)
}

func letterNote(ph *analyze.PostHoc) string {
	if ph.Letters == nil {
		return ""
	}
	return fmt.Sprintf("Letters: levels with a letter in common are not significantly different at α = %s; that is not evidence that they are equal.", short(ph.Alpha))
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
	if t.ExactFit {
		return []string{"No F test can be read: the residual variation is exactly zero, so every F is undefined (0/0 or a difference divided by nothing). The data neither show nor rule out differences; see the note above."}
	}
	for _, r := range t.Terms {
		edf := t.Residual.DF
		if r.ErrorDF > 0 {
			edf = r.ErrorDF
		}
		stat := fmt.Sprintf("F(%d, %d) = %s, p %s", r.DF, edf, num(r.F, 4), pvalPhrase(r.P))
		if r.SSZero {
			stat = fmt.Sprintf("SS exactly 0, F(%d, %d) = 0, p = 1", r.DF, edf)
		}
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

// block is one part of a rendered analysis: a heading, paragraphs and an
// optional table.
type block struct {
	title string
	lines []string
	tab   *table
	// bullets renders lines as a list (Markdown, HTML).
	bullets bool
}

// blocks lays out the analysis in reading order: model, ANOVA, means,
// simple effects, comparisons, trends, losses, notes, checks, reading,
// cautions.
func (a Analysis) blocks() []block {
	t := a.Table
	var out []block
	anova := a.anovaTable()
	head := []string{ssTypeText(t.SSType) + "."}
	if a.Model != "" {
		head = append(head, a.Model)
	}
	out = append(out, block{title: "Analysis of variance: " + t.Response, lines: head, tab: &anova})
	if st, ok := a.shareTable(); ok {
		out = append(out, block{lines: []string{"Share of variation explained (partial η²):"}, tab: &st})
	}
	ft := a.fitTable()
	out = append(out, block{tab: &ft})
	if l := a.summaryLines(); len(l) > 0 {
		out = append(out, block{lines: l})
	}
	letters := map[string][]string{}
	for _, ph := range a.PostHoc {
		if ph.Letters != nil {
			letters[ph.Term] = ph.Letters
		}
	}
	for _, gs := range a.Groups {
		if len(gs) == 0 {
			continue
		}
		mt := meansTable(gs, letters[gs[0].Term])
		b := block{title: "Means of " + gs[0].Term, tab: &mt}
		for _, ph := range a.PostHoc {
			if ph.Term == gs[0].Term {
				if n := letterNote(ph); n != "" {
					b.lines = append(b.lines, n)
				}
			}
		}
		b.lines = append(b.lines, fmt.Sprintf("95%% confidence intervals of the LS means use the model's error (df %d).", t.Residual.DF))
		out = append(out, b)
	}
	for _, ph := range a.Simple {
		mt := meansTable(ph.Groups, ph.Letters)
		out = append(out, block{title: fmt.Sprintf("Simple effects: %s within %s", ph.Term, ph.Within), tab: &mt, lines: nonEmpty(letterNote(ph))})
		pt := pairTable(ph)
		out = append(out, block{lines: append([]string{postHocTitle(ph)}, postHocLines(ph)...), tab: &pt})
	}
	for _, ph := range a.PostHoc {
		pt := pairTable(ph)
		out = append(out, block{title: fmt.Sprintf("Which levels of %s differ (%s)", ph.Term, ph.Method), lines: append([]string{postHocTitle(ph)}, postHocLines(ph)...), tab: &pt})
	}
	for _, tr := range a.Trends {
		tt := trendTable(tr)
		out = append(out, block{title: "Trend contrasts of " + tr.Term, lines: []string{tr.Note}, tab: &tt})
	}
	if l := a.Losses; l != nil {
		lt := lossTable(l)
		b := block{title: "Units enrolled, lost, excluded and analysed", tab: &lt}
		for _, r := range l.Rows {
			for _, why := range r.Reasons {
				b.lines = append(b.lines, r.Treatment+" — "+why)
			}
		}
		if l.Test != nil {
			b.lines = append(b.lines, fmt.Sprintf("%s: χ² = %s, df %d, p %s.", l.Test.Name, num(l.Test.Chi2, 3), l.Test.DF, pvalPhrase(l.Test.P)))
		}
		if l.Warning != "" {
			b.lines = append(b.lines, "Warning: "+l.Warning)
		}
		b.bullets = true
		out = append(out, b)
	}
	if len(a.Notes) > 0 {
		out = append(out, block{title: "Notes", lines: a.Notes, bullets: true})
	}
	chk := block{title: "Checks of the assumptions", lines: a.Assumptions.Verdicts, bullets: true}
	if a.Assumptions.Basis != "" && a.Assumptions.Basis != "residuals" {
		chk.lines = append([]string{"Normality and equal variances were checked on " + a.Assumptions.Basis + "."}, chk.lines...)
	}
	if len(a.Assumptions.Outliers) > 0 {
		ot := outlierTable(a.Assumptions.Outliers)
		chk.tab = &ot
	}
	out = append(out, chk)
	out = append(out, block{title: "Reading", lines: append(a.Reading(), nonEmpty(a.fitSentence())...), bullets: true})
	out = append(out, block{title: "Cautions", lines: a.Cautions(), bullets: true})
	return out
}

func nonEmpty(s string) []string {
	if s == "" {
		return nil
	}
	return []string{s}
}

func trendTable(tr *analyze.Trend) table {
	tb := table{head: []string{"degree", "coefficients", "estimate", "SE", "t", "p"}, right: []bool{false, false, true, true, true, true}}
	for _, r := range tr.Rows {
		var cs []string
		for _, c := range r.Coef {
			cs = append(cs, fixed(c, 3))
		}
		tb.rows = append(tb.rows, []string{r.Name, strings.Join(cs, " "), num(r.Estimate, 4), num(r.SE, 4), num(r.T, 4), pval(r.P)})
	}
	return tb
}

func lossTable(l *analyze.Losses) table {
	tb := table{head: []string{"treatment", "enrolled", "lost", "excluded", "analysed"}, right: []bool{false, true, true, true, true}}
	for _, r := range l.Rows {
		tb.rows = append(tb.rows, []string{r.Treatment, fmt.Sprint(r.Enrolled), fmt.Sprint(r.Lost), fmt.Sprint(r.Excluded), fmt.Sprint(r.Analysed)})
	}
	return tb
}

// AnalysisText writes the analysis as aligned text.
func AnalysisText(w io.Writer, a Analysis) error {
	var b strings.Builder
	for i, bl := range a.blocks() {
		if bl.title != "" {
			if i > 0 {
				b.WriteString("\n")
			}
			b.WriteString(bl.title + "\n")
		}
		indent := "  "
		if bl.title == "" && i > 0 && bl.tab != nil {
			b.WriteString("\n")
		}
		for _, l := range bl.lines {
			b.WriteString(wrap(l, 78, indent))
		}
		if bl.tab != nil {
			b.WriteString(bl.tab.text("  "))
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// AnalysisMarkdown writes the analysis as Markdown.
func AnalysisMarkdown(w io.Writer, a Analysis) error {
	var b strings.Builder
	for i, bl := range a.blocks() {
		if bl.title != "" {
			level := "###"
			if i == 0 {
				level = "##"
			}
			b.WriteString(level + " " + bl.title + "\n\n")
		}
		for _, l := range bl.lines {
			if bl.bullets {
				b.WriteString("- " + l + "\n")
			} else {
				b.WriteString(l + "\n\n")
			}
		}
		if bl.bullets && len(bl.lines) > 0 {
			b.WriteString("\n")
		}
		if bl.tab != nil {
			b.WriteString(bl.tab.markdown())
			b.WriteString("\n")
		}
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

// AnalysisFormat names the JSON document format of analyses.
const AnalysisFormat = "allot.analysis/v1"

// analysisDoc is the JSON of one response: each field once.
type analysisDoc struct {
	Response    string              `json:"response"`
	Model       string              `json:"model"`
	Anova       *analyze.Table      `json:"anova"`
	Means       []analyze.Group     `json:"means"`
	Cells       []analyze.Cell      `json:"cells,omitempty"`
	Simple      []*analyze.PostHoc  `json:"simple_effects,omitempty"`
	Comparisons []*analyze.PostHoc  `json:"comparisons"`
	Trends      []*analyze.Trend    `json:"trends,omitempty"`
	Subsampling *analyze.Sampling   `json:"subsampling,omitempty"`
	Losses      *analyze.Losses     `json:"losses,omitempty"`
	Assumptions analyze.Assumptions `json:"assumptions"`
	Undefined   bool                `json:"f_undefined,omitempty"`
	Notes       []string            `json:"notes,omitempty"`
	Missing     int                 `json:"missing"`
	Unit        string              `json:"unit"`
	BlockName   string              `json:"block_name,omitempty"`
	Simulated   bool                `json:"simulated,omitempty"`
	Reading     []string            `json:"reading"`
	Cautions    []string            `json:"cautions"`
}

func (a Analysis) doc() analysisDoc {
	d := analysisDoc{Response: a.Table.Response, Model: a.Model, Anova: a.Table, Cells: a.Cells, Simple: a.Simple,
		Comparisons: a.PostHoc, Trends: a.Trends, Subsampling: a.Sampling, Losses: a.Losses, Assumptions: a.Assumptions,
		Undefined: a.Undefined, Notes: a.Notes, Missing: a.Missing, Unit: a.Unit, BlockName: a.BlockName, Simulated: a.Simulated,
		Reading: a.Reading(), Cautions: a.Cautions()}
	for _, gs := range a.Groups {
		d.Means = append(d.Means, gs...)
	}
	if d.Comparisons == nil {
		d.Comparisons = []*analyze.PostHoc{}
	}
	for _, ph := range append(append([]*analyze.PostHoc{}, a.Simple...), a.PostHoc...) {
		ph.LetterDisplay = nil
		for i, l := range ph.Letters {
			term := ph.Term
			if i < len(ph.Groups) && ph.Groups[i].Term != "" {
				term = ph.Groups[i].Term
			}
			ph.LetterDisplay = append(ph.LetterDisplay, analyze.LevelLetters{Term: term, Level: ph.Groups[i].Level, Letters: l})
		}
	}
	return d
}

// AnalysesJSON writes one JSON document for a run: the format name, the
// program version and one object per response.
func AnalysesJSON(w io.Writer, version string, as []Analysis) error {
	var docs []analysisDoc
	for _, a := range as {
		docs = append(docs, a.doc())
	}
	return writeJSON(w, struct {
		Format    string        `json:"format"`
		Version   string        `json:"allot_version,omitempty"`
		Responses []analysisDoc `json:"responses"`
	}{AnalysisFormat, version, docs})
}

// AnalysisJSON writes one analysis as a complete document (AnalysesJSON
// with one response).
func AnalysisJSON(w io.Writer, a Analysis) error {
	return AnalysesJSON(w, "", []Analysis{a})
}
