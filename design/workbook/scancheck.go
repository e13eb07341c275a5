package workbook

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
)

// ScanProblem is one finding of the scans check, located by line.
type ScanProblem struct {
	Severity Severity `json:"-"`
	Level    string   `json:"severity"`
	Line     int      `json:"line,omitempty"`
	Code     string   `json:"code,omitempty"`
	Unit     string   `json:"unit,omitempty"`
	Msg      string   `json:"message"`
}

func (p ScanProblem) String() string {
	if p.Line == 0 {
		// A summary over the whole file.
		return fmt.Sprintf("%s: %s", p.Severity, p.Msg)
	}
	loc := "line " + strconv.Itoa(p.Line)
	if p.Unit != "" {
		loc += " (unit " + p.Unit + ")"
	}
	return fmt.Sprintf("%s: %s: %s", p.Severity, loc, p.Msg)
}

// ScanResult is the outcome of matching a scans file to a plan.
type ScanResult struct {
	Path string `json:"file"`
	// Rows is the number of scan rows read; Matched the rows that name a
	// unit of the plan and carry a usable value; Units the distinct units
	// matched.
	Rows     int           `json:"rows"`
	Matched  int           `json:"matched"`
	Units    int           `json:"units"`
	Problems []ScanProblem `json:"problems"`
}

// Errors returns the number of error-level problems.
func (r *ScanResult) Errors() int {
	n := 0
	for _, p := range r.Problems {
		if p.Severity == Error {
			n++
		}
	}
	return n
}

// CheckScans matches scans to the units of view v (the plan of the workbook
// or layout being checked) by the code's fingerprint and unit ID, and
// reports by line: texts that are not unit codes, codes of another plan,
// unknown units or subsamples, unknown responses, values that are not
// numbers or outside the declared range, the same unit scanned twice with
// different values and, when fl (the same plan's filled workbook, read by
// Read or ReadCSV) is given, values that differ from the workbook's. Units
// without any scan are summarised per response as a warning.
func CheckScans(path string, scans []Scan, v design.View, fl *Filled, opt ReadOptions) *ScanResult {
	res := &ScanResult{Path: path, Rows: len(scans), Problems: []ScanProblem{}}
	add := func(sev Severity, s Scan, unit, msg string) {
		res.Problems = append(res.Problems, ScanProblem{Severity: sev, Level: sev.String(), Line: s.Line, Code: s.Code, Unit: unit, Msg: msg})
	}
	p := v.Layout.Plan
	find := v.Finder()
	resp := map[string]int{}
	var names []string
	for k, r := range p.Responses {
		resp[r.Name] = k
		names = append(names, r.Name)
	}
	if fl != nil && !sameUnits(fl.Layout, v.Layout) {
		fl = nil
	}
	type key struct{ unit, sub, resp int }
	type seenAt struct {
		line int
		x    float64
		text string
	}
	seen := map[key]seenAt{}
	scanned := make([][]bool, len(p.Responses))
	for k := range scanned {
		scanned[k] = make([]bool, len(v.Layout.Units))
	}
	units := map[int]bool{}
	for _, s := range scans {
		if s.Fields != 3 {
			add(Error, s, "", fmt.Sprintf("%d field(s) where 3 belong (code, response, value); correct the row", s.Fields))
			continue
		}
		fp, uid, sub, err := design.ParseUnitCode(s.Code)
		if err != nil {
			add(Error, s, "", err.Error()+"; scan the label again or correct the text")
			continue
		}
		if fp != v.Short() {
			add(Error, s, "", fmt.Sprintf("code %s belongs to another plan (fingerprint %s…, this plan's is %s…): the label is from another trial; find where that unit came from", s.Code, fp, v.Short()))
			continue
		}
		ui, ok := find(uid)
		if !ok {
			add(Error, s, "", fmt.Sprintf("code %s names unit %q, which is not in the plan; scan the label again or check it", s.Code, uid))
			continue
		}
		id := v.Layout.Units[ui].ID
		switch {
		case p.Subsamples > 1 && sub == 0:
			add(Error, s, id, fmt.Sprintf("the code names the unit but not its subsample (the plan records %d per unit); scan the subsample's label", p.Subsamples))
			continue
		case p.Subsamples <= 1 && sub > 0:
			add(Error, s, id, fmt.Sprintf("the code names subsample %d, but the plan records one measurement per unit; scan the unit's label", sub))
			continue
		case sub > p.Subsamples:
			add(Error, s, id, fmt.Sprintf("subsample %d: the plan records %d per unit", sub, p.Subsamples))
			continue
		}
		name := s.Response
		if name == "" && len(names) == 1 {
			name = names[0]
		}
		k, ok := resp[name]
		if !ok {
			add(Error, s, id, fmt.Sprintf("response %q is not in the plan (responses: %s); correct the name", s.Response, strings.Join(names, ", ")))
			continue
		}
		if s.Value == "" {
			add(Error, s, id, "no value; add the value or delete the row")
			continue
		}
		text, x, msg := scanValue(s.Value, p.Responses[k], opt.DecimalComma)
		if msg != "" {
			add(Error, s, id, msg)
			continue
		}
		val := Value{Text: text}
		what := name
		if sub > 0 {
			what = fmt.Sprintf("%s of subsample %d", name, sub)
		}
		kk := key{ui, sub, k}
		if prev, dup := seen[kk]; dup {
			if prev.x == x {
				add(Warning, s, id, fmt.Sprintf("%s scanned again with the same value as on line %d", what, prev.line))
			} else {
				add(Error, s, id, fmt.Sprintf("%s scanned again: %s here, %s on line %d; measure again and keep one row", what, val.Text, prev.text, prev.line))
			}
			continue
		}
		seen[kk] = seenAt{s.Line, x, val.Text}
		if fl != nil {
			wv := fl.Values[k][ui]
			if sub > 0 && fl.Subs != nil {
				wv = fl.Subs[k][ui][sub-1]
			}
			if !wv.Missing && wv.Text != "" {
				if y, err := strconv.ParseFloat(wv.Text, 64); err == nil && y != x {
					add(Error, s, id, fmt.Sprintf("%s is %s in the scan but %s in the workbook (cell %s); find which is right and correct the other", what, val.Text, wv.Text, wv.Cell))
				}
			}
		}
		scanned[k][ui] = true
		units[ui] = true
		res.Matched++
	}
	res.Units = len(units)
	for k, name := range names {
		var missing []string
		for i, ok := range scanned[k] {
			if !ok {
				missing = append(missing, v.Layout.Units[i].ID)
			}
		}
		if len(missing) == 0 || len(missing) == len(v.Layout.Units) && len(names) > 1 {
			// A response nobody scanned (others were) is not a gap.
			continue
		}
		list := strings.Join(missing[:min(len(missing), 12)], ", ")
		if len(missing) > 12 {
			list += fmt.Sprintf(" and %d more", len(missing)-12)
		}
		res.Problems = append(res.Problems, ScanProblem{Severity: Warning, Level: Warning.String(),
			Msg: fmt.Sprintf("%s: %d of %d units have no scan: %s", name, len(missing), len(v.Layout.Units), list)})
	}
	return res
}

// sameUnits reports whether two layouts list the same units in the same
// order.
func sameUnits(a, b design.Layout) bool {
	if len(a.Units) != len(b.Units) {
		return false
	}
	for i := range a.Units {
		if a.Units[i].ID != b.Units[i].ID {
			return false
		}
	}
	return true
}

// scanValue reads a scanned value: a finite decimal number (with a decimal
// comma when decimalComma is set) inside the response's declared range.
func scanValue(raw string, r design.Response, decimalComma bool) (string, float64, string) {
	text := raw
	if decimalComma && strings.Count(raw, ",") == 1 && !strings.Contains(raw, ".") {
		text = strings.Replace(raw, ",", ".", 1)
	}
	x, err := strconv.ParseFloat(text, 64)
	switch {
	case err != nil && strings.Contains(raw, ","):
		return "", 0, fmt.Sprintf("%q is not a number; retype it with a decimal point, or run again with --decimal-comma", raw)
	case err != nil || math.IsNaN(x) || math.IsInf(x, 0):
		return "", 0, fmt.Sprintf("%q is not a number; correct the value", raw)
	case r.Min != nil && x < *r.Min, r.Max != nil && x > *r.Max:
		lo, hi := "", ""
		if r.Min != nil {
			lo = strconv.FormatFloat(*r.Min, 'g', -1, 64)
		}
		if r.Max != nil {
			hi = strconv.FormatFloat(*r.Max, 'g', -1, 64)
		}
		return "", 0, fmt.Sprintf("%s is outside the declared range %s..%s for %s; correct it or widen the range in the plan", text, lo, hi, r.Name)
	}
	return text, x, ""
}
