package workbook

import (
	"strconv"
	"unicode"
	"unicode/utf8"

	"github.com/allotproject/allot/design"
)

// columns describes the Entry sheet's columns for a plan.
type columns struct {
	block      bool
	mainPlot   bool // a split plot's main plot, after the block (strata.go)
	grid       bool // Row and Column after Position
	factors    bool
	order      bool
	blind      bool
	subsamples int // 0 without subsamples
	responses  []design.Response
	// status adds the Status and Reason columns after the responses.
	// Workbooks written before they existed lack them; the reader accepts
	// both forms (see detectStatus).
	status bool
}

func layoutColumns(p design.Plan) columns {
	return columns{block: p.Design == design.RCBD || p.Strata() && p.Blocks > 1, mainPlot: p.Design == design.SplitPlot, grid: p.Grid != nil, factors: len(p.Factors) > 1 && !p.Blind, order: p.Order, blind: p.Blind, subsamples: p.Subsamples, responses: p.Responses, status: true}
}

// rowsPer returns the number of Entry rows of a unit.
func (c columns) rowsPer() int { return max(c.subsamples, 1) }

// headers returns the Entry header row.
func (c columns) headers(p design.Plan) []string {
	h := []string{headUnit}
	if c.block {
		h = append(h, blockHeader(p))
	}
	if c.mainPlot {
		h = append(h, mainPlotHeader(p))
	}
	h = append(h, headPosition)
	if c.grid {
		h = append(h, headRow, headColumn)
	}
	if c.blind {
		h = append(h, headCode)
	} else {
		h = append(h, headTreatment)
	}
	if c.factors {
		for _, f := range p.Factors {
			h = append(h, f.Name)
		}
	}
	if c.order {
		h = append(h, headOrder)
	}
	if c.subsamples > 0 {
		h = append(h, headSubsample)
	}
	for _, r := range c.responses {
		h = append(h, r.Name)
	}
	if c.status {
		h = append(h, headStatus, headReason)
	}
	return append(h, headNotes)
}

// designCount is the number of leading design columns.
func (c columns) designCount(p design.Plan) int {
	n := 3
	if c.block {
		n++
	}
	if c.mainPlot {
		n++
	}
	if c.grid {
		n += 2
	}
	if c.factors {
		n += len(p.Factors)
	}
	if c.order {
		n++
	}
	if c.subsamples > 0 {
		n++
	}
	return n
}

// statusCol returns the 0-based index of the Status column, or -1.
func (c columns) statusCol(p design.Plan) int {
	if !c.status {
		return -1
	}
	return c.designCount(p) + len(c.responses)
}

// blockHeader is the block column's heading: the block name with its first
// letter in upper case (any script; "bench" → "Bench", "école" → "École").
func blockHeader(p design.Plan) string {
	n := p.BlockName
	if n == "" {
		return "Block"
	}
	r, size := utf8.DecodeRuneInString(n)
	return string(unicode.ToUpper(r)) + n[size:]
}

// plural returns the plural of a block name for sheets and messages.
func plural(word string) string { return design.Plural(word) }

// count returns "1 bench" or "5 benches".
func count(n int, word string) string {
	if n == 1 {
		return "1 " + word
	}
	return strconv.Itoa(n) + " " + plural(word)
}

// designCells returns the design cells of a unit's row (subsample sub,
// 1-based, when the plan has subsamples), as written; label is the
// treatment name or blind code.
func designCells(c columns, u design.Unit, sub int, label string, tr []design.Treatment) []string {
	return appendDesignCells(nil, c, u, sub, label, tr)
}

// appendDesignCells appends the design cells of designCells to dst, so that
// a writer can reuse one slice for every row.
func appendDesignCells(dst []string, c columns, u design.Unit, sub int, label string, tr []design.Treatment) []string {
	row := append(dst, u.ID)
	if c.block {
		row = append(row, strconv.Itoa(u.Block))
	}
	if c.mainPlot {
		row = append(row, strconv.Itoa(u.MainPlot))
	}
	row = append(row, strconv.Itoa(u.Position))
	if c.grid {
		row = append(row, strconv.Itoa(u.Row), strconv.Itoa(u.Col))
	}
	row = append(row, label)
	if c.factors {
		row = append(row, tr[u.Treatment].Levels...)
	}
	if c.order {
		row = append(row, strconv.Itoa(u.Order))
	}
	if c.subsamples > 0 {
		row = append(row, strconv.Itoa(sub))
	}
	return row
}

// numeric reports whether design column j holds a count written as a
// number when its text is a canonical integer (see integerText): Unit,
// block, Position, Row and Column (grid plans), the order and subsample
// columns. Treatment and level
// names are always text.
func (c columns) numeric(j, nd int) bool {
	if j < c.numericCount() {
		return true
	}
	last := nd - 1
	if c.subsamples > 0 && j == last {
		return true
	}
	if c.subsamples > 0 {
		last--
	}
	return c.order && j == last
}

// numericCount is the number of leading columns written as numbers when they
// are canonical integers: Unit, the block column, Position, and Row and
// Column of grid plans.
func (c columns) numericCount() int {
	n := 2
	if c.block {
		n++
	}
	if c.mainPlot {
		n++
	}
	if c.grid {
		n += 2
	}
	return n
}

// integerText returns v as an integer when v is the canonical decimal form
// of one that a spreadsheet keeps exactly ("101", "-3"), so that writing it
// as a number and reading it back gives v again. Unit IDs such as "007",
// "0123", "+1" or "1e3" are not, and stay text: a spreadsheet would show
// 7, 123, 1 or 1000 and the ID would be lost.
func integerText(v string) (int, bool) {
	// The same as strconv.Atoi(v) succeeding with strconv.Itoa of the
	// result equal to v, without making the string: an optional minus,
	// then digits without a leading zero; "0" but not "-0".
	if len(v) > 15 { // beyond 15 digits a spreadsheet rounds
		return 0, false
	}
	d := v
	if len(d) > 0 && d[0] == '-' {
		d = d[1:]
	}
	if d == "" || d[0] == '0' && (len(d) > 1 || len(v) > 1) {
		return 0, false
	}
	n := 0
	for i := 0; i < len(d); i++ {
		ch := d[i]
		if ch < '0' || ch > '9' {
			return 0, false
		}
		n = n*10 + int(ch-'0')
	}
	if len(d) < len(v) {
		n = -n
	}
	return n, true
}

// textWidth is the printed width of s in character widths: East Asian wide
// characters and emoji take two.
func textWidth(s string) float64 {
	w, lw := 0.0, 0.0 // the widest line so far, the current line
	for _, r := range s {
		switch {
		case r == '\n':
			w, lw = max(w, lw), 0
		case wide(r):
			lw += 2
		default:
			lw++
		}
	}
	return max(w, lw)
}

func wide(r rune) bool {
	return r >= 0x1100 && (r <= 0x115F || r == 0x2329 || r == 0x232A ||
		(r >= 0x2E80 && r <= 0xA4CF && r != 0x303F) || (r >= 0xAC00 && r <= 0xD7A3) ||
		(r >= 0xF900 && r <= 0xFAFF) || (r >= 0xFE30 && r <= 0xFE4F) || (r >= 0xFF00 && r <= 0xFF60) ||
		(r >= 0xFFE0 && r <= 0xFFE6) || (r >= 0x1F300 && r <= 0x1FAFF) || (r >= 0x20000 && r <= 0x3FFFD))
}

// labeller returns what each unit's row shows as its treatment (the name,
// or the blind code), without rebuilding the plan's treatments per unit as
// Layout.Label does.
func labeller(l design.Layout) func(design.Unit) string {
	if l.Plan.Blind {
		return l.Label
	}
	tr := l.Plan.Treatments()
	return func(u design.Unit) string {
		if u.Treatment < 0 || u.Treatment >= len(tr) {
			return ""
		}
		return tr[u.Treatment].Name
	}
}
