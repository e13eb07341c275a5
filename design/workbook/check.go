package workbook

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/decimal"
)

// checker checks the rows of an Entry sheet or its CSV twin against a
// layout, one row at a time: header, then each data row, then finish.
type checker struct {
	path, sheet string
	l           design.Layout
	labels      []string // blind codes per unit, or nil
	opt         ReadOptions
	c           columns
	heads       []string
	nd          int
	width       int // fields of the header row (CSV: every row must have as many)
	tr          []design.Treatment
	index       map[string]int    // unit ID → index in l.Units (the last of a repeated ID)
	ranges      []design.Response // the responses with --range applied
	// unique says that no unit ID repeats; then a row holding the unit
	// of the previous row (last) or the one after it is found without
	// the map.
	unique bool
	last   int
	// first holds the row (line) number of each unit's first row, 0
	// before it is seen; with subsamples, subRow[i*subsamples+s-1] that of
	// unit i's subsample s.
	first, subRow []int
	// cellInfo tells what the cell at row and column (1-based) holds
	// besides its text (nil for CSV, where every cell is text and a
	// number in text is normal).
	cellInfo func(row, col int) cellInfo
	label    func(design.Unit) string
	out      *Filled
}

func newChecker(path, sheet string, l design.Layout, labels []string, opt ReadOptions) *checker {
	p := l.Plan
	k := &checker{path: path, sheet: sheet, l: l, labels: labels, opt: opt, c: layoutColumns(p), tr: p.Treatments(),
		index: make(map[string]int, len(l.Units)), first: make([]int, len(l.Units)), out: &Filled{Layout: l}}
	k.nd = k.c.designCount(p)
	if k.c.subsamples > 0 {
		k.subRow = make([]int, len(l.Units)*k.c.subsamples)
	}
	k.label = labeller(l)
	k.unique, k.last = true, -1
	for i, u := range l.Units {
		if _, dup := k.index[u.ID]; dup {
			k.unique = false
		}
		k.index[u.ID] = i
	}
	k.ranges = append([]design.Response(nil), p.Responses...)
	for name, r := range opt.Ranges {
		for i := range k.ranges {
			if k.ranges[i].Name == name {
				was := rangeText(k.ranges[i])
				k.ranges[i].Min, k.ranges[i].Max = r.Min, r.Max
				k.add(Warning, "", "", fmt.Sprintf("%s: checked against the range %s given with --range, not the plan's %s; record the change with the plan's other amendments", name, r, was))
			}
		}
	}
	o := k.out
	for _, r := range p.Responses {
		o.Responses = append(o.Responses, r.Name)
	}
	o.Values = make([][]Value, len(p.Responses))
	for i := range o.Values {
		o.Values[i] = make([]Value, len(l.Units))
		for j := range o.Values[i] {
			o.Values[i][j].Missing = true
		}
	}
	if k.c.subsamples > 0 {
		o.Subs = make([][][]Value, len(p.Responses))
		for r := range o.Subs {
			o.Subs[r] = make([][]Value, len(l.Units))
			for i := range o.Subs[r] {
				o.Subs[r][i] = make([]Value, k.c.subsamples)
				for j := range o.Subs[r][i] {
					o.Subs[r][i][j].Missing = true
				}
			}
		}
	}
	o.Status = make([]UnitStatus, len(l.Units))
	return k
}

func (k *checker) add(sev Severity, cellRef, unit, msg string) {
	k.out.Problems = append(k.out.Problems, Problem{Severity: sev, Level: sev.String(), Sheet: k.sheet, Cell: cellRef, Unit: unit, Msg: msg})
}

// addDesign adds an error in the design cells or rows (see
// Filled.DesignProblems).
func (k *checker) addDesign(cellRef, unit, msg string) {
	k.add(Error, cellRef, unit, msg)
	k.out.Problems[len(k.out.Problems)-1].design = true
}

// checkRanges refuses a --range that names no response.
func (k *checker) checkRanges() error {
	for name := range k.opt.Ranges {
		found := false
		for _, r := range k.l.Plan.Responses {
			found = found || r.Name == name
		}
		if !found {
			return &FileError{Path: k.path, Msg: fmt.Sprintf("--range %s: the plan has no such response (responses: %s)", name, strings.Join(k.out.Responses, ", "))}
		}
	}
	return nil
}

// run checks the header and every row, and returns the result.
func (k *checker) run(rows []sheetRow) (*Filled, error) {
	if err := k.checkRanges(); err != nil {
		return nil, err
	}
	if len(rows) == 0 || rows[0].num != 1 {
		return nil, k.noHeader()
	}
	if err := k.header(rows[0].cells); err != nil {
		return nil, err
	}
	for _, r := range rows[1:] {
		k.row(r)
	}
	k.finish()
	return k.out, nil
}

// noHeader is the error of a sheet whose first row with content is not
// the header row.
func (k *checker) noHeader() error {
	return &FileError{Path: k.path, Sheet: k.sheet, Cell: "A1", Msg: "the header row is empty: the header row (and perhaps the unit rows) were deleted; start again from the workbook written by allot layout"}
}

// header checks the header row. The Status and Reason columns may be
// absent (workbooks written before they existed).
func (k *checker) header(row []string) error {
	p := k.l.Plan
	get := func(i int) string {
		if i < len(row) {
			return strings.TrimSpace(row[i])
		}
		return ""
	}
	if sc := k.c.statusCol(p); sc >= 0 && get(sc) == headNotes {
		k.c.status = false
	}
	k.heads = k.c.headers(p)
	k.width = len(row)
	for i, h := range k.heads {
		got := get(i)
		if got == h {
			continue
		}
		msg := fmt.Sprintf("header %q where %q belongs: ", got, h)
		switch {
		case got == "":
			msg += "the column was deleted or its heading cleared; restore the columns in the order " + strings.Join(k.heads, ", ")
		case contains(k.heads, got):
			msg += "the columns were moved; put them back in the order " + strings.Join(k.heads, ", ") + " (sorting rows is fine, moving columns is not)"
		default:
			msg += "the heading was renamed or a column inserted; restore it (the columns are " + strings.Join(k.heads, ", ") + ")"
		}
		return &FileError{Path: k.path, Sheet: k.sheet, Cell: cell(i+1, 1), Msg: msg}
	}
	return nil
}

func contains(list []string, s string) bool {
	for _, v := range list {
		if v == s {
			return true
		}
	}
	return false
}

// row checks one data row.
func (k *checker) row(sr sheetRow) {
	row := sr.cells
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
		return
	}
	ref := func(j int) string { return cell(j+1, sr.num) }
	id := at(0)
	if sr.fields > 0 && sr.fields != k.width {
		k.add(Error, ref(0), id, fmt.Sprintf("line %d has %d fields where the header has %d: a separator is missing or extra (is a value with a comma or semicolon not in quotes?); correct the line", sr.line, sr.fields, k.width))
		return
	}
	ui, ok := k.find(id)
	if !ok {
		k.addDesign(ref(0), id, fmt.Sprintf("unit %q is not in the plan; correct the ID or delete the row", id))
		return
	}
	sub, ok := k.rowKey(ui, sr.num, at, ref)
	if !ok {
		return
	}
	k.designCells(ui, sub, at, ref)
	st := k.status(ui, at, ref)
	for r := range k.ranges {
		k.response(r, ui, sub, st, sr.num, at)
	}
}

// find returns the index of the unit with ID id.
func (k *checker) find(id string) (int, bool) {
	if k.unique {
		for _, i := range [2]int{k.last + 1, k.last} {
			if i >= 0 && i < len(k.l.Units) && k.l.Units[i].ID == id {
				k.last = i
				return i, true
			}
		}
	}
	i, ok := k.index[id]
	if ok {
		k.last = i
	}
	return i, ok
}

// rowKey reads the subsample number and records the row, reporting a
// duplicate; it returns the subsample (1 without subsamples).
func (k *checker) rowKey(ui, num int, at func(int) string, ref func(int) string) (int, bool) {
	id := k.l.Units[ui].ID
	sub, seen := 1, &k.first[ui]
	if k.c.subsamples > 0 {
		n, err := strconv.Atoi(at(k.nd - 1))
		if err != nil || n < 1 || n > k.c.subsamples {
			k.addDesign(ref(k.nd-1), id, fmt.Sprintf("subsample %q: must be a whole number from 1 to %d; restore it", at(k.nd-1), k.c.subsamples))
			return 0, false
		}
		sub, seen = n, &k.subRow[ui*k.c.subsamples+n-1]
	}
	if *seen != 0 {
		what := "unit " + id
		if k.c.subsamples > 0 {
			what += fmt.Sprintf(" subsample %d", sub)
		}
		k.addDesign(ref(0), id, fmt.Sprintf("%s appears again (first in %s); delete the duplicate row", what, cell(1, *seen)))
		return 0, false
	}
	*seen = num
	if k.first[ui] == 0 {
		k.first[ui] = num
	}
	return sub, true
}

// designCells compares a row's design cells with the plan.
func (k *checker) designCells(ui, sub int, at func(int) string, ref func(int) string) {
	u := k.l.Units[ui]
	label := ""
	if k.labels != nil {
		label = k.labels[ui]
	} else {
		label = k.label(u)
	}
	want := designCells(k.c, u, sub, label, k.tr)
	for j := 1; j < len(want); j++ {
		if got := at(j); got != want[j] {
			k.addDesign(ref(j), u.ID, fmt.Sprintf("%s was %q in the plan and is now %q; restore it (the plan, not the sheet, says what each unit received)", k.heads[j], want[j], got))
		}
	}
}

// status reads and checks the Status and Reason cells of a row.
func (k *checker) status(ui int, at func(int) string, ref func(int) string) string {
	sc := k.c.statusCol(k.l.Plan)
	if sc < 0 {
		return ""
	}
	u := k.l.Units[ui]
	raw := at(sc)
	st := strings.ToLower(raw)
	reason := at(sc + 1)
	switch st {
	case "", StatusMeasured, StatusLost, StatusExcluded:
	default:
		k.add(Error, ref(sc), u.ID, fmt.Sprintf("Status %q: must be empty, %s, %s or %s; correct it", raw, StatusMeasured, StatusLost, StatusExcluded))
		return ""
	}
	if (st == StatusLost || st == StatusExcluded) && reason == "" {
		k.add(Error, ref(sc+1), u.ID, fmt.Sprintf("unit %s is %s but the Reason is empty; say why (for example \"died day 12\", \"pot knocked over\")", u.ID, st))
	}
	prev := &k.out.Status[ui]
	if prev.Cell == "" || prev.Status == "" {
		*prev = UnitStatus{Status: st, Reason: reason}
		if st != "" || reason != "" {
			prev.Cell = k.sheet + "!" + ref(sc)
		}
	}
	return st
}

// response checks response r of a row (row number num).
func (k *checker) response(r, ui, sub int, st string, num int, at func(int) string) {
	j := k.nd + r
	u := k.l.Units[ui]
	var info cellInfo
	if k.cellInfo != nil {
		info = k.cellInfo(num, j+1)
	} else {
		info.kind = kindText
		info.csv = true
	}
	ref := cell(j+1, num)
	v, msg, sev := parseResponse(ref, at(j), info, k.ranges[r], k.opt)
	if msg != "" {
		k.add(sev, ref, u.ID, msg)
	}
	switch {
	case st == StatusLost && !v.Missing:
		k.add(Error, ref, u.ID, fmt.Sprintf("unit %s is lost but has the value %s; clear the value, or set Status to excluded (a value that must not be analysed) or measured", u.ID, v.Text))
	case st == StatusMeasured && v.Missing && msg == "":
		k.add(Warning, ref, u.ID, fmt.Sprintf("unit %s is measured but %s is empty; enter the value, or set Status to lost and give the Reason", u.ID, k.ranges[r].Name))
	}
	if k.c.subsamples > 0 {
		k.out.Subs[r][ui][sub-1] = v
		if !v.Missing {
			k.out.Values[r][ui].Missing = false
		}
		return
	}
	k.out.Values[r][ui] = v
}

// finish reports units without rows and the missing values per treatment.
func (k *checker) finish() {
	p := k.l.Plan
	for i, u := range k.l.Units {
		for sub := 1; k.c.subsamples > 0 && sub <= k.c.subsamples; sub++ {
			if k.subRow[i*k.c.subsamples+sub-1] == 0 && k.first[i] != 0 {
				k.addDesign("", u.ID, fmt.Sprintf("unit %s subsample %d has no row: a row was deleted; add it back", u.ID, sub))
			}
		}
		if k.first[i] == 0 {
			what := ""
			switch {
			case k.labels != nil:
				what = " (" + k.labels[i] + ")"
			case u.Treatment >= 0:
				what = " (" + k.tr[u.Treatment].Name + ")"
			}
			k.addDesign("", u.ID, fmt.Sprintf("unit %s%s has no row: a row was deleted; add it back with its unit ID", u.ID, what))
		}
	}
	for r, resp := range p.Responses {
		k.missing(r, resp)
	}
	lost, excluded := 0, 0
	for _, s := range k.out.Status {
		switch s.Status {
		case StatusLost:
			lost++
		case StatusExcluded:
			excluded++
		}
	}
	if lost+excluded > 0 {
		k.add(Warning, "", "", fmt.Sprintf("Status: %s lost and %s excluded; they are left out of the analysis and listed with their reasons", units(lost), units(excluded)))
	}
}

func units(n int) string { return count(n, "unit") }

// missing warns, per treatment (or code), of units with a row but no value
// of response r; lost and excluded units are reported by their Status.
func (k *checker) missing(r int, resp design.Response) {
	missing := map[string]int{}
	var order []string
	for i, u := range k.l.Units {
		if k.first[i] == 0 || !k.out.Values[r][i].Missing || k.out.Status[i].Dropped() {
			continue
		}
		name := ""
		switch {
		case k.labels != nil && k.l.Plan.BlindMode == design.BlindUnit:
			name = "" // one code per unit: counted together
		case k.labels != nil:
			name = k.labels[i]
		default:
			name = k.tr[u.Treatment].Name
		}
		if missing[name] == 0 {
			order = append(order, name)
		}
		missing[name]++
	}
	if k.labels == nil {
		order = order[:0]
		for _, t := range k.tr {
			if missing[t.Name] > 0 {
				order = append(order, t.Name)
			}
		}
	}
	for _, name := range order {
		n := missing[name]
		verb := "have"
		if n == 1 {
			verb = "has"
		}
		if name == "" {
			k.add(Warning, "", "", fmt.Sprintf("%s: %s %s no value (missing)", resp.Name, units(n), verb))
			continue
		}
		k.add(Warning, "", "", fmt.Sprintf("%s: %s of %s %q %s no value (missing)", resp.Name, units(n), strings.ToLower(treatmentWord(k.l.Plan)), name, verb))
	}
}

// parseResponse checks one response cell. It returns the value and, when
// something is wrong, a message with its severity: an error leaves the
// cell out, a warning keeps its value.
func parseResponse(ref, raw string, info cellInfo, r design.Response, opt ReadOptions) (Value, string, Severity) {
	v := Value{Cell: ref, Missing: true}
	if msg := info.problem(raw); msg != "" {
		return v, msg, Error
	}
	if raw == "" {
		return v, "", Warning
	}
	text := raw
	var warn string
	if info.kind == kindText {
		if t, ok := decimal.FromComma(raw); ok {
			if !opt.DecimalComma {
				return v, fmt.Sprintf("%q has a decimal comma; retype it with a decimal point, or run again with --decimal-comma", raw), Error
			}
			text = t
		} else if !info.csv {
			if decimal.Check(raw) == nil {
				warn = fmt.Sprintf("%q is a number stored as text; it was read as %s (format the column as a number to avoid this)", raw, raw)
			}
		}
	}
	x, err := decimal.Parse(text)
	if err != nil {
		return v, notNumber(raw, err), Error
	}
	if info.formula != "" {
		warn = fmt.Sprintf("holds the formula =%s; its saved result %s was read: check that it is the measurement, or type the value itself", info.formula, text)
	}
	if r.Whole() && x != math.Trunc(x) {
		return v, fmt.Sprintf("%s is not a whole number: %s is recorded as a %s; correct the cell", text, r.Name, kindWord(r)), Error
	}
	if r.Min != nil && x < *r.Min || r.Max != nil && x > *r.Max {
		return v, fmt.Sprintf("%s is outside the declared range %s for %s; correct it, or if the value is real, check with --range %s=MIN..MAX (and record the change in the plan's amendments)", text, rangeText(r), r.Name, r.Name), Error
	}
	v.Text, v.Missing = text, false
	return v, warn, Warning
}

// kindWord names a response kind for messages.
func kindWord(r design.Response) string {
	switch r.Kind {
	case design.KindCount:
		return "count"
	case design.KindProportion:
		if r.Trials > 0 {
			return fmt.Sprintf("number of successes out of %d", r.Trials)
		}
		return "number of successes out of " + r.TrialsColumn
	case design.KindScore:
		return "score"
	}
	return "measurement"
}

// notNumber is the message for a response text the grammar refused.
func notNumber(raw string, err error) string {
	switch {
	case errors.Is(err, decimal.ErrNaN), errors.Is(err, decimal.ErrInf):
		return fmt.Sprintf("%q %v; leave the cell empty if the unit could not be measured (and set its Status to lost with a Reason)", raw, err)
	case errors.Is(err, decimal.ErrNotDecimal):
		return fmt.Sprintf("%q is not a number; correct the cell (leave it empty if the unit was not measured)", raw)
	}
	return fmt.Sprintf("%q %v; correct the cell", raw, err)
}
