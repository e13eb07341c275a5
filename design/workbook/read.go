package workbook

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/decimal"

	"github.com/xuri/excelize/v2"
)

// Severity grades a problem: errors stop analysis, warnings do not.
type Severity int

// Severities.
const (
	Warning Severity = iota
	Error
)

func (s Severity) String() string {
	if s == Error {
		return "error"
	}
	return "warning"
}

// Problem is one finding of the read-back check, located by sheet and cell.
type Problem struct {
	Severity Severity `json:"-"`
	Level    string   `json:"severity"`
	Sheet    string   `json:"sheet"`
	Cell     string   `json:"cell,omitempty"`
	Unit     string   `json:"unit,omitempty"`
	Msg      string   `json:"message"`
	// design marks a problem with the design cells or rows (an edited
	// Unit, block, position, row, column, treatment or code cell; a
	// missing, repeated or unknown unit), as opposed to response cells.
	design bool
}

// DesignProblems returns the problems with design cells and rows: what
// allot layout verify reports besides the re-derivation.
func (f *Filled) DesignProblems() []Problem {
	var out []Problem
	for _, p := range f.Problems {
		if p.design {
			out = append(out, p)
		}
	}
	return out
}

func (p Problem) String() string {
	loc := "sheet " + strconv.Quote(p.Sheet)
	if p.Cell != "" {
		loc += " cell " + p.Cell
	}
	if p.Unit != "" {
		loc += " (unit " + p.Unit + ")"
	}
	return fmt.Sprintf("%s: %s: %s", p.Severity, loc, p.Msg)
}

// Value is one response cell as read: its decimal text, where it is, and
// whether it was left empty.
type Value struct {
	Text    string
	Cell    string
	Missing bool
}

// Filled is a read-back workbook: the stored layout, the responses of every
// unit (in layout order) and everything the check found.
type Filled struct {
	Layout    design.Layout
	Responses []string
	// Values[r][i] is response r of unit Layout.Units[i]. With subsamples
	// its Text is empty and Missing says whether no subsample has a value;
	// Subs[r][i][k] holds subsample k+1.
	Values   [][]Value
	Subs     [][][]Value
	Problems []Problem
	// Sealed marks a blind workbook read without its key: treatments are
	// unknown (Treatment −1) and the data cannot be analysed.
	Sealed bool
	// Label is the notice written by Fill at the top of the Study sheet
	// ("SIMULATED by allot demo: …"), or empty.
	Label string
	// SimulatedNote is the same notice as kept in the checksummed plan
	// data, which a spreadsheet user cannot clear without the check
	// noticing; empty for measured data.
	SimulatedNote string
	// Status holds each unit's Status and Reason cells (layout order), as
	// plain data for the analysis' account of losses: Status is "" (not
	// given), StatusMeasured, StatusLost or StatusExcluded. Units lost or
	// excluded are left out of Observations and listed in its Losses.
	Status []UnitStatus
}

// Unit statuses of the Status column.
const (
	StatusMeasured = "measured"
	StatusLost     = "lost"
	StatusExcluded = "excluded"
)

// UnitStatus is one unit's Status and Reason as entered.
type UnitStatus struct {
	Status string // "", StatusMeasured, StatusLost or StatusExcluded
	Reason string
	Cell   string // the Status cell ("Entry!H7"), or empty when not given
}

// Dropped reports whether the unit's values are not to be analysed.
func (s UnitStatus) Dropped() bool { return s.Status == StatusLost || s.Status == StatusExcluded }

// Simulated reports whether the workbook's values were filled in by a
// simulation rather than measured: by the notice in the checksummed plan
// data, or (workbooks filled before it was kept there) the Study sheet's.
func (f *Filled) Simulated() bool {
	return strings.Contains(f.SimulatedNote, "SIMULATED") || strings.Contains(f.Label, "SIMULATED")
}

// Errors returns the number of error-level problems.
func (f *Filled) Errors() int {
	n := 0
	for _, p := range f.Problems {
		if p.Severity == Error {
			n++
		}
	}
	return n
}

// FileError is a problem that stops reading altogether.
type FileError struct {
	Path, Sheet, Cell, Msg string
}

func (e *FileError) Error() string {
	loc := e.Path
	if e.Sheet != "" {
		loc += ": sheet " + strconv.Quote(e.Sheet)
	}
	if e.Cell != "" {
		loc += " cell " + e.Cell
	}
	return loc + ": " + e.Msg
}

// ReadOptions tunes the check.
type ReadOptions struct {
	// DecimalComma accepts "12,5" as 12.5 in response cells.
	DecimalComma bool
	// Key unblinds a blind workbook.
	Key *design.Key
	// Layout is the layout file the workbook was written from. It stands in
	// for a lost hidden plan sheet (data pasted into a new workbook); when
	// the sheet is there, the two must be the same plan.
	Layout *design.Layout
	// Ranges replaces the plan's range of the responses it names for this
	// check (allot check --range), without changing the stored plan.
	Ranges map[string]Range
	// UnzipLimit overrides UnzipSizeLimit (bytes unpacked in all); 0 keeps
	// the default.
	UnzipLimit int64
}

// Range is a response's plausible range; a nil side is open.
type Range struct{ Min, Max *float64 }

func (r Range) String() string { return rangeOf(r.Min, r.Max) }

// ParseRange parses NAME=MIN..MAX (either side may be empty: "w=0..").
func ParseRange(s string) (string, Range, error) {
	name, spec, ok := strings.Cut(s, "=")
	lo, hi, ok2 := strings.Cut(spec, "..")
	name = strings.TrimSpace(name)
	if !ok || !ok2 || name == "" {
		return "", Range{}, fmt.Errorf("%q: give RESPONSE=MIN..MAX, for example height_cm=0..300", s)
	}
	var r Range
	for _, side := range []struct {
		text string
		dst  **float64
	}{{lo, &r.Min}, {hi, &r.Max}} {
		t := strings.TrimSpace(side.text)
		if t == "" {
			continue
		}
		x, err := decimal.Parse(t)
		if err != nil {
			return "", Range{}, fmt.Errorf("%q: %q %v", s, t, err)
		}
		*side.dst = &x
	}
	if r.Min != nil && r.Max != nil && *r.Min > *r.Max {
		return "", Range{}, fmt.Errorf("%q: the range is empty (MIN above MAX)", s)
	}
	return name, r, nil
}

// Read limits on the Entry sheet, so that a damaged or hostile sheet is
// refused before it is read into memory: a row may reach column maxColumns
// (the sheet's own columns and room for a lab's extra ones), and the sheet
// may hold at most extraRows rows more than the plan has.
const (
	maxColumns = 512
	extraRows  = 10000
)

// Read opens a filled workbook, verifies its stored plan and checks every
// row of the Entry sheet. The file is only read. Problems found in cells are
// in Filled.Problems; a *FileError is returned when the file cannot be used
// at all (not a workbook, plan sheet missing or edited).
func Read(path string, opt ReadOptions) (*Filled, error) {
	if err := checkKind(path); err != nil {
		return nil, err
	}
	if fl, err := readParts(path, opt); err != errNoStream {
		return fl, err
	}
	return readExcelize(path, opt)
}

// readExcelize is Read through excelize's copy of the package in memory,
// for what readParts does not handle.
func readExcelize(path string, opt ReadOptions) (*Filled, error) {
	f, err := open(path, opt.UnzipLimit)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	ds, err := readData(f, path, opt)
	if err != nil {
		return nil, err
	}
	if opt.Key != nil && !ds.layout.Plan.Blind && !ds.fromPlan {
		return nil, notBlind(path)
	}
	rows, info, err := entryRows(f, path, ds)
	if err != nil {
		return nil, err
	}
	k := entryChecker(path, ds, opt)
	k.cellInfo = func(row, col int) cellInfo { return info(cell(col, row)) }
	fl, err := k.run(rows)
	if err != nil {
		return nil, err
	}
	fl.Sealed = ds.layout.IsSealed()
	fl.SimulatedNote = ds.st.Simulated
	if fl.Label, err = f.GetCellValue(SheetStudy, "A2"); err != nil {
		fl.Label = ""
	}
	if fl.Label == "" {
		fl.Label = ds.st.Simulated
	}
	return fl, nil
}

func notBlind(path string) error {
	return &FileError{Path: path, Msg: "the workbook is not blind, so it has no key; leave --key out"}
}

// entryChecker returns the checker of the Entry sheet for the plan sheet
// ds as read.
func entryChecker(path string, ds dataSheet, opt ReadOptions) *checker {
	k := newChecker(path, SheetEntry, ds.layout, ds.labels, opt)
	if ds.fromPlan {
		k.add(Warning, "", "", fmt.Sprintf("the hidden plan sheet %q is missing; the rows were checked against the layout given with --plan (fingerprint %.12s) instead", SheetData, ds.layout.Plan.Fingerprint()))
	}
	return k
}

// open opens an .xlsx file with the unzip limits.
func open(path string, unzip int64) (*excelize.File, error) {
	limit := int64(UnzipSizeLimit)
	if unzip > 0 {
		limit = unzip
	}
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true, UnzipSizeLimit: limit, UnzipXMLSizeLimit: min(int64(UnzipXMLSizeLimit), limit)})
	if err != nil {
		if strings.Contains(err.Error(), "size exceeds") || strings.Contains(err.Error(), "limit") {
			return nil, &FileError{Path: path, Msg: fmt.Sprintf("unpacks to more than %d MiB, the limit for a workbook; it is not a data-entry workbook allot wrote (a workbook of a million units unpacks to far less)", limit>>20)}
		}
		return nil, &FileError{Path: path, Msg: "cannot be read as an .xlsx workbook (" + err.Error() + "); give the file written by `allot layout` or a copy re-saved as .xlsx"}
	}
	return f, nil
}

// entryRows reads the Entry sheet's rows, keeping of each row only the
// columns the check reads, and refuses a sheet with a cell beyond column
// maxColumns or more than extraRows rows beyond the plan's before it grows
// large in memory. Each row is returned with its 1-based row number, and
// with it the look-up of each cell's type, formula and date format.
//
// The rows come from one streaming pass over the worksheet XML
// (scanSheet), which also gives every cell's type, style and formula; the
// date formats are looked up per style in the workbook's styles. Where
// that pass does not apply, excelize reads the rows (entryRowsExcelize).
func entryRows(f *excelize.File, path string, ds dataSheet) ([]sheetRow, func(string) cellInfo, error) {
	l := ds.layout
	c := layoutColumns(l.Plan)
	keep := len(c.headers(l.Plan))
	limitRows := len(l.Units)*c.rowsPer() + 1 + extraRows
	sst, ok := ds.sst, ds.sstOK
	if !ok {
		sst, ok = sharedStrings(f)
	}
	var sc *scannedSheet
	if ok {
		sc, ok = scanSheetWith(f, SheetEntry, sst, scanLimits{cols: maxColumns, rows: limitRows})
	}
	if !ok {
		rows, err := entryRowsExcelize(f, path, l)
		if err != nil {
			return nil, nil, err
		}
		return rows, newCellTyper(f, SheetEntry).info, nil
	}
	if sc.wide != "" {
		col, _, _ := excelize.CellNameToCoordinates(sc.wide)
		return nil, nil, tooWide(path, sc.wide, col)
	}
	if sc.many > 0 {
		return nil, nil, tooLong(path, sc.many, limitRows, l, c)
	}
	var out []sheetRow
	for r, cells := range sc.rows {
		if len(cells) == 0 {
			continue
		}
		if len(cells) > keep+2 { // the Status columns may be absent: keep two more
			cells = cells[:keep+2]
		}
		out = append(out, sheetRow{num: r + 1, cells: cells})
	}
	return out, newCellTyper(f, SheetEntry).fromScan(sc), nil
}

func tooWide(path, ref string, col int) error {
	return &FileError{Path: path, Sheet: SheetEntry, Cell: ref, Msg: fmt.Sprintf("a cell in column %s, beyond the %d columns (up to %s) the reader accepts; delete the stray cells right of the Notes column and save again", colName(col), maxColumns, colName(maxColumns))}
}

func tooLong(path string, row, limitRows int, l design.Layout, c columns) error {
	return &FileError{Path: path, Sheet: SheetEntry, Cell: cell(1, row), Msg: fmt.Sprintf("more than %d rows with content, where the plan has %d; delete the rows below the units and save again", limitRows, len(l.Units)*c.rowsPer())}
}

// entryRowsExcelize is entryRows through excelize's row iterator, for a
// sheet the streaming pass does not handle. The rows are collected before
// they are checked because the check's cell types then come from
// excelize's in-memory worksheet, which pads every row out to its last
// cell: the bounds must hold before that sheet is loaded.
func entryRowsExcelize(f *excelize.File, path string, l design.Layout) ([]sheetRow, error) {
	it, err := f.Rows(SheetEntry)
	if err != nil {
		return nil, &FileError{Path: path, Sheet: SheetEntry, Msg: "the data-entry sheet is missing or unreadable (" + err.Error() + ")"}
	}
	defer it.Close()
	c := layoutColumns(l.Plan)
	keep := len(c.headers(l.Plan))
	limitRows := len(l.Units)*c.rowsPer() + 1 + extraRows
	var out []sheetRow
	for r := 1; it.Next(); r++ {
		cells, err := it.Columns(excelize.Options{RawCellValue: true})
		if err != nil {
			return nil, &FileError{Path: path, Sheet: SheetEntry, Cell: cell(1, r), Msg: "row unreadable: " + err.Error()}
		}
		if len(cells) == 0 {
			continue
		}
		if len(cells) > maxColumns {
			return nil, tooWide(path, cell(len(cells), r), len(cells))
		}
		if len(out) >= limitRows {
			return nil, tooLong(path, r, limitRows, l, c)
		}
		if len(cells) > keep+2 { // the Status columns may be absent: keep two more
			cells = cells[:keep+2]
		}
		out = append(out, sheetRow{num: r, cells: cells})
	}
	if err := it.Error(); err != nil {
		return nil, &FileError{Path: path, Sheet: SheetEntry, Msg: "unreadable: " + err.Error()}
	}
	return out, nil
}

// sheetRow is one row of a sheet or CSV file: its 1-based row (or line)
// number and its cells.
type sheetRow struct {
	num   int
	cells []string
	// line is the CSV line the record starts on (0 for a sheet).
	line int
	// fields is the CSV record's field count before padding (0 for a sheet).
	fields int
}

// ErrNotFilled is returned by Fill for a layout without responses.
var ErrNotFilled = errors.New("workbook: the plan has no responses to fill")

// ReadLayout returns the layout stored in a workbook (unblinded with key
// when the plan is blind), without checking the Entry sheet.
func ReadLayout(path string, key *design.Key) (design.Layout, error) {
	if err := checkKind(path); err != nil {
		return design.Layout{}, err
	}
	ds, err := readPlanSheet(path, ReadOptions{Key: key})
	if err != nil {
		return design.Layout{}, err
	}
	l := ds.layout
	if l.Plan.Blind && key == nil {
		return design.Layout{}, &FileError{Path: path, Msg: "the workbook is blind: give its key file with --key to unblind it"}
	}
	if !l.Plan.Blind && key != nil {
		return design.Layout{}, notBlind(path)
	}
	return l, nil
}

// readPlanSheet opens the workbook at path and reads its hidden sheet, as
// readData does, with the package read directly when it can be.
func readPlanSheet(path string, opt ReadOptions) (dataSheet, error) {
	if p, ok := openParts(path, opt.UnzipLimit); ok {
		ds, err := func() (dataSheet, error) {
			defer p.close()
			sst, ok := p.sharedStrings()
			if !ok {
				return dataSheet{}, errNoStream
			}
			return p.readData(path, opt, sst)
		}()
		if err != errNoStream {
			return ds, err
		}
	}
	f, err := open(path, opt.UnzipLimit)
	if err != nil {
		return dataSheet{}, err
	}
	defer f.Close()
	return readData(f, path, opt)
}
