// Package report renders allot's results for people: sample-size
// summaries and justifications, layout summaries with bench maps, and ANOVA
// tables with comparisons and a plain-language reading, as aligned text,
// Markdown (tables that paste into a lab notebook) and JSON.
//
// Labels are textbook wording (source of variation, df, SS, MS, F, p).
package report

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"golang.org/x/term"
)

// num formats x with sig significant digits, without exponent for ordinary
// magnitudes.
func num(x float64, sig int) string {
	switch {
	case math.IsNaN(x):
		return "–"
	case math.IsInf(x, 1):
		return "∞"
	case x == 0:
		return "0"
	}
	mag := math.Floor(math.Log10(math.Abs(x)))
	if mag < -4 || mag >= 9 {
		return strconv.FormatFloat(x, 'e', sig-1, 64)
	}
	dec := sig - 1 - int(mag)
	if dec < 0 {
		dec = 0
	}
	return strconv.FormatFloat(x, 'f', dec, 64)
}

// short formats x in the fewest digits that represent it (0.05, 95, 2.5).
func short(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

// fixed formats x with d decimals.
func fixed(x float64, d int) string {
	if math.IsNaN(x) {
		return "–"
	}
	return strconv.FormatFloat(x, 'f', d, 64)
}

// pval formats a p-value: four decimals, or "< 0.0001".
func pval(p float64) string {
	switch {
	case math.IsNaN(p):
		return "–"
	case p < 0.0001:
		return "< 0.0001"
	}
	return strconv.FormatFloat(p, 'f', 4, 64)
}

// table is a grid of cells rendered as aligned text or as Markdown.
type table struct {
	head  []string
	rows  [][]string
	right []bool // right-align column (numbers)
}

// DefaultWidth is the width of text that does not go to a terminal (a
// file, a pipe): plain and narrow enough for a mail or a lab notebook.
const DefaultWidth = 80

// Width is the number of columns that text written to w may use: the
// terminal's width when w is a terminal, else DefaultWidth.
func Width(w io.Writer) int {
	if f, ok := w.(interface{ Fd() uintptr }); ok && term.IsTerminal(int(f.Fd())) {
		if cols, _, err := term.GetSize(int(f.Fd())); err == nil && cols >= 40 {
			return cols
		}
	}
	return DefaultWidth
}

// text renders the table at DefaultWidth.
func (t table) text(indent string) string { return t.textWidth(indent, DefaultWidth) }

// textWidth renders the table as aligned text no wider than width: a table
// too wide is cut into panels of whole columns, one below the other, each
// repeating the first (label) column.
func (t table) textWidth(indent string, width int) string {
	w := make([]int, len(t.head))
	for i, h := range t.head {
		w[i] = runeLen(h)
	}
	for _, r := range t.rows {
		for i, c := range r {
			w[i] = max(w[i], runeLen(c))
		}
	}
	var b strings.Builder
	for i, cols := range t.panels(w, runeLen(indent), width) {
		if i > 0 {
			b.WriteString("\n")
		}
		t.writePanel(&b, indent, w, cols)
	}
	return b.String()
}

// panels splits the columns into groups that fit width, each starting
// with column 0.
func (t table) panels(w []int, indent, width int) [][]int {
	if len(w) == 0 {
		return nil
	}
	var out [][]int
	cur, used := []int{0}, indent+w[0]
	for i := 1; i < len(w); i++ {
		if len(cur) > 1 && used+2+w[i] > width {
			out = append(out, cur)
			cur, used = []int{0}, indent+w[0]
		}
		cur = append(cur, i)
		used += 2 + w[i]
	}
	return append(out, cur)
}

func (t table) writePanel(b *strings.Builder, indent string, w []int, cols []int) {
	line := func(cells []string) {
		var l strings.Builder
		l.WriteString(indent)
		for k, i := range cols {
			c := cells[i]
			pad := strings.Repeat(" ", w[i]-runeLen(c))
			if k > 0 {
				l.WriteString("  ")
			}
			if t.right != nil && t.right[i] {
				l.WriteString(pad + c)
			} else {
				l.WriteString(c + pad)
			}
		}
		b.WriteString(strings.TrimRight(l.String(), " ") + "\n")
	}
	line(t.head)
	rule := make([]string, len(t.head))
	for i := range rule {
		rule[i] = strings.Repeat("─", w[i])
	}
	line(rule)
	for _, r := range t.rows {
		line(r)
	}
}

func (t table) markdown() string {
	var b strings.Builder
	b.WriteString("| " + strings.Join(escapeMD(t.head), " | ") + " |\n|")
	for i := range t.head {
		if t.right != nil && t.right[i] {
			b.WriteString("---:|")
		} else {
			b.WriteString("---|")
		}
	}
	b.WriteString("\n")
	for _, r := range t.rows {
		b.WriteString("| " + strings.Join(escapeMD(r), " | ") + " |\n")
	}
	return b.String()
}

func escapeMD(cells []string) []string {
	out := make([]string, len(cells))
	for i, c := range cells {
		out[i] = strings.ReplaceAll(c, "|", `\|`)
	}
	return out
}

func runeLen(s string) int { return len([]rune(s)) }

// wrap breaks text into lines of at most width runes, each prefixed.
func wrap(text string, width int, prefix string) string {
	var b strings.Builder
	for _, para := range strings.Split(text, "\n") {
		words := strings.Fields(para)
		n := 0
		b.WriteString(prefix)
		for i, w := range words {
			if i > 0 && n+1+runeLen(w) > width {
				b.WriteString("\n" + prefix)
				n = 0
			} else if i > 0 {
				b.WriteString(" ")
				n++
			}
			b.WriteString(w)
			n += runeLen(w)
		}
		b.WriteString("\n")
	}
	return b.String()
}

func plural(n int, one, many string) string {
	if n == 1 {
		return fmt.Sprintf("%d %s", n, one)
	}
	return fmt.Sprintf("%d %s", n, many)
}
