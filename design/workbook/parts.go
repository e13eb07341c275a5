package workbook

import (
	"archive/zip"
	"bytes"
	"errors"
	"strings"

	"github.com/xuri/excelize/v2"
)

// A check reads the package's parts straight from the zip file (ECMA-376
// Part 2), one part at a time and streaming, rather than through
// excelize, which unpacks every part into memory when it opens a file:
// for 100,000 units 31 MB of Entry sheet XML, 13 MB of shared strings and
// 5 MB of Map sheet, held to the end of the check beside what the check
// builds from them.
//
// excelize still opens the package, as a shell: the same zip with the
// worksheets, the shared strings and the media left empty. So the file is
// opened, and refused, as excelize opens it (limits, the workbook, its
// relationships, styles and theme), and the shell answers what the scan
// leaves to excelize (does a sheet exist, is a style a date format)
// without holding the big parts. Of the parts left out of the shell,
// excelize would refuse the file when one cannot be opened (a damaged
// entry header, an unknown compression method), so each is opened; an
// error later, while a part inflates, excelize passes over, keeping what
// came before it, so the check does not need the parts it does not read.
//
// Whatever the scan does not handle (markup it does not read, a part
// excelize would keep in a temporary file, a sheet it cannot find by its
// exact name, an error reading a part) sends the whole check back to the
// excelize path, which then gives the result, or the error, it always
// gave.

// errNoStream says that the parts cannot be read directly: use excelize.
var errNoStream = errors.New("workbook: read through excelize")

// parts is an .xlsx package opened for reading its parts directly.
type parts struct {
	path  string
	unzip int64
	zr    *zip.ReadCloser
	// files holds the package's parts by name as excelize names them
	// (the last of a repeated name, as excelize keeps it).
	files map[string]*zip.File
	shell *excelize.File
	// sst and sheets are the parts of the shared strings and of the
	// sheets a check reads (nil when absent).
	sst    *zip.File
	sheets map[string]*zip.File
	// full is the whole package opened by excelize, when a cell needs it
	// (a shared formula's text).
	full    *excelize.File
	fullErr error
}

// partName returns the name excelize gives a zip entry.
func partName(name string) string {
	name = strings.ReplaceAll(name, "\\", "/")
	switch strings.ToLower(name) {
	case "[content_types].xml":
		return "[Content_Types].xml"
	case "xl/sharedstrings.xml":
		return "xl/sharedStrings.xml"
	}
	return name
}

// openParts opens the package at path for reading its parts directly,
// with the unzip limit of open (0: the default); false when the excelize
// path must be taken.
func openParts(path string, unzip int64) (*parts, bool) {
	zr, err := zip.OpenReader(path)
	if err != nil {
		return nil, false
	}
	p := &parts{path: path, unzip: unzip, zr: zr, files: map[string]*zip.File{}, sheets: map[string]*zip.File{}}
	limit := int64(UnzipSizeLimit)
	if unzip > 0 {
		limit = unzip
	}
	xmlLimit := min(int64(UnzipXMLSizeLimit), limit)
	// The limits as excelize applies them when it opens the file.
	var total int64
	big := map[*zip.File]bool{}
	for _, zf := range zr.File {
		size := zf.FileInfo().Size()
		total += size
		if limit < 0 || uint64(limit) < uint64(size) || size < 0 || total > limit {
			zr.Close()
			return nil, false
		}
		name := partName(zf.Name)
		lower := strings.ToLower(name)
		if (name == "xl/sharedStrings.xml" || strings.HasPrefix(lower, "xl/worksheets/sheet")) && size > xmlLimit {
			zr.Close()
			return nil, false // excelize keeps it in a temporary file
		}
		p.files[name] = zf
		big[zf] = name == "xl/sharedStrings.xml" || strings.HasPrefix(lower, "xl/worksheets/") || strings.HasPrefix(lower, "xl/media/")
		if big[zf] {
			rc, err := zf.Open()
			if err != nil {
				zr.Close()
				return nil, false
			}
			rc.Close()
		}
	}
	if p.shell, err = openShell(zr, big, limit, xmlLimit); err != nil {
		zr.Close()
		return nil, false
	}
	p.sst = p.files[sharedStringsPart(p.shell)]
	for _, name := range []string{SheetEntry, SheetData, SheetStudy} {
		if part, ok := sheetPart(p.shell, name); ok && p.files[part] != nil {
			p.sheets[name] = p.files[part]
		}
	}
	return p, true
}

// openShell opens the package with the parts marked big left empty.
func openShell(zr *zip.ReadCloser, big map[*zip.File]bool, limit, xmlLimit int64) (*excelize.File, error) {
	var buf bytes.Buffer
	w := zip.NewWriter(&buf)
	for _, zf := range zr.File {
		var err error
		if big[zf] {
			_, err = w.CreateHeader(&zip.FileHeader{Name: zf.Name, Method: zip.Store})
		} else {
			err = w.Copy(zf) // as it is, compressed
		}
		if err != nil {
			return nil, err
		}
	}
	if err := w.Close(); err != nil {
		return nil, err
	}
	return excelize.OpenReader(&buf, excelize.Options{RawCellValue: true, UnzipSizeLimit: limit, UnzipXMLSizeLimit: xmlLimit})
}

// scan reads part zf with fn; false when fn's scan does not apply or the
// part cannot be read (a scan that stops early, at a cell beyond the
// bounds, has its answer whatever follows).
func (p *parts) scan(zf *zip.File, fn func(sc *xmlScanner) bool) bool {
	rc, err := zf.Open()
	if err != nil {
		return false
	}
	defer rc.Close()
	sc := &xmlScanner{src: rc}
	return fn(sc) && !sc.failed()
}

func (p *parts) close() {
	if p.full != nil {
		p.full.Close()
	}
	p.shell.Close()
	p.zr.Close()
}

// sharedStrings reads the shared strings (nil without any).
func (p *parts) sharedStrings() (*sstTable, bool) {
	if p.sst == nil {
		return nil, true
	}
	var t *sstTable
	ok := p.scan(p.sst, func(sc *xmlScanner) bool {
		var ok bool
		t, ok = readSST(sc, int(min(p.sst.UncompressedSize64, UnzipXMLSizeLimit)))
		return ok
	})
	return t, ok
}

// sheet reads sheet name whole (a small one: the plan or Study sheet).
// With found false the sheet does not exist; errNoStream when it cannot be
// read directly.
func (p *parts) sheet(name string, sst *sstTable, lim scanLimits) (sc *scannedSheet, found bool, err error) {
	if idx, err := p.shell.GetSheetIndex(name); err != nil || idx < 0 {
		return nil, false, nil
	}
	zf := p.sheets[name]
	if zf == nil {
		return nil, true, errNoStream
	}
	ok := p.scan(zf, func(x *xmlScanner) bool {
		var ok bool
		sc, ok = collectSheet(x, sst, lim)
		return ok
	})
	if !ok || sc.wide != "" || sc.many != 0 {
		return nil, true, errNoStream
	}
	return sc, true, nil
}

// readData is readData for the package read directly.
func (p *parts) readData(path string, opt ReadOptions, sst *sstTable) (dataSheet, error) {
	sc, found, err := p.sheet(SheetData, sst, dataLimits)
	if err != nil {
		return dataSheet{}, err
	}
	if !found {
		return noData(path, opt)
	}
	return decodeData(path, opt, func(c string) (string, error) { return sc.value(c), nil }, false)
}

// excelizeFile returns the whole package opened by excelize.
func (p *parts) excelizeFile() (*excelize.File, error) {
	if p.full == nil && p.fullErr == nil {
		p.full, p.fullErr = open(p.path, p.unzip)
	}
	return p.full, p.fullErr
}

// readParts is Read with the package read directly; errNoStream when
// readExcelize must do it.
func readParts(path string, opt ReadOptions) (*Filled, error) {
	p, ok := openParts(path, opt.UnzipLimit)
	if !ok {
		return nil, errNoStream
	}
	defer p.close()
	return p.check(path, opt)
}

func (p *parts) check(path string, opt ReadOptions) (*Filled, error) {
	sst, ok := p.sharedStrings()
	if !ok {
		return nil, errNoStream
	}
	ds, err := p.readData(path, opt, sst)
	if err != nil {
		return nil, err
	}
	if opt.Key != nil && !ds.layout.Plan.Blind && !ds.fromPlan {
		return nil, notBlind(path)
	}
	label, err := p.label(sst)
	if err != nil {
		return nil, err
	}
	k := entryChecker(path, ds, opt)
	fl, err := p.checkEntry(path, ds, k, sst)
	if err != nil {
		return nil, err
	}
	fl.Sealed = ds.layout.IsSealed()
	fl.SimulatedNote = ds.st.Simulated
	fl.Label = label
	if fl.Label == "" {
		fl.Label = ds.st.Simulated
	}
	return fl, nil
}

// label returns the notice at the top of the Study sheet, cell A2, as
// excelize's GetCellValue gives it. Most workbooks have none: then the
// scan says so (excelize gives "" for an empty or missing cell, and for a
// sheet it cannot read), unless A2 is merged into a range, whose first
// cell excelize would give. A notice is read by excelize itself, which
// also decodes the whole sheet and the shared strings and would give ""
// if it could not.
func (p *parts) label(sst *sstTable) (string, error) {
	study, found, err := p.sheet(SheetStudy, sst, scanLimits{})
	if err != nil || !found {
		return "", err
	}
	if study.value("A2") == "" {
		merged := false
		if !p.scan(p.sheets[SheetStudy], func(sc *xmlScanner) bool {
			for sc.next() {
				if string(sc.name) == "mergeCell" && !sc.end {
					merged = merged || mergedA2(string(sc.attr("ref")))
				}
			}
			return true
		}) {
			return "", errNoStream
		}
		if !merged {
			return "", nil
		}
	}
	f, err := p.excelizeFile()
	if err != nil {
		return "", errNoStream
	}
	label, err := f.GetCellValue(SheetStudy, "A2")
	if err != nil {
		return "", nil
	}
	return label, nil
}

// mergedA2 reports whether the merged range ref may hold cell A2 (true
// for a range excelize may read otherwise than as written).
func mergedA2(ref string) bool {
	from, to, ok := strings.Cut(ref, ":")
	if !ok {
		to = from
	}
	c1, r1, err1 := excelize.CellNameToCoordinates(from)
	c2, r2, err2 := excelize.CellNameToCoordinates(to)
	if err1 != nil || err2 != nil || strings.Count(ref, ":") > 1 {
		return true
	}
	return min(c1, c2) <= 1 && max(r1, r2) >= 2 && min(r1, r2) <= 2
}

// checkEntry checks the Entry sheet row by row as it is read, with the
// bounds of entryRows.
func (p *parts) checkEntry(path string, ds dataSheet, k *checker, sst *sstTable) (*Filled, error) {
	zf := p.sheets[SheetEntry]
	if zf == nil {
		return nil, errNoStream
	}
	l := ds.layout
	c := layoutColumns(l.Plan)
	limitRows := len(l.Units)*c.rowsPer() + 1 + extraRows
	// The Status columns may be absent: keep two more.
	r := sheetReader{sst: sst, lim: scanLimits{cols: maxColumns, rows: limitRows}, keep: len(c.headers(l.Plan)) + 2}
	typer := newCellTyper(p.shell, SheetEntry)
	k.cellInfo = func(row, col int) cellInfo { return p.entryInfo(&r, typer, row, col) }
	// A problem with the header or the ranges is reported after the
	// sheet's bounds, as when the rows were read first.
	err := k.checkRanges()
	header := false
	var cells []string
	ok := p.scan(zf, func(sc *xmlScanner) bool {
		r.sc = sc
		return r.read(func() {
			if r.n == 0 || err != nil {
				return
			}
			cells = r.cells(cells[:0])
			switch {
			case header:
				k.row(sheetRow{num: r.num, cells: cells})
			case r.num != 1:
				err = k.noHeader()
			default:
				header = true
				err = k.header(cells)
			}
		})
	})
	switch {
	case !ok:
		return nil, errNoStream
	case r.wide != "":
		col, _ := refColumn([]byte(r.wide))
		return nil, tooWide(path, r.wide, col)
	case r.many > 0:
		return nil, tooLong(path, r.many, limitRows, l, c)
	case err != nil:
		return nil, err
	case !header:
		return nil, k.noHeader()
	}
	k.finish()
	return k.out, nil
}

// entryInfo is what the check knows of the cell at row and col (1-based)
// of the Entry sheet, in the row r has just read: its type and formula
// from the scan (a shared formula's text from excelize), date formats
// from the styles, as cellTyper.fromScan gives them.
func (p *parts) entryInfo(r *sheetReader, t *cellTyper, row, col int) cellInfo {
	if row != r.num {
		panic("workbook: cell info of a row already read")
	}
	var m cellMeta
	fo, shared := "", false
	if j := col - 1; j < len(r.meta) {
		m, fo, shared = r.meta[j], r.form[j], r.shrd[j]
	}
	ci := cellInfo{kind: m.kind, formula: fo}
	if fo == "" && shared {
		if f, err := p.excelizeFile(); err == nil {
			if s, err := f.GetCellFormula(SheetEntry, cell(col, row)); err == nil {
				ci.formula = s
			}
		}
	}
	if ci.kind == kindNumber && m.style > 0 {
		ci.date = t.isDate(int(m.style))
	}
	return ci
}
