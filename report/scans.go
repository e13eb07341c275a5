package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design/workbook"
)

// ScansText writes the result of matching a scans file to a plan: what was
// matched, every problem by line, and a closing verdict.
func ScansText(w io.Writer, fingerprint string, r *workbook.ScanResult) error {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d scan(s), %d matched to %d unit(s) of plan %.12s\n", r.Path, r.Rows, r.Matched, r.Units, fingerprint)
	nerr, nwarn := 0, 0
	for _, p := range r.Problems {
		if p.Severity == workbook.Error {
			nerr++
		} else {
			nwarn++
		}
		b.WriteString(wrap(p.String(), 100, "  "))
	}
	switch {
	case nerr > 0:
		fmt.Fprintf(&b, "Scans: %s and %s: correct the lines named above (or find the units they name) and run allot check again.\n", plural(nerr, "error", "errors"), plural(nwarn, "warning", "warnings"))
	case nwarn > 0:
		fmt.Fprintf(&b, "Scans: no errors, %s.\n", plural(nwarn, "warning", "warnings"))
	default:
		b.WriteString("Scans: every code belongs to this plan and names one of its units.\n")
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// CheckScansJSON writes the check of a workbook and of its scans as one
// JSON object: {"check": <as CheckJSON>, "scans": {...}}.
func CheckScansJSON(w io.Writer, path string, fl *workbook.Filled, r *workbook.ScanResult) error {
	var check bytes.Buffer
	if err := CheckJSON(&check, path, fl); err != nil {
		return err
	}
	scans := struct {
		*workbook.ScanResult
		Errors int `json:"errors"`
	}{r, r.Errors()}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(struct {
		Check json.RawMessage `json:"check"`
		Scans any             `json:"scans"`
	}{json.RawMessage(bytes.TrimSpace(check.Bytes())), scans})
}
