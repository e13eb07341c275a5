package workbook

import (
	"bytes"
	"path"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"
)

// The Entry and plan sheets are read by one streaming pass over the
// worksheet XML (SpreadsheetML, ECMA-376 Part 1, section 18.3.1: sheetData,
// row, c, v, is, t), resolving shared strings (section 18.4) from their own
// single pass. excelize, which opens the package, would decode the
// worksheet twice for a check (its row iterator for the values, its
// in-memory worksheet for every cell's type), about 20 times the time and
// memory. The scanner accepts the markup allot and the common spreadsheet
// programs write; on anything else (prefixed element names, CDATA, a sheet
// excelize keeps in a temporary file) it reports failure and the caller
// uses excelize as before.

// scannedSheet is a worksheet's cell values by row and column (0-based),
// as excelize's GetRows with RawCellValue gives them, and what else the
// check needs of each cell: its stored type, its style and its formula.
type scannedSheet struct {
	rows [][]string
	meta [][]cellMeta
	// formulas holds the formula text of the cells that have one, by
	// 0-based row and column; shared marks a cell of a shared formula
	// whose text lives in another cell (excelize translates it).
	formulas map[[2]int]string
	shared   map[[2]int]bool
	// wide is the reference of a cell beyond scanLimits.cols, and many the
	// row past scanLimits.rows rows with content; the scan stopped there.
	wide string
	many int
}

// cellMeta is a cell's stored type and style index.
type cellMeta struct {
	kind  cellKind
	style int32
}

// scanLimits bound a scan before it grows large in memory (0: no bound):
// the last column a cell may be in, and the rows with content.
type scanLimits struct{ cols, rows int }

// value returns the value at a cell reference such as "B3".
func (s *scannedSheet) value(ref string) string {
	c, r, err := excelize.CellNameToCoordinates(ref)
	if err != nil || r > len(s.rows) || c > len(s.rows[r-1]) {
		return ""
	}
	return s.rows[r-1][c-1]
}

// cell returns the metadata of the cell at ref (a number cell without
// style when there is none).
func (s *scannedSheet) cell(ref string) (cellMeta, int, int) {
	c, r, err := excelize.CellNameToCoordinates(ref)
	if err != nil || r > len(s.meta) || c > len(s.meta[r-1]) {
		return cellMeta{}, r - 1, c - 1
	}
	return s.meta[r-1][c-1], r - 1, c - 1
}

// isText reports whether the cell at ref holds text (or another type
// than a number).
func (s *scannedSheet) isText(ref string) bool {
	m, _, _ := s.cell(ref)
	return m.kind != kindNumber
}

// scanSheet reads sheet name of f; ok is false when the fast path does not
// apply.
func scanSheet(f *excelize.File, name string, lim scanLimits) (*scannedSheet, bool) {
	sst, ok := sharedStrings(f)
	if !ok {
		return nil, false
	}
	return scanSheetWith(f, name, sst, lim)
}

// sharedStrings scans the workbook's shared strings (nil without any);
// ok is false when the fast path does not apply. A check reads two sheets
// with one table: scan it once.
func sharedStrings(f *excelize.File) ([]string, bool) {
	sb, ok := pkgBytes(f, sharedStringsPart(f))
	if !ok {
		return nil, true
	}
	return scanSharedStrings(sb)
}

// scanSheetWith is scanSheet with the shared strings already scanned.
func scanSheetWith(f *excelize.File, name string, sst []string, lim scanLimits) (*scannedSheet, bool) {
	part, ok := sheetPart(f, name)
	if !ok {
		return nil, false
	}
	b, ok := pkgBytes(f, part)
	if !ok {
		return nil, false
	}
	return scanWorksheet(b, sst, lim)
}

func pkgBytes(f *excelize.File, name string) ([]byte, bool) {
	if _, loaded := f.Sheet.Load(name); loaded {
		return nil, false // edited in memory; the package bytes are stale
	}
	v, ok := f.Pkg.Load(name)
	if !ok {
		return nil, false
	}
	b, ok := v.([]byte)
	return b, ok
}

// sheetPart returns the package part of the sheet called name, from the
// workbook part and its relationships.
func sheetPart(f *excelize.File, name string) (string, bool) {
	wb, ok := pkgBytes(f, "xl/workbook.xml")
	if !ok {
		return "", false
	}
	rels, ok := pkgBytes(f, "xl/_rels/workbook.xml.rels")
	if !ok {
		return "", false
	}
	id := ""
	sc := xmlScanner{b: wb}
	for sc.next() {
		if string(sc.name) == "sheet" && !sc.end && unescapeXML(sc.attr("name")) == name {
			id = string(sc.attr("r:id"))
			break
		}
	}
	if id == "" {
		return "", false
	}
	sc = xmlScanner{b: rels}
	for sc.next() {
		if string(sc.name) == "Relationship" && string(sc.attr("Id")) == id {
			return partPath(string(sc.attr("Target"))), true
		}
	}
	return "", false
}

func partPath(target string) string {
	if strings.HasPrefix(target, "/") {
		return target[1:]
	}
	return path.Clean("xl/" + target)
}

func sharedStringsPart(f *excelize.File) string {
	rels, ok := pkgBytes(f, "xl/_rels/workbook.xml.rels")
	if ok {
		sc := xmlScanner{b: rels}
		for sc.next() {
			if string(sc.name) == "Relationship" && strings.HasSuffix(string(sc.attr("Type")), "/sharedStrings") {
				return partPath(string(sc.attr("Target")))
			}
		}
	}
	return "xl/sharedStrings.xml"
}

// scanSharedStrings returns the shared string table: each si's text runs
// concatenated, phonetic runs (rPh) left out.
func scanSharedStrings(b []byte) ([]string, bool) {
	var out []string
	var cur []byte
	inSI, inPh := false, false
	sc := xmlScanner{b: b}
	for sc.next() {
		if sc.bad {
			return nil, false
		}
		switch string(sc.name) {
		case "si":
			if sc.end {
				out = append(out, string(cur))
				inSI = false
			} else if sc.selfClose {
				out = append(out, "")
			} else {
				inSI, cur = true, cur[:0]
			}
		case "rPh":
			inPh = !sc.end && !sc.selfClose
		case "t":
			if sc.end && inSI && !inPh {
				cur = append(cur, sc.textBefore()...)
			}
		}
	}
	return out, !sc.bad
}

// scanWorksheet reads the cells of a worksheet part.
func scanWorksheet(b []byte, sst []string, lim scanLimits) (*scannedSheet, bool) {
	s := &scannedSheet{}
	var row []string
	var meta []cellMeta
	rowNum, content := 0, 0
	inRow, inCell, inIs, inPh, inF := false, false, false, false, false
	var ref, typ []byte
	var val, formula []byte
	var style int32
	haveV, haveF, sharedF := false, false, false
	sc := xmlScanner{b: b}
	finishCell := func() bool {
		col := len(row) + 1
		if len(ref) > 0 {
			c, _, err := excelize.CellNameToCoordinates(string(ref))
			if err != nil || c < len(row)+1 {
				return false
			}
			col = c
		}
		if lim.cols > 0 && col > lim.cols {
			s.wide = cell(col, rowNum)
			return true
		}
		for len(row) < col-1 {
			row = append(row, "")
			meta = append(meta, cellMeta{})
		}
		v := ""
		switch string(typ) {
		case "s":
			if haveV {
				i, err := strconv.Atoi(string(val))
				if err != nil || i < 0 || i >= len(sst) {
					return false
				}
				v = sst[i]
			}
		default:
			v = string(val)
		}
		if haveF {
			if s.formulas == nil {
				s.formulas, s.shared = map[[2]int]string{}, map[[2]int]bool{}
			}
			at := [2]int{rowNum - 1, col - 1}
			if len(formula) > 0 {
				s.formulas[at] = string(formula)
			} else if sharedF {
				s.shared[at] = true
			}
		}
		row = append(row, v)
		meta = append(meta, cellMeta{kind: kindOf(typ), style: style})
		return true
	}
	for sc.next() {
		if sc.bad {
			return nil, false
		}
		if s.wide != "" {
			return s, true
		}
		switch string(sc.name) {
		case "row":
			if sc.end {
				if !inRow {
					return nil, false
				}
				inRow = false
				if len(row) > 0 {
					if content++; lim.rows > 0 && content > lim.rows {
						s.many = rowNum
						return s, true
					}
				}
				s.put(rowNum, row, meta)
				continue
			}
			n := rowNum + 1
			if r := sc.attr("r"); r != nil {
				v, err := strconv.Atoi(string(r))
				if err != nil || v <= rowNum || v > excelize.TotalRows {
					return nil, false
				}
				n = v
			}
			rowNum = n
			row, meta = nil, nil
			if sc.selfClose {
				s.put(rowNum, nil, nil)
				continue
			}
			inRow = true
		case "c":
			if !inRow {
				return nil, false
			}
			if sc.end {
				if !finishCell() {
					return nil, false
				}
				inCell = false
				continue
			}
			// The cell's attributes in one pass: reference, type, style.
			var st []byte
			ref, typ = nil, nil
			sc.cellAttrs(func(k, v []byte) bool {
				if len(k) == 1 {
					switch k[0] {
					case 'r':
						ref = v
					case 't':
						typ = v
					case 's':
						st = v
					}
				}
				return true
			})
			style = 0
			if st != nil {
				v, err := strconv.Atoi(string(st))
				if err != nil || v < 0 || v > 1<<30 {
					return nil, false
				}
				style = int32(v)
			}
			val, haveV = val[:0], false
			formula, haveF, sharedF, inF = formula[:0], false, false, false
			if sc.selfClose {
				if !finishCell() {
					return nil, false
				}
				continue
			}
			inCell = true
		case "v":
			if sc.end && inCell {
				val = append(val[:0], sc.textBefore()...)
				haveV = true
			}
		case "f":
			if !inCell {
				continue
			}
			switch {
			case sc.end:
				if inF {
					formula = append(formula[:0], sc.textBefore()...)
				}
				inF = false
			default:
				haveF = true
				sharedF = string(sc.attr("t")) == "shared"
				inF = !sc.selfClose
			}
		case "is":
			inIs = inCell && !sc.end && !sc.selfClose
			if inIs {
				val = val[:0]
			}
		case "rPh":
			inPh = !sc.end && !sc.selfClose
		case "t":
			if sc.end && inIs && !inPh {
				val = append(val, sc.textBefore()...)
			}
		}
	}
	if sc.bad || inRow {
		return nil, false
	}
	return s, true
}

// kindOf maps a cell's t attribute to its kind, as excelize's GetCellType
// does (an unknown type counts as a number, as excelize's unset type).
func kindOf(t []byte) cellKind {
	switch string(t) {
	case "s", "str", "inlineStr":
		return kindText
	case "b":
		return kindBool
	case "e":
		return kindError
	case "d":
		return kindDate
	}
	return kindNumber
}

// put stores row number n (1-based).
func (s *scannedSheet) put(n int, row []string, meta []cellMeta) {
	for len(s.rows) < n-1 {
		s.rows = append(s.rows, nil)
		s.meta = append(s.meta, nil)
	}
	s.rows = append(s.rows, row)
	s.meta = append(s.meta, meta)
}

// xmlScanner walks the tags of an XML document written without namespace
// prefixes on elements. For each tag it gives the name, whether it ends or
// closes itself, its attributes and the character data before it.
type xmlScanner struct {
	b         []byte
	i         int
	name      []byte
	attrs     []byte
	end       bool
	selfClose bool
	bad       bool
	textFrom  int
	textTo    int
}

// next moves to the next element tag; false at the end or on markup the
// scanner does not handle (bad is then set).
func (s *xmlScanner) next() bool {
	for {
		start := s.i
		j := bytes.IndexByte(s.b[s.i:], '<')
		if j < 0 {
			return false
		}
		s.textFrom, s.textTo = start, s.i+j
		s.i += j
		rest := s.b[s.i:]
		switch {
		case bytes.HasPrefix(rest, []byte("<?")):
			k := bytes.Index(rest, []byte("?>"))
			if k < 0 {
				s.bad = true
				return false
			}
			s.i += k + 2
			continue
		case bytes.HasPrefix(rest, []byte("<!--")):
			k := bytes.Index(rest, []byte("-->"))
			if k < 0 {
				s.bad = true
				return false
			}
			s.i += k + 3
			continue
		case bytes.HasPrefix(rest, []byte("<!")):
			s.bad = true // CDATA or a document type
			return false
		}
		k := bytes.IndexByte(rest, '>')
		if k < 0 {
			s.bad = true
			return false
		}
		tag := rest[1:k]
		s.i += k + 1
		s.end = len(tag) > 0 && tag[0] == '/'
		if s.end {
			tag = tag[1:]
		}
		s.selfClose = len(tag) > 0 && tag[len(tag)-1] == '/'
		if s.selfClose {
			tag = tag[:len(tag)-1]
		}
		n := bytes.IndexAny(tag, " \t\r\n")
		if n < 0 {
			s.name, s.attrs = tag, nil
		} else {
			s.name, s.attrs = tag[:n], tag[n:]
		}
		if bytes.IndexByte(s.name, ':') >= 0 && !bytes.HasPrefix(s.name, []byte("mc:")) && !bytes.HasPrefix(s.name, []byte("x14")) {
			s.bad = true // a prefixed SpreadsheetML element
			return false
		}
		if bytes.IndexByte(tag, '"') < 0 && bytes.IndexByte(tag, '\'') < 0 || balancedQuotes(tag) {
			return true
		}
		s.bad = true // a '>' inside an attribute value
		return false
	}
}

func balancedQuotes(tag []byte) bool {
	var q byte
	for _, c := range tag {
		switch {
		case q == 0 && (c == '"' || c == '\''):
			q = c
		case c == q:
			q = 0
		}
	}
	return q == 0
}

// attr returns the raw value of attribute key, or nil.
func (s *xmlScanner) attr(key string) []byte {
	var out []byte
	s.cellAttrs(func(k, v []byte) bool {
		if string(k) == key {
			out = v
			return false
		}
		return true
	})
	return out
}

// cellAttrs calls fn with each attribute's name and value (entities
// resolved) until fn returns false.
func (s *xmlScanner) cellAttrs(fn func(k, v []byte) bool) {
	a := s.attrs
	for len(a) > 0 {
		a = bytes.TrimLeft(a, " \t\r\n")
		eq := bytes.IndexByte(a, '=')
		if eq < 0 {
			return
		}
		k := bytes.TrimSpace(a[:eq])
		a = bytes.TrimLeft(a[eq+1:], " \t\r\n")
		if len(a) == 0 || a[0] != '"' && a[0] != '\'' {
			return
		}
		q := a[0]
		e := bytes.IndexByte(a[1:], q)
		if e < 0 {
			return
		}
		v := a[1 : 1+e]
		a = a[e+2:]
		if bytes.IndexByte(v, '&') >= 0 {
			v = []byte(unescapeXML(v))
		}
		if !fn(k, v) {
			return
		}
	}
}

// textBefore returns the character data before the current tag, with
// entities resolved.
func (s *xmlScanner) textBefore() []byte {
	t := s.b[s.textFrom:s.textTo]
	if bytes.IndexByte(t, '&') < 0 {
		return t
	}
	return []byte(unescapeXML(t))
}

// unescapeXML resolves the predefined and numeric character references.
func unescapeXML(b []byte) string {
	if bytes.IndexByte(b, '&') < 0 {
		return string(b)
	}
	var out strings.Builder
	for len(b) > 0 {
		i := bytes.IndexByte(b, '&')
		if i < 0 {
			out.Write(b)
			break
		}
		out.Write(b[:i])
		b = b[i:]
		j := bytes.IndexByte(b, ';')
		if j < 0 {
			out.Write(b)
			break
		}
		ent := string(b[1:j])
		b = b[j+1:]
		switch ent {
		case "amp":
			out.WriteByte('&')
		case "lt":
			out.WriteByte('<')
		case "gt":
			out.WriteByte('>')
		case "quot":
			out.WriteByte('"')
		case "apos":
			out.WriteByte('\'')
		default:
			var r uint64
			var err error
			switch {
			case strings.HasPrefix(ent, "#x"):
				r, err = strconv.ParseUint(ent[2:], 16, 32)
			case strings.HasPrefix(ent, "#"):
				r, err = strconv.ParseUint(ent[1:], 10, 32)
			default:
				err = strconv.ErrSyntax
			}
			if err != nil || !utf8.ValidRune(rune(r)) {
				out.WriteString("&" + ent + ";")
			} else {
				out.WriteRune(rune(r))
			}
		}
	}
	return out.String()
}
