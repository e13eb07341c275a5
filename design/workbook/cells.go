package workbook

import (
	"fmt"
	"strings"

	"github.com/xuri/excelize/v2"
)

// cellKind is what a spreadsheet cell holds, by its stored type.
type cellKind int

const (
	kindNumber cellKind = iota
	kindText
	kindBool
	kindError
	kindDate // an ISO 8601 date cell (t="d")
)

// cellInfo is what the reader knows of a cell besides its text.
type cellInfo struct {
	kind cellKind
	// date is set for a number shown with a date or time format: the
	// spreadsheet turned what was typed ("12.5", "1/2") into a date.
	date bool
	// formula is the cell's formula (without "="), or empty.
	formula string
	// csv marks a CSV cell: text, where a number in text is normal.
	csv bool
}

// problem returns why a cell's value cannot be read as a measurement
// whatever its text, or "".
func (c cellInfo) problem(raw string) string {
	switch {
	case raw == "" && c.formula != "":
		return fmt.Sprintf("holds the formula =%s without a saved result (the program that wrote the file did not calculate it); open the file in a spreadsheet program, let it recalculate, save and check again, or type the value itself", c.formula)
	case raw == "":
		return ""
	case c.kind == kindBool:
		return fmt.Sprintf("is a TRUE/FALSE cell (%s), not a number; type the measurement", raw)
	case c.kind == kindError:
		return fmt.Sprintf("shows the spreadsheet error %s; correct the formula or type the value", raw)
	case c.kind == kindDate, c.kind == kindNumber && c.date:
		return fmt.Sprintf("is formatted as a date or time (stored as %s): the spreadsheet turned what was typed into a date; format the cell as a number and retype the measurement", raw)
	}
	return ""
}

// cellTyper looks up cell types, formulas and number formats of one sheet.
type cellTyper struct {
	f         *excelize.File
	sheet     string
	dateStyle map[int]bool
}

func newCellTyper(f *excelize.File, sheet string) *cellTyper {
	return &cellTyper{f: f, sheet: sheet, dateStyle: map[int]bool{}}
}

func (t *cellTyper) info(ref string) cellInfo {
	var ci cellInfo
	typ, err := t.f.GetCellType(t.sheet, ref)
	if err != nil {
		return cellInfo{kind: kindText}
	}
	switch typ {
	case excelize.CellTypeUnset, excelize.CellTypeNumber:
		ci.kind = kindNumber
	case excelize.CellTypeBool:
		ci.kind = kindBool
	case excelize.CellTypeError:
		ci.kind = kindError
	case excelize.CellTypeDate:
		ci.kind = kindDate
	default:
		ci.kind = kindText
	}
	if fo, err := t.f.GetCellFormula(t.sheet, ref); err == nil {
		ci.formula = fo
	}
	if ci.kind == kindNumber {
		if s, err := t.f.GetCellStyle(t.sheet, ref); err == nil && s > 0 {
			ci.date = t.isDate(s)
		}
	}
	return ci
}

// fromScan returns info for the cells of a streamed sheet: type and
// formula from the scan (a shared formula's text from excelize), date
// formats from the styles.
func (t *cellTyper) fromScan(sc *scannedSheet) func(ref string) cellInfo {
	return func(ref string) cellInfo {
		m, r, c := sc.cell(ref)
		ci := cellInfo{kind: m.kind}
		at := [2]int{r, c}
		if fo, ok := sc.formulas[at]; ok {
			ci.formula = fo
		} else if sc.shared[at] {
			if fo, err := t.f.GetCellFormula(t.sheet, ref); err == nil {
				ci.formula = fo
			}
		}
		if ci.kind == kindNumber && m.style > 0 {
			ci.date = t.isDate(int(m.style))
		}
		return ci
	}
}

// isDate reports whether style s shows numbers as dates or times.
func (t *cellTyper) isDate(s int) bool {
	if d, ok := t.dateStyle[s]; ok {
		return d
	}
	d := false
	if st, err := t.f.GetStyle(s); err == nil && st != nil {
		d = builtinDate(st.NumFmt)
		if st.CustomNumFmt != nil {
			d = dateFormat(*st.CustomNumFmt)
		}
	}
	t.dateStyle[s] = d
	return d
}

// builtinDate reports whether a built-in number format is a date or time
// (ECMA-376 Part 1, §18.8.30: 14–22 and 45–47, and the East Asian date
// formats 27–36 and 50–58).
func builtinDate(id int) bool {
	return id >= 14 && id <= 22 || id >= 27 && id <= 36 || id >= 45 && id <= 47 || id >= 50 && id <= 58
}

// dateFormat reports whether a custom number format code shows a date or
// time: it has a y, m, d, h or s outside quoted text, [..] sections and
// escaped characters.
func dateFormat(code string) bool {
	code = strings.ToLower(code)
	quoted, bracket := false, false
	for i := 0; i < len(code); i++ {
		ch := code[i]
		switch {
		case quoted:
			quoted = ch != '"'
		case bracket:
			bracket = ch != ']'
		case ch == '"':
			quoted = true
		case ch == '[':
			bracket = true
		case ch == '\\' || ch == '_' || ch == '*':
			i++ // the next character is literal (or a fill/space width)
		case strings.IndexByte("ymdhs", ch) >= 0:
			return true
		}
	}
	return false
}
