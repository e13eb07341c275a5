package workbook

import (
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/atomicfile"

	"github.com/xuri/excelize/v2"
)

// Meta is what the Study sheet records besides the plan.
type Meta struct {
	Version string    // allot version
	Created time.Time // when the workbook was written
}

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
}

func layoutColumns(p design.Plan) columns {
	return columns{block: p.Design == design.RCBD || p.Strata() && p.Blocks > 1, mainPlot: p.Design == design.SplitPlot, grid: p.Grid != nil, factors: len(p.Factors) > 1 && !p.Blind, order: p.Order, blind: p.Blind, subsamples: p.Subsamples, responses: p.Responses}
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

func blockHeader(p design.Plan) string {
	n := p.BlockName
	if n == "" {
		return "Block"
	}
	return strings.ToUpper(n[:1]) + n[1:]
}

// designCells returns the design cells of a unit's row (subsample sub,
// 1-based, when the plan has subsamples), as written; label is the
// treatment name or blind code.
func designCells(c columns, u design.Unit, sub int, label string, tr []design.Treatment) []string {
	row := []string{u.ID}
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

// numeric reports whether design column j is written as a number: Unit,
// block and Position when they parse as integers, and the order and
// subsample columns.
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

// Write writes the data-entry workbook for layout l to path. It refuses to
// replace an existing file unless force is set, and writes through a
// temporary file in the same folder.
func Write(path string, l design.Layout, meta Meta, force bool) error {
	f, err := build(l, meta)
	if err != nil {
		return err
	}
	defer f.Close()
	return atomicfile.Write(path, force, func(w io.Writer) error {
		if _, err := f.WriteTo(w); err != nil {
			return fmt.Errorf("writing %s: %w", path, err)
		}
		return nil
	})
}

func build(l design.Layout, meta Meta) (*excelize.File, error) {
	f := excelize.NewFile()
	if err := f.SetSheetName("Sheet1", SheetStudy); err != nil {
		return nil, err
	}
	for _, s := range []string{SheetEntry, SheetMap, SheetData} {
		if _, err := f.NewSheet(s); err != nil {
			return nil, err
		}
	}
	if err := writeStudy(f, l, meta); err != nil {
		return nil, err
	}
	if err := writeEntry(f, l); err != nil {
		return nil, err
	}
	if err := writeMap(f, l); err != nil {
		return nil, err
	}
	if err := writeData(f, l); err != nil {
		return nil, err
	}
	if err := f.SetSheetVisible(SheetData, false, true); err != nil {
		return nil, err
	}
	idx, _ := f.GetSheetIndex(SheetEntry)
	f.SetActiveSheet(idx)
	return f, nil
}

func writeStudy(f *excelize.File, l design.Layout, meta Meta) error {
	p := l.Plan
	bold, _ := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	title, _ := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true, Size: 14}})
	var levels []string
	for _, fa := range p.Factors {
		levels = append(levels, fmt.Sprintf("%s: %s", fa.Name, strings.Join(fa.Levels, ", ")))
	}
	var resp []string
	for _, r := range p.Responses {
		s := r.Name
		if r.Min != nil || r.Max != nil {
			s += " (" + rangeText(r) + ")"
		}
		resp = append(resp, s)
	}
	designName := p.DesignName()
	if p.Design == design.RCBD {
		designName = fmt.Sprintf("%s, %d %s", designName, p.Blocks, design.Plural(p.BlockName))
	}
	rows := [][2]string{
		{"Title", p.Title},
		{"Design", designName},
		{"Factors", strings.Join(levels, "; ")},
		{"Treatments", strconv.Itoa(len(p.Treatments()))},
		{"Units", strconv.Itoa(p.NumUnits())},
		{"Responses", strings.Join(resp, "; ")},
		{"Seed", seedText(p)},
		{"Generator", p.Generator},
		{"Plan fingerprint", p.Fingerprint()},
		{"Written by", "allot " + meta.Version},
		{"Created", meta.Created.UTC().Format(time.RFC3339)},
	}
	if p.Control != "" {
		rows = append(rows[:4], append([][2]string{{"Control", p.Control}}, rows[4:]...)...)
	}
	if len(l.Spares) > 0 {
		rows = append(rows, [2]string{"Spare units", spareText(l)})
	}
	if p.BlindMode == design.BlindUnit {
		rows = append(rows, [2]string{"Blinding", "one code per unit; the key file holds each code's treatment"})
	} else if p.Blind {
		rows = append(rows, [2]string{"Blinding", "one code per treatment; the key file holds each code's treatment"})
	}
	if err := f.SetCellValue(SheetStudy, "A1", "Data-entry workbook: "+p.Title); err != nil {
		return err
	}
	f.SetCellStyle(SheetStudy, "A1", "A1", title)
	r := 3
	for _, kv := range rows {
		f.SetCellValue(SheetStudy, cell(1, r), kv[0])
		f.SetCellStyle(SheetStudy, cell(1, r), cell(1, r), bold)
		f.SetCellStr(SheetStudy, cell(2, r), kv[1])
		r++
	}
	r++
	f.SetCellValue(SheetStudy, cell(1, r), "How to fill in")
	f.SetCellStyle(SheetStudy, cell(1, r), cell(1, r), bold)
	for _, line := range []string{
		"Type each measurement into its unit's row on the Entry sheet, in the response column.",
		"Leave a cell empty when a unit could not be measured, and say why in Notes.",
		"Type numbers only (no units, no \"n/a\"); use a decimal point.",
		"You may sort or filter the rows: allot matches rows by unit ID.",
		"Do not change the Unit, " + blockOrNot(p) + "Position, " + gridOrNot(p) + "or " + treatmentWord(p) + " cells.",
		"Run `allot check` on the filled file before analysing it.",
	} {
		r++
		f.SetCellStr(SheetStudy, cell(1, r), "• "+line)
	}
	f.SetColWidth(SheetStudy, "A", "A", 20)
	f.SetColWidth(SheetStudy, "B", "B", 70)
	return nil
}

// spareText lists the spare units block by block: units of the list that
// the plan does not use, and which get no treatment.
func spareText(l design.Layout) string {
	labels := l.Plan.BlockLabels()
	var parts []string
	for i, sp := range l.Spares {
		if i == 0 || sp.Block != l.Spares[i-1].Block {
			parts = append(parts, fmt.Sprintf("%s %s: %s", l.Plan.BlockName, labels[sp.Block-1], sp.ID))
		} else {
			parts[len(parts)-1] += ", " + sp.ID
		}
	}
	return strings.Join(parts, "; ") + " (not in the experiment: no treatment, no row on the Entry sheet)"
}

func treatmentWord(p design.Plan) string {
	if p.Blind {
		return headCode
	}
	return headTreatment
}

func seedText(p design.Plan) string {
	if p.Blind {
		return "kept with the unblinding key (blind study)"
	}
	return strconv.FormatUint(p.Seed, 10)
}

func gridOrNot(p design.Plan) string {
	if p.Grid != nil {
		return headRow + ", " + headColumn + " "
	}
	return ""
}

func blockOrNot(p design.Plan) string {
	if p.Design == design.RCBD {
		return blockHeader(p) + ", "
	}
	return ""
}

func rangeText(r design.Response) string {
	lo, hi := "", ""
	if r.Min != nil {
		lo = strconv.FormatFloat(*r.Min, 'g', -1, 64)
	}
	if r.Max != nil {
		hi = strconv.FormatFloat(*r.Max, 'g', -1, 64)
	}
	return lo + ".." + hi
}

func cell(col, row int) string {
	c, _ := excelize.CoordinatesToCellName(col, row)
	return c
}

// writeEntry writes the Entry sheet through excelize's stream writer, which
// keeps memory flat for large layouts (a row at a time), then adds the
// validation, print setup and protection.
func writeEntry(f *excelize.File, l design.Layout) error {
	p := l.Plan
	c := layoutColumns(p)
	heads := c.headers(p)
	head, _ := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"DDE7F0"}}, Border: []excelize.Border{{Type: "bottom", Color: "000000", Style: 1}}})
	open, _ := f.NewStyle(&excelize.Style{Protection: &excelize.Protection{Locked: false}, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"FFF8DC"}}})
	// Validation, print setup and protection go on the sheet before the rows
	// are streamed: the stream writer appends these parts as it found them.
	nd := c.designCount(p)
	last := len(l.Units)*c.rowsPer() + 1
	for k, r := range p.Responses {
		col := nd + 1 + k
		dv := excelize.NewDataValidation(true)
		dv.SetSqref(cell(col, 2) + ":" + cell(col, max(last, 2)))
		// Unbounded sides get ±1E+300, written as formula text: excelize
		// spells float bounds out in full, longer than a formula may be.
		var lo, hi any = "-1E+300", "1E+300"
		if r.Min != nil {
			lo = *r.Min
		}
		if r.Max != nil {
			hi = *r.Max
		}
		if err := dv.SetRange(lo, hi, excelize.DataValidationTypeDecimal, excelize.DataValidationOperatorBetween); err != nil {
			return err
		}
		msg := "A number; leave empty if not measured."
		if r.Min != nil || r.Max != nil {
			msg = "A number in " + rangeText(r) + "; leave empty if not measured."
		}
		dv.SetInput(r.Name, msg)
		dv.SetError(excelize.DataValidationErrorStyleStop, r.Name, "Not a number in the allowed range: "+msg)
		if err := f.AddDataValidation(SheetEntry, dv); err != nil {
			return err
		}
	}
	landscape := "landscape"
	one := 1
	zero := 0
	f.SetPageLayout(SheetEntry, &excelize.PageLayoutOptions{Orientation: &landscape, FitToWidth: &one, FitToHeight: &zero})
	f.SetDefinedName(&excelize.DefinedName{Name: "_xlnm.Print_Titles", RefersTo: "'" + SheetEntry + "'!$1:$1", Scope: SheetEntry})
	if err := f.ProtectSheet(SheetEntry, &excelize.SheetProtectionOptions{
		SelectLockedCells: true, SelectUnlockedCells: true, FormatColumns: true, FormatRows: true,
		Sort: true, AutoFilter: true,
	}); err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(SheetEntry)
	if err != nil {
		return err
	}
	for i, h := range heads {
		w := float64(len(h)) + 4
		switch h {
		case headTreatment:
			w = 24
		case headNotes:
			w = 30
		}
		if err := sw.SetColWidth(i+1, i+1, max(w, 9)); err != nil {
			return err
		}
	}
	if err := sw.SetPanes(&excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft"}); err != nil {
		return err
	}
	hrow := make([]any, len(heads))
	for i, h := range heads {
		hrow[i] = excelize.Cell{StyleID: head, Value: h}
	}
	if err := sw.SetRow("A1", hrow); err != nil {
		return err
	}
	tr := p.Treatments()
	label := labeler(l)
	row := 1
	vals := make([]any, len(heads))
	for _, u := range l.Units {
		for sub := 1; sub <= c.rowsPer(); sub++ {
			row++
			for j, v := range designCells(c, u, sub, label(u), tr) {
				// Numbers where they look like numbers; treatment and level
				// names are always text.
				if n, err := strconv.Atoi(v); err == nil && c.numeric(j, nd) {
					vals[j] = n
				} else {
					vals[j] = v
				}
			}
			for j := nd; j < len(heads); j++ {
				vals[j] = excelize.Cell{StyleID: open}
			}
			if err := sw.SetRow(cell(1, row), vals); err != nil {
				return err
			}
		}
	}
	return sw.Flush()
}

// numericCount is the number of leading columns written as numbers when they
// parse as integers: Unit, the block column and Position.
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

func writeMap(f *excelize.File, l design.Layout) error {
	p := l.Plan
	bold, _ := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}})
	wrap, _ := f.NewStyle(&excelize.Style{Alignment: &excelize.Alignment{WrapText: true, Vertical: "top"}, Border: []excelize.Border{
		{Type: "left", Color: "808080", Style: 1}, {Type: "right", Color: "808080", Style: 1},
		{Type: "top", Color: "808080", Style: 1}, {Type: "bottom", Color: "808080", Style: 1}}})
	label := labeler(l)
	text := func(u design.Unit) string {
		s := u.ID + "\n" + label(u)
		if u.Order > 0 {
			s += fmt.Sprintf("\n#%d", u.Order)
		}
		return s
	}
	if g := p.Grid; g != nil {
		// Each block as its grid, blocks one below the other.
		f.SetCellStr(SheetMap, "A1", fmt.Sprintf("Map: each %s as its %d × %d grid (%s numbering); each place shows unit ID and %s", p.BlockName, g.Rows, g.Cols, g.Numbering, strings.ToLower(treatmentWord(p))))
		f.SetCellStyle(SheetMap, "A1", "A1", bold)
		top := 3
		byBlock := make([][]design.Unit, p.Blocks+1)
		for _, u := range l.Units {
			byBlock[u.Block] = append(byBlock[u.Block], u)
		}
		labels := p.BlockLabels()
		for b := 1; b <= p.Blocks; b++ {
			f.SetCellStr(SheetMap, cell(1, top), fmt.Sprintf("%s %s", blockHeader(p), labels[b-1]))
			f.SetCellStyle(SheetMap, cell(1, top), cell(1, top), bold)
			for c := 1; c <= g.Cols; c++ {
				f.SetCellStr(SheetMap, cell(c+1, top), fmt.Sprintf("col %d", c))
			}
			for r := 1; r <= g.Rows; r++ {
				f.SetCellStr(SheetMap, cell(1, top+r), fmt.Sprintf("row %d", r))
			}
			for _, u := range byBlock[b] {
				f.SetCellStr(SheetMap, cell(u.Col+1, top+u.Row), text(u))
			}
			f.SetCellStyle(SheetMap, cell(2, top+1), cell(g.Cols+1, top+g.Rows), wrap)
			top += g.Rows + 2
		}
		f.SetColWidth(SheetMap, "A", "A", 12)
		return nil
	}
	f.SetCellStr(SheetMap, "A1", "Map: each row is a "+p.BlockName+", positions left to right; each cell shows unit ID and "+strings.ToLower(treatmentWord(p)))
	f.SetCellStyle(SheetMap, "A1", "A1", bold)
	width := p.MaxBlockSize()
	for i := 1; i <= width; i++ {
		f.SetCellInt(SheetMap, cell(i+1, 3), int64(i))
	}
	f.SetCellStyle(SheetMap, cell(2, 3), cell(width+1, 3), bold)
	labels := p.BlockLabels()
	headed := map[int]bool{}
	for _, u := range l.Units {
		row := u.Block + 3
		if !headed[row] {
			f.SetCellStr(SheetMap, cell(1, row), fmt.Sprintf("%s %s", blockHeader(p), labels[u.Block-1]))
			headed[row] = true
		}
		f.SetCellStr(SheetMap, cell(u.Position+1, row), text(u))
	}
	if width > 0 {
		f.SetCellStyle(SheetMap, cell(2, 4), cell(width+1, p.Blocks+3), wrap)
	}
	f.SetColWidth(SheetMap, "A", "A", 12)
	return outlineMainPlots(f, l) // split plots (strata.go)
}

func writeData(f *excelize.File, l design.Layout) error {
	label := labeler(l)
	st := stored{Plan: l.Plan.Canonical(), Spares: l.Spares}
	units := l.Units
	if l.Plan.Blind {
		// Keep the seed and the meaning of the codes out of the workbook:
		// the key file has them.
		st.Plan = l.Plan.Sealed().Canonical()
		units = make([]design.Unit, len(l.Units))
		for i, u := range l.Units {
			u.Treatment = -1
			units[i] = u
			st.Labels = append(st.Labels, label(l.Units[i]))
		}
	}
	ub, err := json.Marshal(units)
	if err != nil {
		return err
	}
	st.Units = ub
	doc, err := json.Marshal(st)
	if err != nil {
		return err
	}
	s := string(doc)
	var chunks []string
	for len(s) > chunkSize {
		chunks = append(chunks, s[:chunkSize])
		s = s[chunkSize:]
	}
	chunks = append(chunks, s)
	f.SetCellStr(SheetData, "A1", "plan fingerprint")
	f.SetCellStr(SheetData, "B1", l.Plan.Fingerprint())
	f.SetCellStr(SheetData, "A2", "document sha256")
	f.SetCellStr(SheetData, "B2", digest(doc))
	f.SetCellStr(SheetData, "A3", "chunks")
	f.SetCellInt(SheetData, "B3", int64(len(chunks)))
	for i, c := range chunks {
		if err := f.SetCellStr(SheetData, cell(1, 4+i), c); err != nil {
			return err
		}
	}
	return nil
}

// labeler returns l.Label, looked up once per treatment (Label lists the
// plan's treatments on every call).
func labeler(l design.Layout) func(design.Unit) string {
	byTreatment := map[int]string{}
	return func(u design.Unit) string {
		if u.Code != "" || u.Treatment < 0 {
			// Per-unit codes and sealed units: nothing to share.
			return l.Label(u)
		}
		s, ok := byTreatment[u.Treatment]
		if !ok {
			s = l.Label(u)
			byTreatment[u.Treatment] = s
		}
		return s
	}
}
