package report

import (
	"fmt"
	"html"
	"io"
	"strings"

	"github.com/allotproject/allot/analyze"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Covariance is an analysis of covariance for rendering.
type Covariance struct {
	*analyze.ANCOVAResult
	Unit string `json:"unit"`
}

func (c Covariance) sections() []section {
	r := c.ANCOVAResult
	tab := section{title: fmt.Sprintf("Analysis of covariance: %s adjusted for %s (%s)", r.Response, r.Covariate, ssTypeText(r.SSType))}
	tb := table{head: []string{"source of variation", "df", "SS", "MS", "F", "p"}, right: []bool{false, true, true, true, true, true}}
	for _, t := range r.Terms {
		tb.rows = append(tb.rows, []string{t.Source, fmt.Sprint(t.DF), num(t.SS, 5), num(t.MS, 5), num(t.F, 4), pval(t.P)})
	}
	tb.rows = append(tb.rows, []string{"residual", fmt.Sprint(r.Residual.DF), num(r.Residual.SS, 5), num(r.Residual.MS, 5), "", ""})
	dir := "rises"
	if r.Slope < 0 {
		dir = "falls"
	}
	note := fmt.Sprintf("Within treatments, %s %s by %s for each unit of %s (slope SE %s, t = %s, p %s); adjusted means are at %s = %s, its mean.",
		r.Response, dir, num(abs(r.Slope), 4), r.Covariate, num(r.SlopeSE, 3), num(r.SlopeT, 4), pvalWord(r.SlopeP), r.Covariate, num(r.CovMean, 4))
	tab.parts = append(tab.parts, tb, note,
		fmt.Sprintf("Equal slopes in every treatment (treatment × %s): F = %s on %d and %d df, p %s.", r.Covariate, num(r.EqualSlopes.F, 4), r.EqualSlopes.DF1, r.EqualSlopes.DF2, pvalWord(r.EqualSlopes.P)),
		fmt.Sprintf("Balance of %s across treatments: F = %s, p %s (measured before treatment, it should not differ).", r.Covariate, num(r.Balance.F, 4), pvalWord(r.Balance.P)))
	secs := []section{tab}
	for i, row := range r.Means {
		if len(row) == 0 {
			continue
		}
		s := section{title: fmt.Sprintf("Means of %s by %s, adjusted to %s = %s", r.Response, row[0].Term, r.Covariate, num(r.CovMean, 4))}
		mt := table{head: []string{"level", "n", "mean " + r.Covariate, "raw mean", "adjusted mean [95% interval]", "SE"}, right: []bool{false, true, true, true, true, true}}
		for _, g := range row {
			mt.rows = append(mt.rows, []string{g.Level, fmt.Sprint(g.N), num(g.CovMean, 4), num(g.Raw, 5), interval(g.Mean, g.Lower, g.Upper, 5), num(g.SE, 4)})
		}
		s.parts = append(s.parts, mt)
		if i < len(r.Pairs) && len(r.Pairs[i]) > 0 {
			s.parts = append(s.parts, pairTestTable(fmt.Sprintf("difference [%s%% simultaneous interval]", short(100*(1-r.Alpha))), "q", r.Pairs[i], false),
				"Tukey–Kramer comparisons of the adjusted means on the model's error.")
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
	return secs
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}

// CovarianceText writes an analysis of covariance as aligned text.
func CovarianceText(w io.Writer, c Covariance) error { return writeSections(w, c.sections(), false) }

// CovarianceMarkdown writes an analysis of covariance as Markdown.
func CovarianceMarkdown(w io.Writer, c Covariance) error { return writeSections(w, c.sections(), true) }

func writeSections(w io.Writer, secs []section, markdown bool) error {
	for _, s := range secs {
		if err := s.write(w, markdown); err != nil {
			return err
		}
	}
	return nil
}

// Profiles is a repeated-measurements analysis for rendering.
type Profiles struct {
	*analyze.RMResult
	Unit string `json:"unit"`
}

func (p Profiles) sections() []section {
	r := p.RMResult
	tab := section{title: fmt.Sprintf("Repeated measurements of %s: %s and time, %d units at %d times", r.Response, r.Treatment, r.Units, len(r.Times))}
	tb := table{head: []string{"source of variation", "df", "SS", "MS", "F", "p", "p (GG)", "p (HF)", "tested against"},
		right: []bool{false, true, true, true, true, true, true, true, false}}
	for _, t := range r.Terms {
		row := []string{t.Source, dfNum(t.DF), num(t.SS, 5), num(t.MS, 5), "", "", "", "", t.Error}
		if t.F > 0 {
			row[4], row[5] = num(t.F, 4), pval(t.P)
			if t.PGG > 0 {
				row[6], row[7] = pval(t.PGG), pval(t.PHF)
			}
		}
		tb.rows = append(tb.rows, row)
	}
	tab.parts = append(tab.parts, tb,
		fmt.Sprintf("Sphericity: Mauchly's W = %s (χ² = %s on %d df, p %s); Greenhouse–Geisser ε = %s, Huynh–Feldt ε = %s. The GG and HF columns give the within-unit p-values with their df multiplied by ε.",
			num(r.MauchlyW, 4), num(r.MauchlyX2, 4), r.MauchlyDF, pvalWord(r.MauchlyP), fixed(r.EpsGG, 3), fixed(r.EpsHF, 3)))
	prof := section{title: fmt.Sprintf("Means of %s by %s and time, with 95%% intervals", r.Response, r.Treatment)}
	head := []string{"time"}
	right := []bool{false}
	if len(r.Profile) > 0 {
		for _, pp := range r.Profile[0] {
			head = append(head, pp.Group)
			right = append(right, true)
		}
	}
	pt := table{head: head, right: right}
	for _, row := range r.Profile {
		cells := []string{row[0].Time}
		for _, pp := range row {
			cells = append(cells, interval(pp.Mean, pp.Lower, pp.Upper, 4))
		}
		pt.rows = append(pt.rows, cells)
	}
	prof.parts = append(prof.parts, pt)
	secs := []section{tab, prof}
	var all []analyze.PairTest
	for _, per := range r.PerTime {
		all = append(all, per...)
	}
	if len(all) > 0 {
		secs = append(secs, section{title: fmt.Sprintf("Treatments compared at each time (Tukey–Kramer within each time, %s%% simultaneous intervals)", short(100*(1-r.Alpha))),
			parts: []any{pairTestTable("difference [interval]", "q", all, true),
				"The error is the variation between units at one time, pooled from the two strata with Satterthwaite's df (Cochran and Cox 1957)."}})
	}
	if len(r.Notes) > 0 {
		var parts []any
		for _, n := range r.Notes {
			parts = append(parts, "- "+n)
		}
		secs = append(secs, section{title: "Notes", parts: parts})
	}
	return secs
}

// ProfilesText writes a repeated-measurements analysis as aligned text.
func ProfilesText(w io.Writer, p Profiles) error { return writeSections(w, p.sections(), false) }

// ProfilesMarkdown writes a repeated-measurements analysis as Markdown.
func ProfilesMarkdown(w io.Writer, p Profiles) error { return writeSections(w, p.sections(), true) }

// ProfileFigure plots each treatment's mean and 95% interval at each time,
// one line per treatment (colour and marker shape both differ), the times
// evenly spaced and labelled.
func ProfileFigure(p Profiles) (Figure, error) {
	r := p.RMResult
	ylab := r.Response
	if p.Unit != "" {
		ylab += " (" + p.Unit + ")"
	}
	pl := newPlot(fmt.Sprintf("%s over time by %s (mean ± 95%% interval)", r.Response, r.Treatment), "time", ylab)
	if len(r.Profile) == 0 {
		return Figure{}, fmt.Errorf("no profile to plot")
	}
	shapes := glyphShapes
	g := len(r.Profile[0])
	for j := 0; j < g; j++ {
		xy := make(plotter.XYs, len(r.Profile))
		lo := make([]float64, len(r.Profile))
		hi := make([]float64, len(r.Profile))
		off := 0.08 * (float64(j) - float64(g-1)/2) // dodge the bars
		for t, row := range r.Profile {
			xy[t].X, xy[t].Y = float64(t)+off, row[j].Mean
			lo[t], hi[t] = row[j].Lower, row[j].Upper
		}
		col := palette[j%len(palette)]
		pl.Add(errorBars{xy: xy, lo: lo, hi: hi, color: col})
		l, err := plotter.NewLine(xy)
		if err != nil {
			return Figure{}, err
		}
		l.Color, l.Width = col, vg.Points(1.5)
		sc, err := plotter.NewScatter(xy)
		if err != nil {
			return Figure{}, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: vg.Points(4), Shape: shapes[j%len(shapes)]}
		pl.Add(l, sc)
		pl.Legend.Add(r.Profile[0][j].Group, l, sc)
	}
	pl.NominalX(r.Times...)
	pl.Legend.Top = true
	pl.Legend.YOffs = -vg.Points(14)
	return Figure{Name: "profiles", Title: pl.Title.Text, plot: pl, w: 16 * vg.Centimeter, h: 11 * vg.Centimeter}, nil
}

// sectionsHTML renders sections as HTML (headings, paragraphs, tables),
// escaping all text.
func sectionsHTML(b *strings.Builder, secs []section) {
	esc := html.EscapeString
	for _, s := range secs {
		fmt.Fprintf(b, "<h2>%s</h2>\n", esc(s.title))
		for _, p := range s.parts {
			switch v := p.(type) {
			case string:
				fmt.Fprintf(b, "<p>%s</p>\n", esc(v))
			case table:
				b.WriteString("<table><thead><tr>")
				for _, h := range v.head {
					fmt.Fprintf(b, "<th>%s</th>", esc(h))
				}
				b.WriteString("</tr></thead><tbody>\n")
				for _, r := range v.rows {
					b.WriteString("<tr>")
					for i, c := range r {
						cls := ""
						if v.right != nil && i < len(v.right) && v.right[i] {
							cls = ` class="num"`
						}
						fmt.Fprintf(b, "<td%s>%s</td>", cls, esc(c))
					}
					b.WriteString("</tr>\n")
				}
				b.WriteString("</tbody></table>\n")
			}
		}
	}
}

// ProfilesHTML writes a self-contained page (inline CSS and SVG, no
// scripts) of a repeated-measurements analysis: the tables, the profile
// plot and the command that reproduces it.
func ProfilesHTML(w io.Writer, p Profiles, command, version string) error {
	fig, err := ProfileFigure(p)
	if err != nil {
		return err
	}
	svg, err := fig.InlineSVG()
	if err != nil {
		return err
	}
	var b strings.Builder
	fmt.Fprintf(&b, "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>%s</title>\n", html.EscapeString("Repeated measurements of "+p.Response))
	b.WriteString("<style>body{font-family:sans-serif;max-width:60em;margin:2em auto;padding:0 1em;color:#222}table{border-collapse:collapse;margin:.5em 0}th,td{border-bottom:1px solid #ccc;padding:.2em .6em;text-align:left}td.num{text-align:right;font-variant-numeric:tabular-nums}figure{margin:1em 0}code{background:#f3f3f3;padding:.1em .3em}</style></head><body>\n")
	fmt.Fprintf(&b, "<h1>%s</h1>\n", html.EscapeString("Repeated measurements of "+p.Response))
	sectionsHTML(&b, p.sections())
	fmt.Fprintf(&b, "<figure>%s<figcaption>%s</figcaption></figure>\n", svg, html.EscapeString(fig.Title))
	fmt.Fprintf(&b, "<p>Made with allot %s by the command <code>%s</code>.</p>\n</body></html>\n", html.EscapeString(version), html.EscapeString(command))
	_, err = io.WriteString(w, b.String())
	return err
}
