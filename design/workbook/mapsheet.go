package workbook

import (
	"fmt"
	"strings"

	"github.com/allotproject/allot/design"

	"github.com/xuri/excelize/v2"
)

// mapTints are the fills that tell treatments apart on the Map sheet: pale
// versions of a colour-blind-safe set (Okabe and Ito, 2002, "Color
// Universal Design"), so that the black text stays readable; a blind map
// gets none, since colour would group the codes.
var mapTints = []string{"FBE3B5", "CDE7F7", "BFE8DC", "FAF5BF", "BFD9EC", "F5D3BF", "EDD7E6", "E0E0E0"}

// mapLineHeight is the height of one text line of a Map cell, in points.
const mapLineHeight = 15

// mapSheet holds what writing the Map sheet needs: its styles, each
// place's text and the row height that shows it.
type mapSheet struct {
	*sheetWriter
	l           design.Layout
	bold, plain int
	tint        []int // style per treatment
	label       func(design.Unit) string
	rowH        float64
	// outline holds a split plot's styles for the first, middle and last
	// sub-plot of a main plot: thick edges group each main plot.
	outline []int
}

func newMapSheet(f *excelize.File, l design.Layout) *mapSheet {
	p := l.Plan
	m := &mapSheet{sheetWriter: &sheetWriter{f: f, sheet: SheetMap}, l: l, label: labeller(l)}
	m.bold = m.newStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	border := []excelize.Border{{Type: "left", Color: "404040", Style: 1}, {Type: "right", Color: "404040", Style: 1},
		{Type: "top", Color: "404040", Style: 1}, {Type: "bottom", Color: "404040", Style: 1}}
	align := &excelize.Alignment{WrapText: true, Vertical: "center", Horizontal: "center"}
	m.plain = m.newStyle(&excelize.Style{Alignment: align, Border: border})
	tr := p.Treatments()
	m.tint = make([]int, len(tr))
	colour := !p.Blind && len(tr) <= len(mapTints)
	for t := range tr {
		m.tint[t] = m.plain
		if colour {
			m.tint[t] = m.newStyle(&excelize.Style{Alignment: align, Border: border, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{mapTints[t]}}})
		}
	}
	if p.Design == design.SplitPlot {
		thin := func(side string) excelize.Border { return excelize.Border{Type: side, Color: "404040", Style: 1} }
		thick := func(side string) excelize.Border { return excelize.Border{Type: side, Color: "000000", Style: 5} }
		for _, edge := range [][2]bool{{true, false}, {false, false}, {false, true}} {
			b := []excelize.Border{thick("top"), thick("bottom"), thin("left"), thin("right")}
			if edge[0] {
				b[2] = thick("left")
			}
			if edge[1] {
				b[3] = thick("right")
			}
			m.outline = append(m.outline, m.newStyle(&excelize.Style{Alignment: align, Border: b}))
		}
	}
	lines := 2
	if p.Order {
		lines = 3
	}
	m.rowH = float64(mapLineHeight*lines + 6)
	return m
}

func (m *mapSheet) text(u design.Unit) string {
	s := u.ID + "\n" + m.label(u)
	if u.Order > 0 {
		s += fmt.Sprintf("\n#%d", u.Order)
	}
	return s
}

func (m *mapSheet) styleOf(u design.Unit) int {
	if m.outline != nil {
		nb := m.l.Plan.SubPlotTreatments()
		switch k := (u.Position - 1) % nb; {
		case k == 0:
			return m.outline[0]
		case k == nb-1:
			return m.outline[2]
		}
		return m.outline[1]
	}
	if u.Treatment < 0 || m.l.Plan.Blind {
		return m.plain
	}
	return m.tint[u.Treatment]
}

// place writes unit u's text at (col, row).
func (m *mapSheet) place(col, row int, u design.Unit) {
	m.str(col, row, m.text(u))
	m.style(col, row, col, row, m.styleOf(u))
}

// writeMap writes the Map sheet: a legend, then each block as its grid (or
// a row of positions), each place with unit ID and treatment (or code) and
// the measurement order, with row heights and column widths that show all
// of it; set up to print on the paper, several blocks to a page and page
// breaks between blocks, with the plan's title and fingerprint on every page.
func writeMap(f *excelize.File, l design.Layout, meta Meta, pg page) error {
	p := l.Plan
	m := newMapSheet(f, l)
	rows, cols := 1, p.MaxBlockSize()
	if g := p.Grid; g != nil {
		rows, cols = g.Rows, g.Cols
	}
	r := m.legend()
	// Column widths: wide enough for the longest line of any place.
	width := 10.0
	for _, u := range l.Units {
		width = max(width, textWidth(m.text(u))+2)
	}
	width = min(width, 40)
	total := 12 + width*float64(cols)
	landscape := total > pg.portrait
	printW, printH := pg.portrait, pg.portraitH
	if landscape {
		printW, printH = pg.landscape, pg.landscapeH
	}
	// Fit to width shrinks everything by the same factor.
	scale := min(1, printW/total)
	m.blocks(r, rows, cols, scale, printH)
	m.do(f.SetColWidth(SheetMap, "A", "A", 12))
	if cols > 0 {
		m.do(f.SetColWidth(SheetMap, "B", colName(cols+1), width))
	}
	if m.err != nil {
		return m.err
	}
	return setupPrint(f, SheetMap, l, meta, pg, landscape)
}

// legend writes the title line and the legend, and returns the first row
// after them.
func (m *mapSheet) legend() int {
	p := m.l.Plan
	what := "unit ID and " + strings.ToLower(treatmentWord(p))
	if p.Order {
		what += ", then #measurement order"
	}
	if g := p.Grid; g != nil {
		m.str(1, 1, fmt.Sprintf("Map: each %s as its %d × %d grid (%s numbering); each place shows %s", blockName(p), g.Rows, g.Cols, g.Numbering, what))
	} else {
		m.str(1, 1, "Map: each row is a "+blockName(p)+", positions left to right; each place shows "+what)
	}
	m.style(1, 1, 1, 1, m.bold)
	r := 3
	m.str(1, r, "Legend")
	m.style(1, r, 1, r, m.bold)
	if p.BlindMode == design.BlindUnit {
		m.str(2, r, "one blind code per unit: which treatment a code stands for is in the key, kept apart")
		return r + 2
	}
	if p.Blind {
		m.str(2, r, fmt.Sprintf("blind codes %s: which treatment a code stands for is in the key, kept apart", strings.Join(m.l.Codes, ", ")))
		return r + 2
	}
	for t, tt := range p.Treatments() {
		m.str(2, r, tt.Name)
		m.style(2, r, 2, r, m.tint[t])
		if len(p.Factors) > 1 {
			var parts []string
			for i, fa := range p.Factors {
				parts = append(parts, fa.Name+" "+tt.Levels[i])
			}
			m.str(3, r, strings.Join(parts, ", "))
		}
		r++
	}
	return r + 1
}

// blocks writes the blocks from row r on, with a page break before a block
// that would not fit on the page (printH points high, at scale).
func (m *mapSheet) blocks(r, rows, cols int, scale, printH float64) {
	p := m.l.Plan
	g := p.Grid
	used := float64(r-1) * 15 * scale // the title and legend on page 1
	byBlock := make([][]design.Unit, p.Blocks+1)
	for _, u := range m.l.Units {
		if u.Block >= 1 && u.Block <= p.Blocks {
			byBlock[u.Block] = append(byBlock[u.Block], u)
		}
	}
	// Each block takes a heading row and its grid rows (a row map's
	// heading is the position numbers, written once).
	blockH := (15 + float64(rows)*m.rowH + 15) * scale
	if g == nil {
		for i := 1; i <= cols; i++ {
			m.do(m.f.SetCellInt(SheetMap, cell(i+1, r), int64(i)))
		}
		m.style(2, r, cols+1, r, m.bold)
		r++
		used += 15 * scale
		blockH = m.rowH * scale
	}
	labels := p.BlockLabels()
	for b := 1; b <= p.Blocks; b++ {
		if used+blockH > printH && used > 0 {
			m.do(m.f.InsertPageBreak(SheetMap, cell(1, r)))
			used = 0
		}
		used += blockH
		m.str(1, r, blockHeader(p)+" "+labels[b-1])
		m.style(1, r, 1, r, m.bold)
		if g == nil {
			for _, u := range byBlock[b] {
				m.place(u.Position+1, r, u)
			}
			m.do(m.f.SetRowHeight(SheetMap, r, m.rowH))
			r++
			continue
		}
		for c := 1; c <= g.Cols; c++ {
			m.str(c+1, r, fmt.Sprintf("col %d", c))
		}
		for k := 1; k <= g.Rows; k++ {
			m.str(1, r+k, fmt.Sprintf("row %d", k))
			m.style(2, r+k, g.Cols+1, r+k, m.plain)
			m.do(m.f.SetRowHeight(SheetMap, r+k, m.rowH))
		}
		for _, u := range byBlock[b] {
			m.place(u.Col+1, r+u.Row, u)
		}
		r += g.Rows + 2
	}
}

func colName(c int) string {
	s, _ := excelize.ColumnNumberToName(c)
	return s
}
