package workbook

import (
	"bytes"
	"io"
	"path"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/xuri/excelize/v2"
)

// The Entry and plan sheets are read by one streaming pass over the
// worksheet XML (SpreadsheetML, ECMA-376 Part 1, section 18.3.1: sheetData,
// row, c, v, is, t), resolving shared strings (section 18.4) from their own
// single pass. excelize would decode the worksheet twice for a check (its
// row iterator for the values, its in-memory worksheet for every cell's
// type), about 20 times the time and memory. The scanner accepts the markup
// allot and the common spreadsheet programs write; on anything else
// (prefixed element names, CDATA, a sheet excelize keeps in a temporary
// file) it reports failure and the caller uses excelize as before.
//
// The scanner reads either a part already in memory (excelize's copy, for
// Fill and the fallback) or a part streamed from the zip file (parts.go),
// holding one buffer of the XML at a time.

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
func sharedStrings(f *excelize.File) (*sstTable, bool) {
	sb, ok := pkgBytes(f, sharedStringsPart(f))
	if !ok {
		return nil, true
	}
	return readSST(&xmlScanner{b: sb}, len(sb))
}

// scanSheetWith is scanSheet with the shared strings already scanned.
func scanSheetWith(f *excelize.File, name string, sst *sstTable, lim scanLimits) (*scannedSheet, bool) {
	part, ok := sheetPart(f, name)
	if !ok {
		return nil, false
	}
	b, ok := pkgBytes(f, part)
	if !ok {
		return nil, false
	}
	return collectSheet(&xmlScanner{b: b}, sst, lim)
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

// sstTable is the shared string table kept compactly: the strings one
// after another in buf, string i ending at end[i]. A []string of the
// 110,000 strings of a 100,000-unit workbook costs a string header and an
// allocation each besides the text.
type sstTable struct {
	buf []byte
	end []int
}

func (t *sstTable) len() int {
	if t == nil {
		return 0
	}
	return len(t.end)
}

// bytes returns string i (valid while the table is).
func (t *sstTable) bytes(i int) []byte {
	from := 0
	if i > 0 {
		from = t.end[i-1]
	}
	return t.buf[from:t.end[i]:t.end[i]]
}

// add appends s, doubling the buffer when it is full (append grows a
// large slice by a quarter at a time, copying the table over and over).
func (t *sstTable) add(s []byte) {
	if len(t.buf)+len(s) > cap(t.buf) {
		nb := make([]byte, len(t.buf), 2*cap(t.buf)+len(s)+4<<10)
		copy(nb, t.buf)
		t.buf = nb
	}
	if len(t.end) == cap(t.end) {
		ne := make([]int, len(t.end), 2*cap(t.end)+1<<10)
		copy(ne, t.end)
		t.end = ne
	}
	t.buf = append(t.buf, s...)
	t.end = append(t.end, len(t.buf))
}

// tableOf makes a table of strings.
func tableOf(ss []string) *sstTable {
	t := &sstTable{}
	for _, s := range ss {
		t.add([]byte(s))
	}
	return t
}

// scanSharedStrings returns the shared string table: each si's text runs
// concatenated, phonetic runs (rPh) left out.
func scanSharedStrings(b []byte) ([]string, bool) {
	t, ok := readSST(&xmlScanner{b: b}, len(b))
	if !ok {
		return nil, false
	}
	out := make([]string, t.len())
	for i := range out {
		out[i] = string(t.bytes(i))
	}
	return out, true
}

// readSST reads a shared-strings part into a table; size, when not 0, is
// the part's size, which bounds the text it holds (the table's buffer is
// made that large at once, not grown by copies).
func readSST(sc *xmlScanner, size int) (*sstTable, bool) {
	t := &sstTable{buf: make([]byte, 0, size)}
	var cur []byte
	inSI, inPh := false, false
	for sc.next() {
		switch string(sc.name) {
		case "si":
			if sc.end {
				t.add(cur)
				inSI = false
			} else if sc.selfClose {
				t.add(nil)
			} else {
				inSI, cur = true, cur[:0]
			}
		case "rPh":
			inPh = !sc.end && !sc.selfClose
		case "t":
			if sc.end && inSI && !inPh {
				cur = sc.appendText(cur)
			}
		}
	}
	if sc.failed() {
		return nil, false
	}
	return t, true
}

// scanWorksheet reads the cells of a worksheet part.
func scanWorksheet(b []byte, sst []string, lim scanLimits) (*scannedSheet, bool) {
	return collectSheet(&xmlScanner{b: b}, tableOf(sst), lim)
}

// collectSheet reads every row of a worksheet into a scannedSheet.
func collectSheet(sc *xmlScanner, sst *sstTable, lim scanLimits) (*scannedSheet, bool) {
	s := &scannedSheet{}
	r := sheetReader{sc: sc, sst: sst, lim: lim}
	ok := r.read(func() {
		var row []string
		var meta []cellMeta
		if r.n > 0 {
			row = r.cells(make([]string, 0, r.n))
			meta = append(meta, r.meta...)
		}
		if r.anyF {
			if s.formulas == nil {
				s.formulas, s.shared = map[[2]int]string{}, map[[2]int]bool{}
			}
			for c := range r.form {
				at := [2]int{r.num - 1, c}
				if r.form[c] != "" {
					s.formulas[at] = r.form[c]
				} else if r.shrd[c] {
					s.shared[at] = true
				}
			}
		}
		s.put(r.num, row, meta)
	})
	if !ok {
		return nil, false
	}
	s.wide, s.many = r.wide, r.many
	return s, true
}

// sheetReader reads a worksheet one row at a time. Of each row it keeps
// the cells of the first keep columns (all when keep is 0): their values
// as excelize's GetRows with RawCellValue gives them, their stored types
// and styles and their formulas.
type sheetReader struct {
	sc   *xmlScanner
	sst  *sstTable
	lim  scanLimits
	keep int

	// The row just read: its 1-based number and its cell count (the
	// column of its last cell, gaps included); of its kept cells the
	// values, one after another in vals with cell j ending at ends[j],
	// the types and styles, the formula texts (or "") and whether a cell
	// belongs to a shared formula whose text is in another cell. anyF
	// says whether any kept cell has a formula.
	num  int
	n    int
	vals []byte
	ends []int
	meta []cellMeta
	form []string
	shrd []bool
	anyF bool

	// wide is the reference of a cell beyond lim.cols, and many the row
	// past lim.rows rows with content; reading stopped there.
	wide string
	many int

	// The cell being read: its reference and type as written (copied
	// from the scanner's buffer, which moves on), value and formula.
	ref, typ     []byte
	val, fo      []byte
	style        int32
	haveV, haveF bool
	sharedF      bool
}

// read calls row after each row the sheet has (with or without cells) and
// reports whether the scan applied. It stops early after a cell beyond
// lim.cols or past lim.rows rows with content (wide or many says which).
func (r *sheetReader) read(row func()) bool {
	sc := r.sc
	content := 0
	inRow, inCell, inIs, inPh, inF := false, false, false, false, false
	for sc.next() {
		if r.wide != "" {
			return true
		}
		switch string(sc.name) {
		case "row":
			if sc.end {
				if !inRow {
					return false
				}
				inRow = false
				if r.n > 0 {
					if content++; r.lim.rows > 0 && content > r.lim.rows {
						r.many = r.num
						return true
					}
				}
				row()
				continue
			}
			n := r.num + 1
			if a := sc.attr("r"); a != nil {
				v, ok := atoi(a)
				if !ok || v <= r.num || v > excelize.TotalRows {
					return false
				}
				n = v
			}
			r.num = n
			r.startRow()
			if sc.selfClose {
				row()
				continue
			}
			inRow = true
		case "c":
			if !inRow {
				return false
			}
			if sc.end {
				if !r.finishCell() {
					return false
				}
				inCell = false
				continue
			}
			// The cell's attributes in one pass: reference, type, style.
			var st []byte
			haveRef, haveTyp := false, false
			for a := sc.attrs; ; {
				k, v, rest, ok := nextAttr(a)
				if !ok {
					break
				}
				a = rest
				if len(k) == 1 {
					switch k[0] {
					case 'r':
						r.ref, haveRef = append(r.ref[:0], v...), true
					case 't':
						r.typ, haveTyp = append(r.typ[:0], v...), true
					case 's':
						st = v
					}
				}
			}
			if !haveRef {
				r.ref = r.ref[:0]
			}
			if !haveTyp {
				r.typ = r.typ[:0]
			}
			r.style = 0
			if st != nil {
				v, ok := atoi(st)
				if !ok || v < 0 || v > 1<<30 {
					return false
				}
				r.style = int32(v)
			}
			r.val, r.haveV = r.val[:0], false
			r.fo, r.haveF, r.sharedF, inF = r.fo[:0], false, false, false
			if sc.selfClose {
				if !r.finishCell() {
					return false
				}
				continue
			}
			inCell = true
		case "v":
			if sc.end && inCell {
				r.val = sc.appendText(r.val[:0])
				r.haveV = true
			}
		case "f":
			if !inCell {
				continue
			}
			switch {
			case sc.end:
				if inF {
					r.fo = sc.appendText(r.fo[:0])
				}
				inF = false
			default:
				r.haveF = true
				r.sharedF = string(sc.attr("t")) == "shared"
				inF = !sc.selfClose
			}
		case "is":
			inIs = inCell && !sc.end && !sc.selfClose
			if inIs {
				r.val = r.val[:0]
			}
		case "rPh":
			inPh = !sc.end && !sc.selfClose
		case "t":
			if sc.end && inIs && !inPh {
				r.val = sc.appendText(r.val)
			}
		}
	}
	if sc.failed() || inRow {
		return false
	}
	return true
}

// startRow empties the current row.
func (r *sheetReader) startRow() {
	r.n, r.anyF = 0, false
	r.vals, r.ends, r.meta = r.vals[:0], r.ends[:0], r.meta[:0]
	r.form, r.shrd = r.form[:0], r.shrd[:0]
}

// kept reports whether column col (1-based) is kept.
func (r *sheetReader) kept(col int) bool { return r.keep == 0 || col <= r.keep }

// pad adds an empty kept cell.
func (r *sheetReader) pad() {
	r.ends = append(r.ends, len(r.vals))
	r.meta = append(r.meta, cellMeta{})
	r.form = append(r.form, "")
	r.shrd = append(r.shrd, false)
}

// finishCell adds the cell just read to the row; false when the scan does
// not apply (a reference that is not a cell or not after the row's last
// one, a shared string that is not in the table).
func (r *sheetReader) finishCell() bool {
	col := r.n + 1
	if len(r.ref) > 0 {
		c, ok := refColumn(r.ref)
		if !ok || c < r.n+1 {
			return false
		}
		col = c
	}
	if r.lim.cols > 0 && col > r.lim.cols {
		r.wide = cell(col, r.num)
		return true
	}
	for r.n < col-1 {
		if !r.kept(r.n + 1) {
			r.n = col - 1
			break
		}
		r.pad()
		r.n++
	}
	keep := r.kept(col)
	switch string(r.typ) {
	case "s":
		if r.haveV {
			i, ok := atoi(r.val)
			if !ok || i < 0 || i >= r.sst.len() {
				return false
			}
			if keep {
				r.vals = append(r.vals, r.sst.bytes(i)...)
			}
		}
	default:
		if keep {
			r.vals = append(r.vals, r.val...)
		}
	}
	r.n = col
	if !keep {
		return true
	}
	r.pad()
	j := col - 1
	r.ends[j] = len(r.vals)
	r.meta[j] = cellMeta{kind: kindOf(r.typ), style: r.style}
	if r.haveF {
		if len(r.fo) > 0 {
			r.form[j], r.anyF = string(r.fo), true
		} else if r.sharedF {
			r.shrd[j], r.anyF = true, true
		}
	}
	return true
}

// cells returns the kept cells' values, appended to dst, as substrings of
// one string.
func (r *sheetReader) cells(dst []string) []string {
	s := string(r.vals)
	from := 0
	for _, e := range r.ends {
		dst = append(dst, s[from:e])
		from = e
	}
	return dst
}

// refColumn returns the column of a cell reference as
// excelize.CellNameToCoordinates accepts it.
func refColumn(ref []byte) (int, bool) {
	// The common form, upper-case letters and a row without leading
	// zeros, directly; anything else as excelize reads it.
	col, i := 0, 0
	for ; i < len(ref) && i < 3 && ref[i] >= 'A' && ref[i] <= 'Z'; i++ {
		col = col*26 + int(ref[i]-'A'+1)
	}
	if i > 0 && i < len(ref) && len(ref)-i <= 7 && ref[i] != '0' && col <= excelize.MaxColumns {
		row := 0
		for _, ch := range ref[i:] {
			if ch < '0' || ch > '9' {
				row = -1
				break
			}
			row = row*10 + int(ch-'0')
		}
		if row > 0 && row <= excelize.TotalRows {
			return col, true
		}
	}
	c, _, err := excelize.CellNameToCoordinates(string(ref))
	return c, err == nil
}

// atoi is strconv.Atoi of b.
func atoi(b []byte) (int, bool) {
	if len(b) > 0 && len(b) < 10 {
		n := 0
		for _, ch := range b {
			if ch < '0' || ch > '9' {
				goto slow
			}
			n = n*10 + int(ch-'0')
		}
		return n, true
	}
slow:
	n, err := strconv.Atoi(string(b))
	return n, err == nil
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
// closes itself, its attributes and the character data before it; these
// slices of its buffer are valid until the next call of next.
//
// The document is b, or, when src is set, read from src into b a buffer at
// a time.
type xmlScanner struct {
	b         []byte
	i         int
	src       io.Reader
	err       error // what ended reading src (io.EOF at its end)
	name      []byte
	attrs     []byte
	end       bool
	selfClose bool
	bad       bool
	textFrom  int
	textTo    int
}

// scanBuffer is the size of a streaming scanner's first buffer; it grows
// when a tag and the text before it do not fit.
const scanBuffer = 256 << 10

// more reads more of src into b, keeping b[keep:] (moved to the front);
// false at the end of src or on a read error.
func (s *xmlScanner) more(keep int) bool {
	if s.src == nil || s.err != nil {
		return false
	}
	n := copy(s.b[:cap(s.b)], s.b[keep:])
	s.b = s.b[:n]
	s.i -= keep
	if cap(s.b)-n < scanBuffer/2 {
		nb := make([]byte, n, 2*cap(s.b)+scanBuffer)
		copy(nb, s.b)
		s.b = nb
	}
	for {
		m, err := s.src.Read(s.b[n:cap(s.b)])
		s.b = s.b[:n+m]
		if err != nil {
			s.err = err
			return m > 0
		}
		if m > 0 {
			return true
		}
	}
}

// failed reports whether the scan stopped on markup it does not handle or
// on an error reading src.
func (s *xmlScanner) failed() bool {
	return s.bad || s.err != nil && s.err != io.EOF
}

// next moves to the next element tag; false at the end or on markup the
// scanner does not handle (bad is then set).
func (s *xmlScanner) next() bool {
	for {
		start := s.i
		j := bytes.IndexByte(s.b[s.i:], '<')
		if j < 0 {
			if s.more(start) {
				continue
			}
			return false
		}
		lt := s.i + j
		rest := s.b[lt:]
		if len(rest) < 4 && s.more(start) {
			continue // room to tell a comment from a tag
		}
		switch {
		case len(rest) >= 2 && rest[1] == '?':
			k := bytes.Index(rest, []byte("?>"))
			if k < 0 {
				if s.more(start) {
					continue
				}
				s.bad = true
				return false
			}
			s.i = lt + k + 2
			continue
		case len(rest) >= 4 && rest[1] == '!' && rest[2] == '-' && rest[3] == '-':
			k := bytes.Index(rest, []byte("-->"))
			if k < 0 {
				if s.more(start) {
					continue
				}
				s.bad = true
				return false
			}
			s.i = lt + k + 3
			continue
		case len(rest) >= 2 && rest[1] == '!':
			s.bad = true // CDATA or a document type
			return false
		}
		// The tag up to the first '>', in one pass: where its name ends
		// (the first space, tab, CR or LF) and whether a quote is open at
		// that '>' (then it is inside an attribute value).
		var q byte
		sp, k := -1, 1
		for ; k < len(rest); k++ {
			c := rest[k]
			if c == '>' {
				break
			}
			switch c {
			case '"', '\'':
				if q == 0 {
					q = c
				} else if c == q {
					q = 0
				}
			case ' ', '\t', '\r', '\n':
				if sp < 0 {
					sp = k
				}
			}
		}
		if k == len(rest) {
			if s.more(start) {
				continue
			}
			s.bad = true
			return false
		}
		s.textFrom, s.textTo = start, lt
		s.i = lt + k + 1
		from, to := 1, k // the tag without its '/'s
		s.end = to > from && rest[from] == '/'
		if s.end {
			from++
		}
		s.selfClose = to > from && rest[to-1] == '/'
		if s.selfClose {
			to--
		}
		if sp >= from && sp < to {
			s.name, s.attrs = rest[from:sp], rest[sp:to]
		} else {
			s.name, s.attrs = rest[from:to], nil
		}
		if prefixed(s.name) {
			s.bad = true // a prefixed SpreadsheetML element
			return false
		}
		if q != 0 {
			s.bad = true // a '>' inside an attribute value
			return false
		}
		return true
	}
}

// prefixed reports whether an element name has a namespace prefix other
// than the markup-compatibility and Office 2010 ones, which the scanner
// passes over.
func prefixed(name []byte) bool {
	for _, c := range name {
		if c == ':' {
			return !bytes.HasPrefix(name, []byte("mc:")) && !bytes.HasPrefix(name, []byte("x14"))
		}
	}
	return false
}

// trimSpaceLeft drops leading spaces, tabs, CRs and LFs.
func trimSpaceLeft(b []byte) []byte {
	for len(b) > 0 && (b[0] == ' ' || b[0] == '\t' || b[0] == '\r' || b[0] == '\n') {
		b = b[1:]
	}
	return b
}

// attr returns the value of attribute key (entities resolved), or nil.
func (s *xmlScanner) attr(key string) []byte {
	for a := s.attrs; ; {
		k, v, rest, ok := nextAttr(a)
		if !ok {
			return nil
		}
		if string(k) == key {
			return v
		}
		a = rest
	}
}

// nextAttr returns the first attribute of a (a tag's attributes), its
// value with entities resolved, and the attributes after it; ok is false
// when there is none.
func nextAttr(a []byte) (k, v, rest []byte, ok bool) {
	a = trimSpaceLeft(a)
	eq := 0
	for eq < len(a) && a[eq] != '=' {
		eq++
	}
	if eq == len(a) {
		return nil, nil, nil, false
	}
	k = trimSpace(a[:eq])
	a = trimSpaceLeft(a[eq+1:])
	if len(a) == 0 || a[0] != '"' && a[0] != '\'' {
		return nil, nil, nil, false
	}
	q, e := a[0], 1
	for e < len(a) && a[e] != q {
		e++
	}
	if e == len(a) {
		return nil, nil, nil, false
	}
	v = a[1:e]
	for _, c := range v {
		if c == '&' {
			v = appendUnescaped(nil, v)
			break
		}
	}
	return k, v, a[e+1:], true
}

// trimSpace is bytes.TrimSpace, with ASCII spaces trimmed directly.
func trimSpace(b []byte) []byte {
	for len(b) > 0 && asciiSpace(b[0]) {
		b = b[1:]
	}
	for len(b) > 0 && asciiSpace(b[len(b)-1]) {
		b = b[:len(b)-1]
	}
	if len(b) > 0 && (b[0] >= utf8.RuneSelf || b[len(b)-1] >= utf8.RuneSelf) {
		return bytes.TrimSpace(b)
	}
	return b
}

// asciiSpace reports whether c is an ASCII space as unicode.IsSpace has it.
func asciiSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\v' || c == '\f' || c == '\r'
}

// appendText appends the character data before the current tag, with
// entities resolved, to dst.
func (s *xmlScanner) appendText(dst []byte) []byte {
	return appendUnescaped(dst, s.b[s.textFrom:s.textTo])
}

// unescapeXML resolves the predefined and numeric character references.
func unescapeXML(b []byte) string {
	if bytes.IndexByte(b, '&') < 0 {
		return string(b)
	}
	return string(appendUnescaped(nil, b))
}

// appendUnescaped appends b to dst with the predefined and numeric
// character references resolved; a reference it does not know, or one
// without its ';', is kept as it is.
func appendUnescaped(dst, b []byte) []byte {
	for len(b) > 0 {
		i := bytes.IndexByte(b, '&')
		if i < 0 {
			return append(dst, b...)
		}
		dst = append(dst, b[:i]...)
		b = b[i:]
		j := bytes.IndexByte(b, ';')
		if j < 0 {
			return append(dst, b...)
		}
		ent := b[1:j]
		lit := b[:j+1]
		b = b[j+1:]
		switch string(ent) {
		case "amp":
			dst = append(dst, '&')
		case "lt":
			dst = append(dst, '<')
		case "gt":
			dst = append(dst, '>')
		case "quot":
			dst = append(dst, '"')
		case "apos":
			dst = append(dst, '\'')
		default:
			r, ok := rune(0), false
			switch {
			case len(ent) > 1 && ent[0] == '#' && ent[1] == 'x':
				r, ok = charRef(ent[2:], 16)
			case len(ent) > 0 && ent[0] == '#':
				r, ok = charRef(ent[1:], 10)
			}
			if ok {
				dst = utf8.AppendRune(dst, r)
			} else {
				dst = append(dst, lit...)
			}
		}
	}
	return dst
}

// charRef reads the digits of a numeric character reference in base 16 or
// 10: ok when they are digits of the base (at least one) naming a valid
// character, as strconv.ParseUint(digits, base, 32) and utf8.ValidRune
// decide.
func charRef(digits []byte, base int) (rune, bool) {
	if len(digits) == 0 {
		return 0, false
	}
	var v uint64
	for _, c := range digits {
		var d byte
		switch {
		case c >= '0' && c <= '9':
			d = c - '0'
		case base == 16 && c >= 'a' && c <= 'f':
			d = c - 'a' + 10
		case base == 16 && c >= 'A' && c <= 'F':
			d = c - 'A' + 10
		default:
			return 0, false
		}
		if v <= utf8.MaxRune {
			v = v*uint64(base) + uint64(d)
		}
	}
	if v > utf8.MaxRune || !utf8.ValidRune(rune(v)) {
		return 0, false
	}
	return rune(v), true
}
