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

// writeMap writes the Map sheet: a legend, then each block as its grid (or
// a row of positions), each place with unit ID and treatment (or code) and
// the measurement order, with row heights and column widths that show all
// of it; set up to print on the paper, several blocks to a page and page
// breaks between blocks, with the plan's title and fingerprint on every page.
func writeMap(f *excelize.File, l design.Layout, meta Meta, pg page) error {
	p := l.Plan
	w := &sheetWriter{f: f, sheet: SheetMap}
	bold := w.newStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	border := []excelize.Border{{Type: "left", Color: "404040", Style: 1}, {Type: "right", Color: "404040", Style: 1},
		{Type: "top", Color: "404040", Style: 1}, {Type: "bottom", Color: "404040", Style: 1}}
	align := &excelize.Alignment{WrapText: true, Vertical: "center", Horizontal: "center"}
	plain := w.newStyle(&excelize.Style{Alignment: align, Border: border})
	tr := p.Treatments()
	tint := make([]int, len(tr))
	colour := !p.Blind && len(tr) <= len(mapTints)
	for t := range tr {
		tint[t] = plain
		if colour {
			tint[t] = w.newStyle(&excelize.Style{Alignment: align, Border: border, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{mapTints[t]}}})
		}
	}
	label := labeller(l)
	text := func(u design.Unit) string {
		s := u.ID + "\n" + label(u)
		if u.Order > 0 {
			s += fmt.Sprintf("\n#%d", u.Order)
		}
		return s
	}
	styleOf := func(u design.Unit) int {
		if u.Treatment < 0 || p.Blind {
			return plain
		}
		return tint[u.Treatment]
	}
	lines := 2
	if p.Order {
		lines = 3
	}
	rowH := float64(mapLineHeight*lines + 6)

	// Title and legend.
	what := "unit ID and " + strings.ToLower(treatmentWord(p))
	if p.Order {
		what += ", then #measurement order"
	}
	g := p.Grid
	rows, cols := 1, p.MaxBlockSize()
	if g != nil {
		rows, cols = g.Rows, g.Cols
		w.str(1, 1, fmt.Sprintf("Map: each %s as its %d × %d grid (%s numbering); each place shows %s", blockName(p), g.Rows, g.Cols, g.Numbering, what))
	} else {
		w.str(1, 1, "Map: each row is a "+blockName(p)+", positions left to right; each place shows "+what)
	}
	w.style(1, 1, 1, 1, bold)
	r := 3
	w.str(1, r, "Legend")
	w.style(1, r, 1, r, bold)
	if p.Blind {
		w.str(2, r, fmt.Sprintf("blind codes %s: which treatment a code stands for is in the key, kept apart", strings.Join(l.Codes, ", ")))
		r++
	} else {
		for t, tt := range tr {
			w.str(2, r, tt.Name)
			w.style(2, r, 2, r, tint[t])
			if len(p.Factors) > 1 {
				var parts []string
				for i, fa := range p.Factors {
					parts = append(parts, fa.Name+" "+tt.Levels[i])
				}
				w.str(3, r, strings.Join(parts, ", "))
			}
			r++
		}
	}
	r++

	// Column widths: wide enough for the longest line of any place.
	width := 10.0
	for _, u := range l.Units {
		width = max(width, textWidth(text(u))+2)
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
	used := float64(r-1) * 15 * scale // the title and legend on page 1

	byBlock := make([][]design.Unit, p.Blocks+1)
	for _, u := range l.Units {
		if u.Block >= 1 && u.Block <= p.Blocks {
			byBlock[u.Block] = append(byBlock[u.Block], u)
		}
	}
	// Each block takes a heading row and its grid rows (a row map's
	// heading is the position numbers, written once).
	blockH := (15 + float64(rows)*rowH + 15) * scale
	if g == nil {
		for i := 1; i <= cols; i++ {
			w.do(f.SetCellInt(SheetMap, cell(i+1, r), int64(i)))
		}
		w.style(2, r, cols+1, r, bold)
		r++
		used += 15 * scale
		blockH = rowH * scale
	}
	for b := 1; b <= p.Blocks; b++ {
		if used+blockH > printH && used > 0 {
			w.do(f.InsertPageBreak(SheetMap, cell(1, r)))
			used = 0
		}
		used += blockH
		name := blockHeader(p) + " " + p.BlockLabel(b)
		if g == nil {
			w.str(1, r, name)
			w.style(1, r, 1, r, bold)
			for _, u := range byBlock[b] {
				w.str(u.Position+1, r, text(u))
				w.style(u.Position+1, r, u.Position+1, r, styleOf(u))
			}
			w.do(f.SetRowHeight(SheetMap, r, rowH))
			r++
			continue
		}
		w.str(1, r, name)
		w.style(1, r, 1, r, bold)
		for c := 1; c <= g.Cols; c++ {
			w.str(c+1, r, fmt.Sprintf("col %d", c))
		}
		for k := 1; k <= g.Rows; k++ {
			w.str(1, r+k, fmt.Sprintf("row %d", k))
			w.style(2, r+k, g.Cols+1, r+k, plain)
			w.do(f.SetRowHeight(SheetMap, r+k, rowH))
		}
		for _, u := range byBlock[b] {
			w.str(u.Col+1, r+u.Row, text(u))
			w.style(u.Col+1, r+u.Row, u.Col+1, r+u.Row, styleOf(u))
		}
		r += g.Rows + 2
	}
	w.do(f.SetColWidth(SheetMap, "A", "A", 12))
	if cols > 0 {
		w.do(f.SetColWidth(SheetMap, "B", colName(cols+1), width))
	}
	if w.err != nil {
		return w.err
	}
	return setupPrint(f, SheetMap, l, meta, pg, landscape)
}

func colName(c int) string {
	s, _ := excelize.ColumnNumberToName(c)
	return s
}
