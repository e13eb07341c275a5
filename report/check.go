package report

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design/workbook"
)

// CheckText writes the result of a read-back check: what was read, every
// problem with its sheet and cell, and the count of values per response.
func CheckText(w io.Writer, path string, fl *workbook.Filled) error {
	var b strings.Builder
	p := fl.Layout.Plan
	fmt.Fprintf(&b, "%s: plan %q (fingerprint %.12s), %s, responses: %s\n", path, p.Title, p.Fingerprint(), plural(len(fl.Layout.Units), "unit", "units"), strings.Join(fl.Responses, ", "))
	if fl.Simulated() {
		b.WriteString("  SIMULATED data (filled in by allot demo), not measurements\n")
	}
	if fl.Sealed {
		b.WriteString("  blind workbook read without its key: treatments stay hidden; give --key to unblind\n")
	}
	nerr, nwarn := 0, 0
	for _, pr := range fl.Problems {
		if pr.Severity == workbook.Error {
			nerr++
		} else {
			nwarn++
		}
		b.WriteString(wrap(pr.String(), 100, "  "))
	}
	total := 0
	for k, r := range fl.Responses {
		have := 0
		for _, v := range fl.Values[k] {
			if !v.Missing {
				have++
			}
		}
		fmt.Fprintf(&b, "  %s: %d of %s %s a value\n", r, have, plural(len(fl.Values[k]), "unit", "units"), map[bool]string{true: "has", false: "have"}[have == 1])
		total += have
	}
	switch {
	case nerr == 0 && total == 0:
		b.WriteString("Result: no errors, but no values have been entered yet.\n")
	case nerr > 0:
		fmt.Fprintf(&b, "Result: %s and %s: correct the cells named above and run allot check again.\n", plural(nerr, "error", "errors"), plural(nwarn, "warning", "warnings"))
	case nwarn > 0:
		fmt.Fprintf(&b, "Result: no errors, %s; the data can be analysed.\n", plural(nwarn, "warning", "warnings"))
	default:
		b.WriteString("Result: no problems; the data can be analysed.\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// CheckFormat names the layout of CheckJSON's document; it changes only
// when a key changes meaning or goes away (new keys may be added).
const CheckFormat = "allot.check/v1"

// CheckJSON writes the check result as JSON: "format" (CheckFormat), the
// file, the plan's fingerprint, units, whether the workbook is blind and
// sealed, the error count, every problem, values and missing per response,
// the counts of units marked lost and excluded and each of them ("losses":
// unit, status, reason, cell), and whether the data are simulated.
func CheckJSON(w io.Writer, path string, fl *workbook.Filled) error {
	type loss struct {
		Unit   string `json:"unit"`
		Status string `json:"status"`
		Reason string `json:"reason"`
		Cell   string `json:"cell"`
	}
	type resp struct {
		Name    string `json:"name"`
		Values  int    `json:"values"`
		Missing int    `json:"missing"`
	}
	out := struct {
		Format      string             `json:"format"`
		File        string             `json:"file"`
		Fingerprint string             `json:"plan_fingerprint"`
		Units       int                `json:"units"`
		Sealed      bool               `json:"blind_sealed"`
		Errors      int                `json:"errors"`
		Problems    []workbook.Problem `json:"problems"`
		Responses   []resp             `json:"responses"`
		Lost        int                `json:"lost"`
		Excluded    int                `json:"excluded"`
		Losses      []loss             `json:"losses"`
		Simulated   bool               `json:"simulated"`
	}{Format: CheckFormat, File: path, Simulated: fl.Simulated(), Fingerprint: fl.Layout.Plan.Fingerprint(), Units: len(fl.Layout.Units), Sealed: fl.Sealed, Errors: fl.Errors(), Problems: fl.Problems}
	if out.Problems == nil {
		out.Problems = []workbook.Problem{}
	}
	for k, r := range fl.Responses {
		rr := resp{Name: r}
		for _, v := range fl.Values[k] {
			if v.Missing {
				rr.Missing++
			} else {
				rr.Values++
			}
		}
		out.Responses = append(out.Responses, rr)
	}
	out.Losses = []loss{}
	for i, st := range fl.Status {
		switch st.Status {
		case workbook.StatusLost:
			out.Lost++
		case workbook.StatusExcluded:
			out.Excluded++
		default:
			continue
		}
		out.Losses = append(out.Losses, loss{Unit: fl.Layout.Units[i].ID, Status: st.Status, Reason: st.Reason, Cell: st.Cell})
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}
