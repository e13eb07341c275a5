package report

import (
	"fmt"
	"io"
	"math"
	"strings"

	"github.com/allotproject/allot/analyze"
)

// Method is the analysis of one response by a method other than the
// least-squares ANOVA: Welch's ANOVA, a rank test, or a GLM. Exactly one of
// the pointers is set.
type Method struct {
	*analyze.MethodResult
	// Unit names the experimental unit (pot, animal).
	Unit      string `json:"unit"`
	Missing   int    `json:"missing"`
	Simulated bool   `json:"simulated,omitempty"`
}

// interval formats an estimate with its interval: "11.1 [−2.19, 24.4]".
func interval(est, lo, hi float64, sig int) string {
	if math.IsNaN(lo) || math.IsNaN(hi) {
		return num(est, sig)
	}
	return fmt.Sprintf("%s [%s, %s]", num(est, sig), num(lo, sig), num(hi, sig))
}

func pairTestTable(head string, stat string, pairs []analyze.PairTest, withDF bool) table {
	tb := table{head: []string{"comparison", head, stat}, right: []bool{false, true, true}}
	if withDF {
		tb.head = append(tb.head, "df")
		tb.right = append(tb.right, true)
	}
	tb.head = append(tb.head, "p (adjusted)")
	tb.right = append(tb.right, true)
	for _, p := range pairs {
		row := []string{p.Pair, interval(p.Estimate, p.Lower, p.Upper, 4), num(p.Stat, 4)}
		if withDF {
			row = append(row, dfNum(p.DF))
		}
		tb.rows = append(tb.rows, append(row, pval(p.P)))
	}
	return tb
}

func summaryTable(gs []analyze.Summary, extra string, vals []float64) table {
	tb := table{head: []string{"treatment", "n", "mean", "SD"}, right: []bool{false, true, true, true}}
	if extra != "" {
		tb.head = append(tb.head, extra)
		tb.right = append(tb.right, true)
	}
	for i, g := range gs {
		row := []string{g.Level, fmt.Sprint(g.N), num(g.Mean, 5), num(g.SD, 4)}
		if extra != "" {
			row = append(row, num(vals[i], 4))
		}
		tb.rows = append(tb.rows, row)
	}
	return tb
}

// section is a heading with paragraphs and tables, rendered as text or
// Markdown.
type section struct {
	title string
	parts []any // string (paragraph) or table
}

func (s section) write(w io.Writer, markdown bool) error {
	var b strings.Builder
	if markdown {
		fmt.Fprintf(&b, "## %s\n\n", s.title)
	} else {
		fmt.Fprintf(&b, "%s\n", s.title)
	}
	for _, p := range s.parts {
		switch v := p.(type) {
		case string:
			if markdown {
				b.WriteString(v + "\n\n")
			} else {
				b.WriteString(wrap(v, DefaultWidth-2, "  "))
			}
		case table:
			if markdown {
				b.WriteString(v.markdown() + "\n")
			} else {
				b.WriteString(v.text("  "))
			}
		}
	}
	if !markdown {
		b.WriteString("\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func (m Method) cautions() []string {
	unit := m.Unit
	if unit == "" {
		unit = "unit"
	}
	c := []string{fmt.Sprintf("Unit of analysis: each %s randomised to a treatment is one observation.", unit)}
	if m.Missing > 0 {
		c = append(c, fmt.Sprintf("%d unit(s) had no value and were left out; if losses depend on the treatment, the comparison is biased.", m.Missing))
	}
	if m.Simulated {
		c = append(c, "These data are SIMULATED (an invented demo scenario): no conclusion about real plants or animals can be drawn from them.")
	}
	c = append(c, "A statistical result supports, and does not replace, the judgement of a qualified statistician and the rules of the institution.")
	return c
}

func (m Method) sections() []section {
	switch {
	case m.Welch != nil:
		return welchSections(m.Welch, m.cautions())
	case m.Rank != nil:
		return rankSections(m.Rank, m.cautions())
	case m.GLM != nil:
		return glmSections(m.GLM, m.cautions())
	}
	return nil
}

func verdict(p, alpha float64) string {
	if p < alpha {
		return fmt.Sprintf("significant at α = %s", short(alpha))
	}
	return fmt.Sprintf("not significant at α = %s", short(alpha))
}

func welchSections(r *analyze.WelchResult, cautions []string) []section {
	test := section{title: fmt.Sprintf("Welch's test of %s: %s, variances not assumed equal", r.Factor, r.Response)}
	test.parts = append(test.parts,
		fmt.Sprintf("F = %s on %s and %s df, p %s (%s).", num(r.F, 4), dfNum(r.DF1), dfNum(r.DF2), pvalWord(r.P), verdict(r.P, r.Alpha)),
		summaryTable(r.Groups, "", nil))
	cmp := section{title: fmt.Sprintf("Games–Howell comparisons of %s: differences with %s%% simultaneous intervals", r.Factor, short(100*(1-r.Alpha)))}
	cmp.parts = append(cmp.parts, pairTestTable("difference [interval]", "q", r.Pairs, true),
		"Each pair has its own standard error and Welch–Satterthwaite df; p-values are from the studentized range, adjusted for all pairs.")
	if r.P >= r.Alpha {
		cmp.parts = append(cmp.parts, fmt.Sprintf("The overall test was not significant at α = %s; the comparisons are shown because they were asked for.", short(r.Alpha)))
	}
	return []section{test, cmp, {title: "Cautions", parts: cautionParts(cautions)}}
}

// dfNum formats degrees of freedom: whole numbers as such, fractional
// (Welch–Satterthwaite) ones with four significant digits.
func dfNum(df float64) string {
	if df == math.Trunc(df) && !math.IsInf(df, 0) {
		return fmt.Sprint(int64(df))
	}
	return num(df, 4)
}

func pvalWord(p float64) string {
	if p < 0.0001 {
		return "< 0.0001"
	}
	return "= " + pval(p)
}

func cautionParts(c []string) []any {
	out := make([]any, len(c))
	for i, s := range c {
		out[i] = "- " + s
	}
	return out
}

func rankSections(r *analyze.RankResult, cautions []string) []section {
	what := "Kruskal–Wallis test"
	statName := "H"
	if r.Method == "Friedman" {
		what = fmt.Sprintf("Friedman test (within %s)", r.Block)
		statName = "χ²"
	}
	test := section{title: fmt.Sprintf("%s of %s: %s", what, r.Factor, r.Response)}
	line := fmt.Sprintf("%s = %s on %d df (corrected for ties), p %s from the χ² approximation", statName, num(r.Stat, 4), r.DF, pvalWord(r.P))
	if r.Exact {
		line += fmt.Sprintf("; exact permutation p %s", pvalWord(r.PExact))
	}
	p := r.P
	if r.Exact {
		p = r.PExact
	}
	line += fmt.Sprintf(" (%s).", verdict(p, r.Alpha))
	test.parts = append(test.parts, line,
		fmt.Sprintf("Effect size: %s = %s.", r.EffectName, num(r.Effect, 3)),
		summaryTableRanks(r))
	cmp := section{title: fmt.Sprintf("%s comparisons of %s", r.PairMethod, r.Factor)}
	est := "mean-rank difference [interval]"
	stat := "z"
	if r.Method == "Friedman" {
		est, stat = "rank-sum difference [interval]", "t"
	}
	cmp.parts = append(cmp.parts, pairTestTable(est, stat, r.Pairs, r.Method == "Friedman"),
		fmt.Sprintf("p-values are Holm-adjusted for the %d pairs; intervals are Bonferroni intervals for the rank difference.", len(r.Pairs)))
	lost := section{title: "What a rank test gives up", parts: []any{
		"Ranks compare the treatments' distributions, not their means: there is no interaction, no interval for a difference of means, and less power than the ANOVA when its assumptions hold. Report the medians and the rank-based effect size with it.",
	}}
	return []section{test, cmp, lost, {title: "Cautions", parts: cautionParts(cautions)}}
}

func summaryTableRanks(r *analyze.RankResult) table {
	tb := table{head: []string{"treatment", "n", "median", "mean rank"}, right: []bool{false, true, true, true}}
	for i, g := range r.Groups {
		tb.rows = append(tb.rows, []string{g.Level, fmt.Sprint(g.N), num(r.Median[i], 5), num(r.MeanRank[i], 4)})
	}
	return tb
}

func glmSections(r *analyze.GLMResult, cautions []string) []section {
	scale, ratio := "probability", "odds ratio"
	if r.Family == analyze.FamilyPoisson {
		scale, ratio = "mean count", "rate ratio"
	}
	fit := section{title: fmt.Sprintf("%s model (%s link) of %s: likelihood-ratio tests", titleCase(r.Family), r.Link, r.Response)}
	head := []string{"term", "df", "deviance change", "p (χ²)"}
	right := []bool{false, true, true, true}
	if r.Quasi {
		head = append(head, "F (quasi)", "p (F)")
		right = append(right, true, true)
	}
	tb := table{head: head, right: right}
	for _, t := range r.Terms {
		row := []string{t.Source, fmt.Sprint(t.DF), num(t.Deviance, 5), pval(t.P)}
		if r.Quasi {
			row = append(row, num(t.F, 4), pval(t.PF))
		}
		tb.rows = append(tb.rows, row)
	}
	kind := map[int]string{1: "each term added in order", 2: "each term after the others that do not contain it", 3: "each term removed from the full model"}[r.SSType]
	fit.parts = append(fit.parts, tb,
		fmt.Sprintf("Tests compare the model with and without %s (%s). Residual deviance %s on %d df; Pearson dispersion %s.",
			"the term", kind, num(r.Deviance, 5), r.ResidDF, num(r.Dispersion, 3)))
	if r.Quasi {
		fit.parts = append(fit.parts, fmt.Sprintf("The dispersion is above 1, so the units vary more than the %s model allows: the F tests and intervals are scaled by it (quasi-likelihood); read the F column.", r.Family))
	}
	var secs []section
	secs = append(secs, fit)
	for i, row := range r.Means {
		if len(row) == 0 {
			continue
		}
		s := section{title: fmt.Sprintf("Estimated %s by %s, with %s%% intervals", scale, row[0].Term, short(100*(1-r.Alpha)))}
		mt := table{head: []string{"level", "n", "observed", "estimate [interval]"}, right: []bool{false, true, true, true}}
		for _, g := range row {
			mt.rows = append(mt.rows, []string{g.Level, fmt.Sprint(g.N), num(g.Observed, 4), interval(g.Estimate, g.Lower, g.Upper, 4)})
		}
		s.parts = append(s.parts, mt)
		if i < len(r.Comparisons) && len(r.Comparisons[i]) > 0 {
			ct := table{head: []string{"comparison", ratio + " [interval]", "z", "p (adjusted)"}, right: []bool{false, true, true, true}}
			if r.Quasi {
				ct.head[2] = "t"
			}
			for _, c := range r.Comparisons[i] {
				ct.rows = append(ct.rows, []string{c.Pair, interval(c.Ratio, c.RatioLower, c.RatioUpper, 4), num(c.Stat, 4), pval(c.P)})
			}
			s.parts = append(s.parts, ct, r.PairMethod+".")
		}
		secs = append(secs, s)
	}
	if len(r.Notes) > 0 {
		var parts []any
		for _, n := range r.Notes {
			parts = append(parts, "- "+n)
		}
		secs = append(secs, section{title: "Notes", parts: parts})
	}
	return append(secs, section{title: "Cautions", parts: cautionParts(cautions)})
}

func titleCase(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// MethodText writes m as aligned text.
func MethodText(w io.Writer, m Method) error {
	for _, s := range m.sections() {
		if err := s.write(w, false); err != nil {
			return err
		}
	}
	return nil
}

// MethodMarkdown writes m as Markdown.
func MethodMarkdown(w io.Writer, m Method) error {
	for _, s := range m.sections() {
		if err := s.write(w, true); err != nil {
			return err
		}
	}
	return nil
}

// MethodDoc is one response analysed by a method other than the ANOVA, in
// the analysis JSON document.
type MethodDoc struct {
	Response string `json:"response"`
	// Method names the analysis: welch, rank, glm, ancova or repeated.
	Method string `json:"method"`
	Result any    `json:"result"`
}

// AnalysesWithMethodsJSON writes one allot.analysis/v1 document for a run:
// the ANOVA analyses under "responses", the other methods under "methods".
func AnalysesWithMethodsJSON(w io.Writer, version string, as []Analysis, others []MethodDoc) error {
	docs := make([]analysisDoc, 0, len(as))
	for _, a := range as {
		docs = append(docs, a.doc())
	}
	return writeJSON(w, struct {
		Format    string        `json:"format"`
		Version   string        `json:"allot_version,omitempty"`
		Responses []analysisDoc `json:"responses"`
		Methods   []MethodDoc   `json:"methods,omitempty"`
	}{AnalysisFormat, version, docs, others})
}
