package workbook

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/decimal"
)

// WriteCSV writes the Entry sheet's rows as CSV (RFC 4180: comma
// separators, CRLF is not forced, UTF-8 without a byte-order mark) for labs
// that record in CSV: the same header and design columns, empty response,
// Status, Reason and Notes cells.
//
// A cell a spreadsheet program would run as a formula is written with a
// leading apostrophe, so that the program shows it as text (the defence
// against formula injection, OWASP "CSV Injection"): a cell starting with
// =, @, a tab or a carriage return, and a cell starting with + or - unless
// it is a plain number ("-1" and "+2" stay as they are: a spreadsheet reads
// them as numbers, not formulas). The reader strips that apostrophe again.
func WriteCSV(w io.Writer, l design.Layout) error {
	p := l.Plan
	c := layoutColumns(p)
	cw := csv.NewWriter(w)
	head := c.headers(p)
	if err := cw.Write(escapeRow(head)); err != nil {
		return err
	}
	tr := p.Treatments()
	label := labeller(l)
	blank := make([]string, len(head)-c.designCount(p))
	for _, u := range l.Units {
		for sub := 1; sub <= c.rowsPer(); sub++ {
			row := append(designCells(c, u, sub, label(u), tr), blank...)
			if err := cw.Write(escapeRow(row)); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}

func escapeRow(row []string) []string {
	out := make([]string, len(row))
	for i, v := range row {
		out[i] = EscapeCell(v)
	}
	return out
}

// EscapeCell neutralises a cell that a spreadsheet would run as a formula
// (see WriteCSV for the rule).
func EscapeCell(v string) string {
	if v == "" {
		return v
	}
	switch v[0] {
	case '=', '@', '\t', '\r':
		return "'" + v
	case '+', '-':
		if decimal.Check(v) != nil {
			return "'" + v
		}
	}
	return v
}

// UnescapeCell undoes EscapeCell. It also strips the apostrophe that
// earlier versions put before every cell starting with + or -.
func UnescapeCell(v string) string {
	if len(v) > 1 && v[0] == '\'' && strings.ContainsRune("=+-@\t\r", rune(v[1])) {
		return v[1:]
	}
	return v
}

// csvDialect is how a CSV file was written, as detected.
type csvDialect struct {
	sep    rune
	bom    bool
	crOnly bool
}

func (d csvDialect) String() string {
	s := map[rune]string{',': "comma", ';': "semicolon", '\t': "tab"}[d.sep] + "-separated"
	if d.bom {
		s += ", with a UTF-8 byte-order mark"
	}
	if d.crOnly {
		s += ", old Mac line ends (CR)"
	}
	return s
}

// maxCSVBytes bounds a CSV file read into memory (a 10,000-unit file is
// under 1 MB).
const maxCSVBytes = 256 << 20

// sniffCSV reads a CSV file whole and detects its dialect: a UTF-8
// byte-order mark (dropped), lines ended by CR alone (turned into LF;
// quoted fields keep their line breaks as LF), and the separator: the one
// of comma, semicolon and tab that splits the header line into the most
// fields (spreadsheets in decimal-comma locales write semicolons).
func sniffCSV(r io.Reader, path string) ([]byte, csvDialect, error) {
	var d csvDialect
	b, err := io.ReadAll(io.LimitReader(r, maxCSVBytes+1))
	if err != nil {
		return nil, d, &FileError{Path: path, Msg: "cannot be read: " + err.Error()}
	}
	if len(b) > maxCSVBytes {
		return nil, d, &FileError{Path: path, Msg: fmt.Sprintf("is larger than %d MiB, the limit for a CSV file; it is not a data-entry file allot wrote", maxCSVBytes>>20)}
	}
	if bytes.HasPrefix(b, []byte("\xEF\xBB\xBF")) {
		b, d.bom = b[3:], true
	}
	if bytes.HasPrefix(b, []byte{0xFF, 0xFE}) || bytes.HasPrefix(b, []byte{0xFE, 0xFF}) {
		return nil, d, &FileError{Path: path, Msg: "is UTF-16 text (\"Unicode text\" in some spreadsheet programs); save it again as CSV UTF-8"}
	}
	if bytes.IndexByte(b, '\r') >= 0 && bytes.IndexByte(b, '\n') < 0 {
		b, d.crOnly = bytes.ReplaceAll(b, []byte{'\r'}, []byte{'\n'}), true
	}
	line := b
	if i := bytes.IndexByte(b, '\n'); i >= 0 {
		line = b[:i]
	}
	d.sep = sniffSep(line)
	return b, d, nil
}

// sniffSep returns the one of comma, semicolon and tab that splits a
// header line into the most fields (comma on a tie).
func sniffSep(line []byte) rune {
	best, sep := 0, ','
	for _, s := range []rune{',', ';', '\t'} {
		cr := csv.NewReader(bytes.NewReader(line))
		cr.Comma, cr.FieldsPerRecord, cr.LazyQuotes = s, -1, true
		if rec, err := cr.Read(); err == nil && len(rec) > best {
			sep, best = s, len(rec)
		}
	}
	return sep
}

// sniffStream detects the dialect of a CSV stream as sniffCSV does, from
// its first 64 KiB, and returns the stream to read past a byte-order mark
// (with CR line ends turned into LF), without reading it whole.
func sniffStream(r io.Reader, path string) (io.Reader, csvDialect, error) {
	var d csvDialect
	br := bufio.NewReaderSize(r, 64<<10)
	b, err := br.Peek(64 << 10)
	if err != nil && err != io.EOF && err != bufio.ErrBufferFull {
		return nil, d, &FileError{Path: path, Msg: "cannot be read: " + err.Error()}
	}
	if bytes.HasPrefix(b, []byte{0xFF, 0xFE}) || bytes.HasPrefix(b, []byte{0xFE, 0xFF}) {
		return nil, d, &FileError{Path: path, Msg: "is UTF-16 text (\"Unicode text\" in some spreadsheet programs); save it again as CSV UTF-8"}
	}
	skip := 0
	if bytes.HasPrefix(b, []byte("\xEF\xBB\xBF")) {
		b, d.bom, skip = b[3:], true, 3
	}
	d.crOnly = bytes.IndexByte(b, '\r') >= 0 && bytes.IndexByte(b, '\n') < 0
	line := b
	if i := bytes.IndexAny(b, "\r\n"); i >= 0 {
		line = b[:i]
	}
	d.sep = sniffSep(line)
	br.Discard(skip)
	if d.crOnly {
		return crReader{br}, d, nil
	}
	return br, d, nil
}

// crReader turns every CR into LF (a file with old Mac line ends).
type crReader struct{ r io.Reader }

func (c crReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	for i, ch := range p[:n] {
		if ch == '\r' {
			p[i] = '\n'
		}
	}
	return n, err
}

// readCSVRows reads every record of a sniffed CSV file with its line
// number and field count; rows shorter than width are padded so that the
// checker can report the ragged line itself.
func readCSVRows(b []byte, d csvDialect, path string) ([]sheetRow, error) {
	cr := csv.NewReader(bytes.NewReader(b))
	cr.Comma, cr.FieldsPerRecord = d.sep, -1
	var rows []sheetRow
	for n := 1; ; n++ {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, &FileError{Path: path, Msg: fmt.Sprintf("line %d, column %d: %v (the file is %s); a quote inside a value must be doubled (\"\"), or the value quoted as a whole", pe.Line, pe.Column, pe.Err, d)}
			}
			return nil, &FileError{Path: path, Msg: "not a readable CSV file: " + err.Error()}
		}
		line, _ := cr.FieldPos(0)
		for j := range rec {
			rec[j] = UnescapeCell(rec[j])
		}
		rows = append(rows, sheetRow{num: n, cells: rec, line: line, fields: len(rec)})
	}
	return rows, nil
}

// ReadCSV checks a CSV export of the Entry sheet (header row and unit rows,
// as allot layout -o FILE.csv writes them, filled in) against layout l. The
// cells are named as in the sheet (A1 is the first header), under the
// sheet name "CSV". A blind layout needs its key in opt.
//
// The dialects spreadsheet programs write are read: UTF-8 with or without
// a byte-order mark, comma, semicolon or tab separators (detected from the
// header line), CRLF, LF or CR line ends, quoted fields with line breaks. A
// row with more or fewer fields than the header is an error naming its
// line.
func ReadCSV(r io.Reader, path string, l design.Layout, opt ReadOptions) (*Filled, error) {
	b, d, err := sniffCSV(r, path)
	if err != nil {
		return nil, err
	}
	rows, err := readCSVRows(b, d, path)
	if err != nil {
		return nil, err
	}
	var labels []string
	if l.Plan.Blind {
		for _, u := range l.Units {
			labels = append(labels, l.Label(u))
		}
	}
	k := newChecker(path, "CSV", l, labels, opt)
	if len(rows) > 0 && len(rows[0].cells) == 1 && len(k.c.headers(l.Plan)) > 1 {
		return nil, &FileError{Path: path, Sheet: "CSV", Cell: "A1", Msg: fmt.Sprintf("the header line has a single field %q: the file is not separated by commas, semicolons or tabs; export the Entry sheet again as CSV", rows[0].cells[0])}
	}
	fl, err := k.run(rows)
	var fe *FileError
	if errors.As(err, &fe) && strings.HasSuffix(fe.Cell, "1") {
		fe.Msg += " (the file was read as " + d.String() + ")"
	}
	return fl, err
}
