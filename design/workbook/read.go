package workbook

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"regexp"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"

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
}

// Simulated reports whether the workbook's values were filled in by a
// simulation rather than measured.
func (f *Filled) Simulated() bool { return strings.Contains(f.Label, "SIMULATED") }

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
	// UnzipLimit overrides UnzipSizeLimit (bytes unpacked in all); 0 keeps
	// the default.
	UnzipLimit int64
}

var decimalCommaRE = regexp.MustCompile(`^[+-]?\d+,\d+$`)

// Read opens a filled workbook, verifies its stored plan and checks every
// row of the Entry sheet. The file is only read. Problems found in cells are
// in Filled.Problems; a *FileError is returned when the file cannot be used
// at all (not a workbook, plan sheet missing or edited).
func Read(path string, opt ReadOptions) (*Filled, error) {
	limit := int64(UnzipSizeLimit)
	if opt.UnzipLimit > 0 {
		limit = opt.UnzipLimit
	}
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true, UnzipSizeLimit: limit, UnzipXMLSizeLimit: min(int64(UnzipXMLSizeLimit), limit)})
	if err != nil {
		if strings.Contains(err.Error(), "size exceeds") || strings.Contains(err.Error(), "limit") {
			return nil, &FileError{Path: path, Msg: fmt.Sprintf("unpacks to more than %d MiB, the limit for a workbook; it is not a data-entry workbook allot wrote (a workbook of a million units unpacks to far less)", limit>>20)}
		}
		return nil, &FileError{Path: path, Msg: "cannot be read as an .xlsx workbook (" + err.Error() + "); give the file written by `allot layout` or a copy re-saved as .xlsx"}
	}
	defer f.Close()
	l, labels, err := readData(f, path, opt.Key)
	if err != nil {
		return nil, err
	}
	fl, err := readEntry(f, path, l, labels, opt)
	if err != nil {
		return nil, err
	}
	fl.Sealed = l.Plan.Blind && opt.Key == nil
	fl.Label, _ = f.GetCellValue(SheetStudy, "A2")
	return fl, nil
}

// readData reads the hidden sheet. It returns the layout and, for blind
// plans, each unit's code; with a key the layout is unblinded (treatments
// and seed restored) after the key is checked against the fingerprint.
func readData(f *excelize.File, path string, key *design.Key) (design.Layout, []string, error) {
	fail := func(cell, msg string) error {
		return &FileError{Path: path, Sheet: SheetData, Cell: cell, Msg: msg}
	}
	if idx, err := f.GetSheetIndex(SheetData); err != nil || idx < 0 {
		return design.Layout{}, nil, fail("", "the hidden plan sheet is missing, so the workbook cannot be matched to its plan; start again from the workbook written by `allot layout`")
	}
	get := func(c string) string {
		v, _ := f.GetCellValue(SheetData, c, excelize.Options{RawCellValue: true})
		return v
	}
	fp, sum := get("B1"), get("B2")
	n, err := strconv.Atoi(get("B3"))
	if err != nil || n < 1 {
		return design.Layout{}, nil, fail("B3", "the chunk count is not a positive number; the plan sheet was edited")
	}
	var sb strings.Builder
	for i := 0; i < n; i++ {
		sb.WriteString(get(cell(1, 4+i)))
	}
	doc := sb.String()
	if digest([]byte(doc)) != sum {
		return design.Layout{}, nil, fail("A4", "the stored plan does not match its checksum in B2: the plan sheet was edited; use an unedited copy of the workbook")
	}
	var st stored
	if err := json.Unmarshal([]byte(doc), &st); err != nil {
		return design.Layout{}, nil, fail("A4", "the stored plan is not valid JSON: "+err.Error())
	}
	p, err := design.ParsePlan(st.Plan)
	if err != nil {
		return design.Layout{}, nil, fail("A4", "the stored plan is not valid: "+err.Error())
	}
	var units []design.Unit
	if err := json.Unmarshal(st.Units, &units); err != nil {
		return design.Layout{}, nil, fail("A4", "the stored units are not valid JSON: "+err.Error())
	}
	l := design.Layout{Plan: p, Units: units}
	if !p.Blind {
		if p.Fingerprint() != fp {
			return design.Layout{}, nil, fail("B1", "the plan fingerprint does not match the stored plan: the plan sheet was edited")
		}
		if err := l.Check(); err != nil {
			return design.Layout{}, nil, fail("A4", "the stored layout is inconsistent: "+err.Error())
		}
		return l, nil, nil
	}
	if len(st.Labels) != len(units) {
		return design.Layout{}, nil, fail("A4", "the stored blind codes do not match the units: the plan sheet was edited")
	}
	if key == nil {
		return l, st.Labels, nil
	}
	// Unblind: the key's seed must reproduce the full plan's fingerprint.
	full := p
	full.Seed = uint64(key.Seed)
	if key.Fingerprint != fp || full.Fingerprint() != fp {
		return design.Layout{}, nil, &FileError{Path: path, Sheet: SheetData, Cell: "B1", Msg: "the key belongs to another plan (its fingerprint and seed do not reproduce this workbook's); give the key file written with this layout"}
	}
	byCode := map[string]int{}
	for t, c := range key.Codes {
		byCode[c] = t
	}
	for i := range units {
		t, ok := byCode[st.Labels[i]]
		if !ok {
			return design.Layout{}, nil, fail("A4", fmt.Sprintf("unit %s has code %q, which the key does not know", units[i].ID, st.Labels[i]))
		}
		units[i].Treatment = t
	}
	l = design.Layout{Plan: full, Units: units, Codes: key.Codes}
	if err := l.Check(); err != nil {
		return design.Layout{}, nil, fail("A4", "the unblinded layout is inconsistent: "+err.Error())
	}
	return l, st.Labels, nil
}

func readEntry(f *excelize.File, path string, l design.Layout, labels []string, opt ReadOptions) (*Filled, error) {
	rows, err := f.GetRows(SheetEntry, excelize.Options{RawCellValue: true})
	if err != nil {
		return nil, &FileError{Path: path, Sheet: SheetEntry, Msg: "the data-entry sheet is missing or unreadable (" + err.Error() + ")"}
	}
	isText := func(ref string) bool {
		typ, _ := f.GetCellType(SheetEntry, ref)
		return typ != excelize.CellTypeNumber && typ != excelize.CellTypeUnset
	}
	return checkRows(path, SheetEntry, rows, isText, l, labels, opt)
}

// checkRows checks the data rows of an Entry sheet or its CSV twin. isText
// tells whether a cell holds text rather than a number (nil: every cell is
// text, as in CSV, where a number in text is normal and not reported).
func checkRows(path, sheet string, rows [][]string, isText func(ref string) bool, l design.Layout, labels []string, opt ReadOptions) (*Filled, error) {
	p := l.Plan
	c := layoutColumns(p)
	heads := c.headers(p)
	out := &Filled{Layout: l}
	for _, r := range p.Responses {
		out.Responses = append(out.Responses, r.Name)
	}
	out.Values = make([][]Value, len(p.Responses))
	for i := range out.Values {
		out.Values[i] = make([]Value, len(l.Units))
		for j := range out.Values[i] {
			out.Values[i][j].Missing = true
		}
	}
	if c.subsamples > 0 {
		out.Subs = make([][][]Value, len(p.Responses))
		for k := range out.Subs {
			out.Subs[k] = make([][]Value, len(l.Units))
			for i := range out.Subs[k] {
				out.Subs[k][i] = make([]Value, c.subsamples)
				for j := range out.Subs[k][i] {
					out.Subs[k][i][j].Missing = true
				}
			}
		}
	}
	add := func(sev Severity, cellRef, unit, msg string) {
		out.Problems = append(out.Problems, Problem{Severity: sev, Level: sev.String(), Sheet: sheet, Cell: cellRef, Unit: unit, Msg: msg})
	}
	if len(rows) == 0 {
		return nil, &FileError{Path: path, Sheet: sheet, Cell: "A1", Msg: "the sheet is empty: the header row and unit rows were deleted"}
	}
	for i, h := range heads {
		got := ""
		if i < len(rows[0]) {
			got = strings.TrimSpace(rows[0][i])
		}
		if got != h {
			return nil, &FileError{Path: path, Sheet: sheet, Cell: cell(i+1, 1), Msg: fmt.Sprintf("header %q where %q belongs: columns were moved, renamed or deleted; restore the column order", got, h)}
		}
	}
	index := map[string]int{}
	for i, u := range l.Units {
		index[u.ID] = i
	}
	tr := p.Treatments()
	nd := c.designCount(p)
	seenRow := map[string]string{}
	for r := 1; r < len(rows); r++ {
		row := rows[r]
		at := func(j int) string {
			if j < len(row) {
				return strings.TrimSpace(row[j])
			}
			return ""
		}
		blank := true
		for j := range row {
			blank = blank && strings.TrimSpace(row[j]) == ""
		}
		if blank {
			continue
		}
		ref := func(j int) string { return cell(j+1, r+1) }
		id := at(0)
		ui, ok := index[id]
		if !ok {
			add(Error, ref(0), id, fmt.Sprintf("unit %q is not in the plan; correct the ID or delete the row", id))
			continue
		}
		sub, key := 1, id
		if c.subsamples > 0 {
			n, err := strconv.Atoi(at(nd - 1))
			if err != nil || n < 1 || n > c.subsamples {
				add(Error, ref(nd-1), id, fmt.Sprintf("subsample %q: must be a whole number from 1 to %d; restore it", at(nd-1), c.subsamples))
				continue
			}
			sub, key = n, id+"/"+strconv.Itoa(n)
		}
		if prev, dup := seenRow[key]; dup {
			what := "unit " + id
			if c.subsamples > 0 {
				what += fmt.Sprintf(" subsample %d", sub)
			}
			add(Error, ref(0), id, fmt.Sprintf("%s appears again (first in %s); delete the duplicate row", what, prev))
			continue
		}
		seenRow[key] = ref(0)
		seenRow[id] = ref(0)
		label := ""
		if labels != nil {
			label = labels[ui]
		} else {
			label = l.Label(l.Units[ui])
		}
		want := designCells(c, l.Units[ui], sub, label, tr)
		for j := 1; j < len(want); j++ {
			if got := at(j); got != want[j] {
				add(Error, ref(j), id, fmt.Sprintf("%s was %q in the plan and is now %q; restore it (the plan, not the sheet, says what each unit received)", heads[j], want[j], got))
			}
		}
		for k, resp := range p.Responses {
			j := nd + k
			text := isText != nil && isText(ref(j))
			v, prob := parseResponse(ref(j), at(j), text || isText == nil, isText == nil, resp, opt)
			if prob != "" {
				sev := Error
				if v.Text != "" {
					sev = Warning
				}
				add(sev, ref(j), id, prob)
			}
			if c.subsamples > 0 {
				out.Subs[k][ui][sub-1] = v
				if !v.Missing {
					out.Values[k][ui].Missing = false
				}
			} else {
				out.Values[k][ui] = v
			}
		}
	}
	for i, u := range l.Units {
		for sub := 1; c.subsamples > 0 && sub <= c.subsamples; sub++ {
			if _, ok := seenRow[u.ID+"/"+strconv.Itoa(sub)]; !ok && seenRow[u.ID] != "" {
				add(Error, "", u.ID, fmt.Sprintf("unit %s subsample %d has no row: a row was deleted; add it back", u.ID, sub))
			}
		}
		if _, ok := seenRow[u.ID]; !ok {
			what := ""
			switch {
			case labels != nil:
				what = " (" + labels[i] + ")"
			case u.Treatment >= 0:
				what = " (" + tr[u.Treatment].Name + ")"
			}
			add(Error, "", u.ID, fmt.Sprintf("unit %s%s has no row: a row was deleted; add it back with its unit ID", u.ID, what))
		}
	}
	for k, resp := range p.Responses {
		missing := map[string]int{}
		var order []string
		for i, u := range l.Units {
			if _, ok := seenRow[u.ID]; ok && out.Values[k][i].Missing {
				name := ""
				switch {
				case labels != nil:
					name = labels[i]
				default:
					name = tr[u.Treatment].Name
				}
				if missing[name] == 0 {
					order = append(order, name)
				}
				missing[name]++
			}
		}
		if labels == nil {
			order = order[:0]
			for _, t := range tr {
				if missing[t.Name] > 0 {
					order = append(order, t.Name)
				}
			}
		}
		for _, name := range order {
			add(Warning, "", "", fmt.Sprintf("%s: %d unit(s) of %s %q have no value (missing)", resp.Name, missing[name], strings.ToLower(treatmentWord(p)), name))
		}
	}
	return out, nil
}

// parseResponse checks one response cell. It returns the value and, when
// something is wrong, a message; a message with a usable value is a warning.
func parseResponse(ref, raw string, isText, textNormal bool, r design.Response, opt ReadOptions) (Value, string) {
	v := Value{Cell: ref, Missing: true}
	if raw == "" {
		return v, ""
	}
	text := raw
	var warn string
	if isText {
		switch {
		case decimalCommaRE.MatchString(raw):
			if !opt.DecimalComma {
				return v, fmt.Sprintf("%q has a decimal comma; retype it with a decimal point, or run again with --decimal-comma", raw)
			}
			text = strings.Replace(raw, ",", ".", 1)
		default:
			if _, err := strconv.ParseFloat(raw, 64); err != nil {
				return v, fmt.Sprintf("%q is not a number; correct the cell (leave it empty if the unit was not measured)", raw)
			}
			if !textNormal {
				warn = fmt.Sprintf("%q is a number stored as text; it was read as %s", raw, raw)
			}
		}
	}
	x, err := strconv.ParseFloat(text, 64)
	if err != nil {
		return v, fmt.Sprintf("%q is not a number; correct the cell", raw)
	}
	if r.Min != nil && x < *r.Min || r.Max != nil && x > *r.Max {
		return v, fmt.Sprintf("%s is outside the declared range %s for %s; correct it or widen the range in the plan", text, rangeText(r), r.Name)
	}
	v.Text, v.Missing = text, false
	return v, warn
}

// ErrNotFilled is returned by Fill for a layout without responses.
var ErrNotFilled = errors.New("workbook: the plan has no responses to fill")

// ReadLayout returns the layout stored in a workbook (unblinded with key
// when the plan is blind), without checking the Entry sheet.
func ReadLayout(path string, key *design.Key) (design.Layout, error) {
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true, UnzipSizeLimit: UnzipSizeLimit, UnzipXMLSizeLimit: UnzipXMLSizeLimit})
	if err != nil {
		return design.Layout{}, &FileError{Path: path, Msg: "cannot be read as an .xlsx workbook (" + err.Error() + ")"}
	}
	defer f.Close()
	l, _, err := readData(f, path, key)
	if err != nil {
		return design.Layout{}, err
	}
	if l.Plan.Blind && key == nil {
		return design.Layout{}, &FileError{Path: path, Msg: "the workbook is blind: give its key file with --key to unblind it"}
	}
	return l, nil
}

// ReadCSV checks a CSV export of the Entry sheet (header row and unit rows,
// as allot layout -o FILE.csv writes them, filled in) against layout l. The
// cells are named as in the sheet (A1 is the first header), under the
// sheet name "CSV". A blind layout needs its key in opt.
func ReadCSV(r io.Reader, path string, l design.Layout, opt ReadOptions) (*Filled, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	rows, err := cr.ReadAll()
	if err != nil {
		return nil, &FileError{Path: path, Msg: "not a readable CSV file: " + err.Error()}
	}
	for _, row := range rows {
		for j := range row {
			row[j] = UnescapeCell(row[j])
		}
	}
	var labels []string
	if l.Plan.Blind {
		for _, u := range l.Units {
			labels = append(labels, l.Label(u))
		}
	}
	return checkRows(path, "CSV", rows, nil, l, labels, opt)
}
