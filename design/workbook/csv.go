package workbook

import (
	"encoding/csv"
	"io"
	"strings"

	"github.com/allotproject/allot/design"
)

// WriteCSV writes the Entry sheet's rows as CSV (RFC 4180) for labs that
// record in CSV: the same header and design columns, empty response cells.
// A cell that starts with =, +, -, @, a tab or a carriage return is
// prefixed with an apostrophe, the common defence against formula injection
// (OWASP, "CSV Injection"), so that a spreadsheet program shows it as text;
// the reader strips that apostrophe again.
func WriteCSV(w io.Writer, l design.Layout) error {
	p := l.Plan
	c := layoutColumns(p)
	cw := csv.NewWriter(w)
	head := c.headers(p)
	if err := cw.Write(escapeRow(head)); err != nil {
		return err
	}
	tr := p.Treatments()
	label := labeler(l)
	blank := make([]string, len(head)-c.designCount(p))
	for _, u := range l.Units {
		for sub := 1; sub <= c.rowsPer(); sub++ {
			row := append(designCells(c, u, sub, label(u), tr), blank...)
			if err := cw.Write(escapeRow(row)); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}

func escapeRow(row []string) []string {
	out := make([]string, len(row))
	for i, v := range row {
		out[i] = EscapeCell(v)
	}
	return out
}

// EscapeCell neutralises a cell that a spreadsheet would run as a formula.
func EscapeCell(v string) string {
	if v != "" && strings.ContainsRune("=+-@\t\r", rune(v[0])) {
		return "'" + v
	}
	return v
}

// UnescapeCell undoes EscapeCell.
func UnescapeCell(v string) string {
	if len(v) > 1 && v[0] == '\'' && strings.ContainsRune("=+-@\t\r", rune(v[1])) {
		return v[1:]
	}
	return v
}
