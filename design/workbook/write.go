package workbook

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/atomicfile"

	"github.com/xuri/excelize/v2"
)

// Meta is what the Study sheet records besides the plan.
type Meta struct {
	Version string    // allot version
	Created time.Time // when the workbook was written
	// Paper is the page size the sheets are set up to print on: PaperA4
	// (the default when empty) or PaperLetter.
	Paper string
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
	pg, err := pageOf(meta.Paper)
	if err != nil {
		return nil, err
	}
	if err := checkText(l); err != nil {
		return nil, err
	}
	f := excelize.NewFile()
	f.SetZipWriter(newZip)
	if err := f.SetSheetName("Sheet1", SheetStudy); err != nil {
		return nil, err
	}
	for _, s := range []string{SheetEntry, SheetMap, SheetData} {
		if _, err := f.NewSheet(s); err != nil {
			return nil, err
		}
	}
	steps := []func() error{
		// Hide the plan sheet first: SetSheetVisible reads every sheet in,
		// which for the streamed Entry sheet would mean parsing it again.
		func() error { return f.SetSheetVisible(SheetData, false, true) },
		func() error {
			idx, err := f.GetSheetIndex(SheetEntry)
			f.SetActiveSheet(idx)
			return err
		},
		func() error { return writeStudy(f, l, meta, pg) },
		func() error { return writeEntry(f, l, meta, pg) },
		func() error { return writeMap(f, l, meta, pg) },
		func() error { return writeData(f, l, "") },
	}
	for _, step := range steps {
		if err := step(); err != nil {
			f.Close()
			return nil, fmt.Errorf("workbook: %w", err)
		}
	}
	return f, nil
}

// checkText refuses names a sheet cannot hold: text that is not UTF-8, or
// that has control characters other than tab and line break (XML 1.0 has
// no way to write them).
func checkText(l design.Layout) error {
	p := l.Plan
	bad := func(s string) bool {
		if !utf8.ValidString(s) {
			return true
		}
		for _, r := range s {
			if r < 0x20 && r != '\t' && r != '\n' || r == 0xFFFE || r == 0xFFFF {
				return true
			}
		}
		return false
	}
	check := func(what, s string) error {
		if bad(s) {
			return fmt.Errorf("workbook: %s %q is not valid text (not UTF-8, or a control character); correct it in the plan", what, s)
		}
		return nil
	}
	texts := [][2]string{{"the title", p.Title}, {"the block name", p.BlockName}, {"the control", p.Control}}
	for _, f := range p.Factors {
		texts = append(texts, [2]string{"factor", f.Name})
		for _, lv := range f.Levels {
			texts = append(texts, [2]string{"level", lv})
		}
	}
	for _, r := range p.Responses {
		texts = append(texts, [2]string{"response", r.Name})
	}
	for _, t := range texts {
		if err := check(t[0], t[1]); err != nil {
			return err
		}
	}
	// The texts of each unit are checked in place, in the same order:
	// codes, block labels, unit IDs.
	for _, c := range l.Codes {
		if err := check("blind code", c); err != nil {
			return err
		}
	}
	for _, u := range p.Units {
		if err := check("block label", u.BlockLabel); err != nil {
			return err
		}
	}
	for _, u := range l.Units {
		if err := check("unit ID", u.ID); err != nil {
			return err
		}
	}
	return nil
}

// sheetWriter collects the first error of a run of excelize calls, so that
// every error is checked without an if after each cell.
type sheetWriter struct {
	f     *excelize.File
	sheet string
	err   error
}

func (w *sheetWriter) do(err error) {
	if w.err == nil && err != nil {
		w.err = fmt.Errorf("sheet %q: %w", w.sheet, err)
	}
}

func (w *sheetWriter) str(col, row int, v string) { w.do(w.f.SetCellStr(w.sheet, cell(col, row), v)) }

func (w *sheetWriter) style(c1, r1, c2, r2, style int) {
	w.do(w.f.SetCellStyle(w.sheet, cell(c1, r1), cell(c2, r2), style))
}

func (w *sheetWriter) newStyle(s *excelize.Style) int {
	id, err := w.f.NewStyle(s)
	w.do(err)
	return id
}

func writeStudy(f *excelize.File, l design.Layout, meta Meta, pg page) error {
	p := l.Plan
	w := &sheetWriter{f: f, sheet: SheetStudy}
	wrap := &excelize.Alignment{WrapText: true, Vertical: "top"}
	bold := w.newStyle(&excelize.Style{Font: &excelize.Font{Bold: true}, Alignment: wrap})
	title := w.newStyle(&excelize.Style{Font: &excelize.Font{Bold: true, Size: 14}, Alignment: wrap})
	body := w.newStyle(&excelize.Style{Alignment: wrap})
	rows := studyRows(l, meta)
	w.str(1, 1, "Data-entry workbook: "+p.Title)
	w.style(1, 1, 1, 1, title)
	w.do(f.MergeCell(SheetStudy, "A1", "B1"))
	r := 3
	for _, kv := range rows {
		w.str(1, r, kv[0])
		w.style(1, r, 1, r, bold)
		w.str(2, r, kv[1])
		w.style(2, r, 2, r, body)
		r++
	}
	r++
	w.str(1, r, "How to fill in")
	w.style(1, r, 1, r, bold)
	status := "Set Status to lost (no value could be taken) or excluded (a value exists but must not be analysed) and give the Reason; leave Status empty for a measured unit."
	for _, line := range []string{
		"Type each measurement into its unit's row on the Entry sheet, in the response column.",
		"Leave a cell empty when a unit could not be measured, and say why in Notes.",
		status,
		"Type numbers only (no units, no \"n/a\", no dates); use a decimal point.",
		"You may sort or filter the rows with the filter buttons of the header row: allot matches rows by unit ID.",
		"Do not change the Unit, " + blockOrNot(p) + "Position, " + gridOrNot(p) + "or " + treatmentWord(p) + " cells: the sheet is not locked, but allot check compares every one of them with the plan stored in the workbook and reports each change.",
		"Run `allot check` on the filled file before analysing it.",
	} {
		r++
		w.str(1, r, "• "+line)
		w.do(f.MergeCell(SheetStudy, cell(1, r), cell(2, r)))
		w.style(1, r, 2, r, body)
		// A merged cell does not grow with its text: give it the height
		// of the lines the text needs at this width (about 95 characters).
		w.do(f.SetRowHeight(SheetStudy, r, 15*float64(1+int(textWidth(line))/95)))
	}
	w.do(f.SetColWidth(SheetStudy, "A", "A", 18))
	w.do(f.SetColWidth(SheetStudy, "B", "B", 72))
	if w.err != nil {
		return w.err
	}
	return setupPrint(f, SheetStudy, l, meta, pg, false)
}

// studyRows returns the Study sheet's description of the plan, one
// heading and value a row.
func studyRows(l design.Layout, meta Meta) [][2]string {
	p := l.Plan
	var levels []string
	for _, fa := range p.Factors {
		levels = append(levels, fmt.Sprintf("%s: %s", fa.Name, strings.Join(fa.Levels, ", ")))
	}
	var resp, covs, times []string
	seenTime := map[string]bool{}
	for _, r := range p.Responses {
		s := r.Name
		if r.Min != nil || r.Max != nil {
			s += " (" + rangeText(r) + ")"
		}
		switch {
		case r.Covariate:
			covs = append(covs, s)
		case r.Of != "":
			if !seenTime[r.Time] {
				seenTime[r.Time] = true
				times = append(times, r.Time)
			}
			resp = append(resp, s)
		default:
			resp = append(resp, s)
		}
	}
	designName := p.DesignName()
	if p.Design == design.RCBD {
		designName = designName + ", " + count(p.Blocks, blockName(p))
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
	if len(covs) > 0 {
		rows = append(rows, [2]string{"Baseline (before treatment)", strings.Join(covs, "; ") + ": measure before the treatments start; the analysis adjusts for it"})
	}
	if len(times) > 0 {
		rows = append(rows, [2]string{"Times", strings.Join(times, ", ") + ": each response has a column per time (NAME@TIME); write the date of each time here"})
	}
	if len(l.Spares) > 0 {
		rows = append(rows, [2]string{"Spare units", spareText(l)})
	}
	if p.BlindMode == design.BlindUnit {
		rows = append(rows, [2]string{"Blinding", "one code per unit; the key file holds each code's treatment"})
	} else if p.Blind {
		rows = append(rows, [2]string{"Blinding", "one code per treatment; the key file holds each code's treatment"})
	}
	return rows
}

func blockName(p design.Plan) string {
	if p.BlockName == "" {
		return "block"
	}
	return p.BlockName
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
	return rangeOf(r.Min, r.Max)
}

func rangeOf(min, max *float64) string {
	lo, hi := "", ""
	if min != nil {
		lo = strconv.FormatFloat(*min, 'g', -1, 64)
	}
	if max != nil {
		hi = strconv.FormatFloat(*max, 'g', -1, 64)
	}
	return lo + ".." + hi
}

func cell(col, row int) string {
	c, _ := excelize.CoordinatesToCellName(col, row)
	return c
}

// Entry row heights in points: a data row is tall enough to write a number
// in by hand (about 8.5 mm), the header holds two lines.
const (
	entryRowHeight  = 24
	entryHeadHeight = 32
)

// entryWidths returns the Entry columns' widths in character widths: each
// design column as wide as its widest text, the response columns room for
// a handwritten number, Reason and Notes room for a few words.
func entryWidths(l design.Layout, c columns, heads []string) []float64 {
	p := l.Plan
	nd := c.designCount(p)
	w := make([]float64, len(heads))
	for i, h := range heads {
		w[i] = min(textWidth(h)+3, 24)
	}
	tr := p.Treatments()
	label := labeller(l)
	var row []string
	for _, u := range l.Units {
		row = appendDesignCells(row[:0], c, u, 1, label(u), tr)
		for j, v := range row {
			w[j] = max(w[j], textWidth(v)+3)
		}
	}
	for j := range w {
		switch {
		case j < nd:
			w[j] = min(max(w[j], 7), 40)
		case j < nd+len(c.responses):
			w[j] = max(w[j], 12)
		case heads[j] == headStatus:
			w[j] = 11
		case heads[j] == headReason:
			w[j] = 22
		default: // Notes
			w[j] = 28
		}
	}
	return w
}

// writeEntry writes the Entry sheet through excelize's stream writer, which
// keeps memory flat for large layouts (a row at a time), then adds the
// validation, filter and print setup.
//
// The sheet is not protected: a protected sheet cannot be sorted in the
// common spreadsheet programs even when protection allows sorting (they
// refuse to move locked cells). Instead allot check compares every design
// cell with the plan stored, under a checksum, on the hidden sheet.
func writeEntry(f *excelize.File, l design.Layout, meta Meta, pg page) error {
	p := l.Plan
	c := layoutColumns(p)
	heads := c.headers(p)
	w := &sheetWriter{f: f, sheet: SheetEntry}
	grid := []excelize.Border{{Type: "left", Color: "808080", Style: 1}, {Type: "right", Color: "808080", Style: 1},
		{Type: "top", Color: "808080", Style: 1}, {Type: "bottom", Color: "808080", Style: 1}}
	head := w.newStyle(&excelize.Style{Font: &excelize.Font{Bold: true}, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"DDE7F0"}},
		Border: grid, Alignment: &excelize.Alignment{WrapText: true, Vertical: "center", Horizontal: "center"}})
	text := w.newStyle(&excelize.Style{Border: grid, Alignment: &excelize.Alignment{Vertical: "center", Horizontal: "left", Indent: 1}})
	num := w.newStyle(&excelize.Style{Border: grid, Alignment: &excelize.Alignment{Vertical: "center", Horizontal: "center"}})
	fill := excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"FFF8DC"}}
	open := w.newStyle(&excelize.Style{Border: grid, Fill: fill, Alignment: &excelize.Alignment{Vertical: "center", Horizontal: "right", Indent: 1}})
	note := w.newStyle(&excelize.Style{Border: grid, Fill: fill, Alignment: &excelize.Alignment{Vertical: "center", Horizontal: "left", Indent: 1, ShrinkToFit: true}})
	if w.err != nil {
		return w.err
	}
	nd := c.designCount(p)
	widths := entryWidths(l, c, heads)
	if err := entrySetup(f, l, c, widths, meta, pg); err != nil {
		return err
	}
	sw, err := f.NewStreamWriter(SheetEntry)
	if err != nil {
		return err
	}
	// The stream writer puts each call's columns before the earlier ones:
	// set them last to first, so that the sheet lists them in ascending
	// order, as the format asks (Excel repairs a sheet whose columns are
	// out of order).
	for i := len(widths) - 1; i >= 0; i-- {
		if err := sw.SetColWidth(i+1, i+1, widths[i]); err != nil {
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
	if err := sw.SetRow("A1", hrow, excelize.RowOpts{Height: entryHeadHeight}); err != nil {
		return err
	}
	tr := p.Treatments()
	label := labeller(l)
	row := 1
	// One row of cells, reused: vals points at cells, and the open cells
	// after the design cells are the same on every row.
	cells := make([]excelize.Cell, len(heads))
	vals := make([]any, len(heads))
	nr := nd + len(p.Responses)
	for j := range cells {
		vals[j] = &cells[j]
		if j >= nd {
			cells[j] = excelize.Cell{StyleID: open}
		}
		if j >= nr {
			cells[j] = excelize.Cell{StyleID: note}
		}
	}
	opts := excelize.RowOpts{Height: entryRowHeight}
	var texts []string
	for _, u := range l.Units {
		lab := label(u)
		for sub := 1; sub <= c.rowsPer(); sub++ {
			row++
			texts = appendDesignCells(texts[:0], c, u, sub, lab, tr)
			for j, v := range texts {
				// Numbers where a spreadsheet keeps them exactly; IDs such
				// as 007 and all names are text.
				if n, ok := integerText(v); ok && c.numeric(j, nd) {
					cells[j] = excelize.Cell{StyleID: num, Value: n}
				} else {
					cells[j] = excelize.Cell{StyleID: text, Value: v}
				}
			}
			if err := sw.SetRow("A"+strconv.Itoa(row), vals, opts); err != nil {
				return err
			}
		}
	}
	return sw.Flush()
}

// entrySetup adds the Entry sheet's validation, filter and print setup.
// They go on the sheet before the rows are streamed: the stream writer
// appends these parts as it found them.
func entrySetup(f *excelize.File, l design.Layout, c columns, widths []float64, meta Meta, pg page) error {
	p := l.Plan
	nd := c.designCount(p)
	last := max(len(l.Units)*c.rowsPer()+1, 2)
	for k, r := range p.Responses {
		if err := addRangeValidation(f, r, nd+1+k, last); err != nil {
			return err
		}
	}
	if sc := c.statusCol(p); sc >= 0 {
		dv := excelize.NewDataValidation(true)
		dv.SetSqref(cell(sc+1, 2) + ":" + cell(sc+1, last))
		if err := dv.SetDropList([]string{StatusMeasured, StatusLost, StatusExcluded}); err != nil {
			return err
		}
		dv.SetInput(headStatus, "Empty or measured: a value was taken. lost: none could be. excluded: a value exists but must not be analysed. Give the Reason for lost and excluded.")
		dv.SetError(excelize.DataValidationErrorStyleStop, headStatus, "Status is measured, lost or excluded (or empty).")
		if err := f.AddDataValidation(SheetEntry, dv); err != nil {
			return err
		}
	}
	total := 0.0
	for _, x := range widths {
		total += x
	}
	if err := f.SetDefinedName(&excelize.DefinedName{Name: "_xlnm.Print_Titles", RefersTo: "'" + SheetEntry + "'!$1:$1", Scope: SheetEntry}); err != nil {
		return err
	}
	if err := f.AutoFilter(SheetEntry, "A1:"+cell(len(widths), last), nil); err != nil {
		return err
	}
	return setupPrint(f, SheetEntry, l, meta, pg, total > pg.portrait)
}

// addRangeValidation lets column col (1-based) of rows 2..last take only a
// number in the response's range.
func addRangeValidation(f *excelize.File, r design.Response, col, last int) error {
	dv := excelize.NewDataValidation(true)
	dv.SetSqref(cell(col, 2) + ":" + cell(col, last))
	// Unbounded sides get ±1E+300, written as formula text: excelize
	// spells float bounds out in full, longer than a formula may be.
	var lo, hi any = "-1E+300", "1E+300"
	if r.Min != nil {
		lo = *r.Min
	}
	if r.Max != nil {
		hi = *r.Max
	}
	typ, what := excelize.DataValidationTypeDecimal, "A number"
	if r.Whole() {
		// Counts, successes out of trials and scores are whole numbers
		// (spreadsheets bound whole-number validation to 32 bits).
		typ, what = excelize.DataValidationTypeWhole, "A whole number"
		if r.Max == nil {
			hi = 2147483647
		}
		if r.Min == nil {
			lo = -2147483648
		}
	}
	if err := dv.SetRange(lo, hi, typ, excelize.DataValidationOperatorBetween); err != nil {
		return err
	}
	msg := what + "; leave empty if not measured."
	if r.Min != nil || r.Max != nil {
		msg = what + " in " + rangeText(r) + "; leave empty if not measured."
	}
	dv.SetInput(r.Name, msg)
	dv.SetError(excelize.DataValidationErrorStyleStop, r.Name, "Not a number in the allowed range: "+msg)
	return f.AddDataValidation(SheetEntry, dv)
}
