package workbook

import (
	"fmt"
	"strconv"
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
// place's text and the row height that shows it. The sheet is streamed: its
// rows go out in order, each built in full first (a block's grid rows
// together), so that a large layout costs no worksheet in memory.
type mapSheet struct {
	*sheetWriter
	sw          *excelize.StreamWriter
	l           design.Layout
	bold, plain int
	tint        []int // style per treatment
	label       func(design.Unit) string
	texts       []string // each unit's place text, by index in l.Units
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
	m.texts = make([]string, len(l.Units))
	for i, u := range l.Units {
		m.texts[i] = m.text(u)
	}
	return m
}

func (m *mapSheet) text(u design.Unit) string {
	s := u.ID + "\n" + m.label(u)
	if u.Order > 0 {
		s += "\n#" + strconv.Itoa(u.Order)
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

// place returns the cell of unit i (its index in the layout): its text in
// its treatment's style.
func (m *mapSheet) place(i int) excelize.Cell {
	return excelize.Cell{StyleID: m.styleOf(m.l.Units[i]), Value: m.texts[i]}
}

// row writes row r: its cells from column A (nil where there is none), and
// its height in points (0 for the default).
func (m *mapSheet) row(r int, cells []any, height float64) {
	if m.err == nil {
		m.do(m.sw.SetRow(cell(1, r), cells, excelize.RowOpts{Height: height}))
	}
}

// writeMap writes the Map sheet: a legend, then each block as its grid (or
// a row of positions), each place with unit ID and treatment (or code) and
// the measurement order, with row heights and column widths that show all
// of it; set up to print on the paper, several blocks to a page and page
// breaks between blocks, with the plan's title and fingerprint on every page.
func writeMap(f *excelize.File, l design.Layout, meta Meta, pg page) error {
	p := l.Plan
	m := newMapSheet(f, l)
	if m.err != nil {
		return m.err
	}
	rows, cols := 1, p.MaxBlockSize()
	if g := p.Grid; g != nil {
		rows, cols = g.Rows, g.Cols
	}
	// Column widths: wide enough for the longest line of any place.
	width := 10.0
	for _, s := range m.texts {
		width = max(width, textWidth(s)+2)
	}
	width = min(width, 40)
	total := 12 + width*float64(cols)
	landscape := total > pg.portrait
	printW, printH := pg.portrait, pg.portraitH
	if landscape {
		printW, printH = pg.landscape, pg.landscapeH
	}
	// The print setup goes on the sheet before the rows are streamed (see
	// entrySetup).
	if err := setupPrint(f, SheetMap, l, meta, pg, landscape); err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(SheetMap)
	if err != nil {
		return err
	}
	m.sw = sw
	// The stream writer lists the columns set last first: B onwards before
	// A leaves them in ascending order, as the sheet had them before it
	// was streamed.
	if cols > 0 {
		m.do(sw.SetColWidth(2, cols+1, width))
	}
	m.do(sw.SetColWidth(1, 1, 12))
	r := m.legend()
	// Fit to width shrinks everything by the same factor.
	scale := min(1, printW/total)
	m.blocks(r, rows, cols, scale, printH)
	if m.err != nil {
		return m.err
	}
	return sw.Flush()
}

// legend writes the title line and the legend, and returns the first row
// after them.
func (m *mapSheet) legend() int {
	p := m.l.Plan
	what := "unit ID and " + strings.ToLower(treatmentWord(p))
	if p.Order {
		what += ", then #measurement order"
	}
	title := "Map: each row is a " + blockName(p) + ", positions left to right; each place shows " + what
	if g := p.Grid; g != nil {
		title = fmt.Sprintf("Map: each %s as its %d × %d grid (%s numbering); each place shows %s", blockName(p), g.Rows, g.Cols, g.Numbering, what)
	}
	m.row(1, []any{excelize.Cell{StyleID: m.bold, Value: title}}, 0)
	r := 3
	head := excelize.Cell{StyleID: m.bold, Value: "Legend"}
	if p.BlindMode == design.BlindUnit {
		m.row(r, []any{head, "one blind code per unit: which treatment a code stands for is in the key, kept apart"}, 0)
		return r + 2
	}
	if p.Blind {
		m.row(r, []any{head, fmt.Sprintf("blind codes %s: which treatment a code stands for is in the key, kept apart", strings.Join(m.l.Codes, ", "))}, 0)
		return r + 2
	}
	for t, tt := range p.Treatments() {
		cells := []any{nil, excelize.Cell{StyleID: m.tint[t], Value: tt.Name}}
		if t == 0 {
			cells[0] = head
		}
		if len(p.Factors) > 1 {
			var parts []string
			for i, fa := range p.Factors {
				parts = append(parts, fa.Name+" "+tt.Levels[i])
			}
			cells = append(cells, strings.Join(parts, ", "))
		}
		m.row(r, cells, 0)
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
	byBlock := make([][]int, p.Blocks+1)
	for i, u := range m.l.Units {
		if u.Block >= 1 && u.Block <= p.Blocks {
			byBlock[u.Block] = append(byBlock[u.Block], i)
		}
	}
	// Each block takes a heading row and its grid rows (a row map's
	// heading is the position numbers, written once).
	blockH := (15 + float64(rows)*m.rowH + 15) * scale
	line := make([]any, cols+1) // a block's heading row, or a row map's block
	if g == nil {
		for i := 1; i <= cols; i++ {
			line[i] = excelize.Cell{StyleID: m.bold, Value: i}
		}
		m.row(r, line, 0)
		r++
		used += 15 * scale
		blockH = m.rowH * scale
	}
	var grid [][]any // a grid block's rows, heading in column A
	if g != nil {
		for c := 1; c <= g.Cols; c++ {
			line[c] = "col " + strconv.Itoa(c)
		}
		grid = make([][]any, g.Rows+1)
		for k := 1; k <= g.Rows; k++ {
			grid[k] = make([]any, g.Cols+1)
		}
	}
	labels := p.BlockLabels()
	name := blockHeader(p) + " "
	for b := 1; b <= p.Blocks; b++ {
		if used+blockH > printH && used > 0 {
			m.do(m.sw.InsertPageBreak(cell(1, r)))
			used = 0
		}
		used += blockH
		line[0] = excelize.Cell{StyleID: m.bold, Value: name + labels[b-1]}
		if g == nil {
			clear(line[1:])
			for _, i := range byBlock[b] {
				line[m.l.Units[i].Position] = m.place(i)
			}
			m.row(r, line, m.rowH)
			r++
			continue
		}
		m.row(r, line, 0)
		for k := 1; k <= g.Rows; k++ {
			grid[k][0] = "row " + strconv.Itoa(k)
			for c := 1; c <= g.Cols; c++ {
				grid[k][c] = excelize.Cell{StyleID: m.plain}
			}
		}
		for _, i := range byBlock[b] {
			u := m.l.Units[i]
			grid[u.Row][u.Col] = m.place(i)
		}
		for k := 1; k <= g.Rows; k++ {
			m.row(r+k, grid[k], m.rowH)
		}
		r += g.Rows + 2
	}
}

func colName(c int) string {
	s, _ := excelize.ColumnNumberToName(c)
	return s
}
