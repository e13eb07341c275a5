package workbook

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strings"
)

// Scan is one row of a scans file: the text read from a unit's label code,
// the response measured and its value, with the row's line in the file.
//
// A scans file is CSV (RFC 4180, comma-separated) with three columns: the
// code text (allot:<fingerprint12>:<unit ID>, as allot labels prints it),
// the response name and the value. A first row reading code, response,
// value (any case) is a header and skipped; blank rows are skipped.
type Scan struct {
	Line     int
	Code     string
	Response string
	Value    string
	// Fields is the number of fields the row had (3 when well formed).
	Fields int
}

// ScansHeader is the optional header row of a scans file.
var ScansHeader = []string{"code", "response", "value"}

// MaxScans is the most rows read from a scans file, so that a wrong file
// cannot exhaust memory (a million units with ten responses each).
const MaxScans = 10_000_000

// ReadScans reads a scans file. Rows of the wrong width are returned
// (Fields says so) for the check to report by line; an error is returned
// only when the file is not readable CSV.
func ReadScans(r io.Reader, path string) ([]Scan, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	var out []Scan
	first := true
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, &FileError{Path: path, Msg: fmt.Sprintf("line %d: not readable CSV (%v); the file needs three columns: code, response, value", pe.Line, pe.Err)}
			}
			return nil, &FileError{Path: path, Msg: "cannot be read: " + err.Error()}
		}
		line, _ := cr.FieldPos(0)
		for i := range rec {
			rec[i] = strings.TrimSpace(rec[i])
		}
		if first {
			first = false
			if len(rec) > 0 {
				rec[0] = strings.TrimPrefix(rec[0], "\ufeff") // a byte-order mark
			}
			if isScansHeader(rec) {
				continue
			}
		}
		blank := true
		for _, f := range rec {
			blank = blank && f == ""
		}
		if blank {
			continue
		}
		if len(out) == MaxScans {
			return nil, &FileError{Path: path, Msg: fmt.Sprintf("more than %d rows: not a scans file of one trial", MaxScans)}
		}
		s := Scan{Line: line, Fields: len(rec)}
		get := func(i int) string {
			if i < len(rec) {
				return rec[i]
			}
			return ""
		}
		s.Code, s.Response, s.Value = get(0), get(1), get(2)
		out = append(out, s)
	}
	return out, nil
}

func isScansHeader(rec []string) bool {
	if len(rec) != len(ScansHeader) {
		return false
	}
	for i, h := range ScansHeader {
		if !strings.EqualFold(rec[i], h) {
			return false
		}
	}
	return true
}
