package workbook

import (
	"encoding/json"
	"fmt"
	"strconv"
	"unicode/utf8"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

// maxChunks bounds the chunk count read from cell B3 of the hidden sheet:
// a document of this many full chunks is larger than any worksheet the
// reader opens (UnzipXMLSizeLimit), so a larger count means an edited sheet.
const maxChunks = UnzipXMLSizeLimit / chunkSize

// chunks splits doc into pieces of at most limit UTF-16 code units (the
// unit a spreadsheet cell's 32,767-character limit counts), cutting only
// between characters, never inside a UTF-8 sequence or a surrogate pair.
func chunks(doc string, limit int) []string {
	var out []string
	start, units := 0, 0
	for i, r := range doc {
		n := 1
		if r >= 0x10000 {
			n = 2
		}
		if units+n > limit {
			out = append(out, doc[start:i])
			start, units = i, 0
		}
		units += n
	}
	return append(out, doc[start:])
}

// storedDoc returns the hidden sheet's document for layout l: for a blind
// plan the sealed plan, units without treatments and their codes; the
// spare units of the list, if any.
func storedDoc(l design.Layout, simulated string) ([]byte, error) {
	st := stored{Plan: l.Plan.Canonical(), Spares: l.Spares, Simulated: simulated}
	units := l.Units
	if l.Plan.Blind {
		// Keep the seed and the meaning of the codes out of the workbook:
		// the key file has them.
		st.Plan = l.Plan.Sealed().Canonical()
		units = make([]design.Unit, len(l.Units))
		for i, u := range l.Units {
			u.Treatment = -1
			units[i] = u
			st.Labels = append(st.Labels, l.Label(l.Units[i]))
		}
	}
	ub, err := json.Marshal(units)
	if err != nil {
		return nil, err
	}
	st.Units = ub
	return json.Marshal(st)
}

func writeData(f *excelize.File, l design.Layout, simulated string) error {
	doc, err := storedDoc(l, simulated)
	if err != nil {
		return err
	}
	return putDoc(f, l.Plan.Fingerprint(), doc, 0)
}

// putDoc writes the document, its checksum and its chunks to the hidden
// sheet, clearing the old chunks beyond the new ones (old is their count).
func putDoc(f *excelize.File, fingerprint string, doc []byte, old int) error {
	w := &sheetWriter{f: f, sheet: SheetData}
	cs := chunks(string(doc), chunkSize)
	w.str(1, 1, "plan fingerprint")
	w.str(2, 1, fingerprint)
	w.str(1, 2, "document sha256")
	w.str(2, 2, digest(doc))
	w.str(1, 3, "chunks")
	w.do(f.SetCellInt(SheetData, "B3", int64(len(cs))))
	for i, c := range cs {
		w.str(1, 4+i, c)
	}
	for i := len(cs); i < old; i++ {
		w.do(f.SetCellValue(SheetData, cell(1, 4+i), nil))
	}
	return w.err
}

// dataSheet is what the hidden sheet holds, as read.
type dataSheet struct {
	layout design.Layout
	labels []string // blind codes per unit (blind plans), else nil
	st     stored
	chunks int
	fp     string // cell B1: the fingerprint a key must match
	// sst is the workbook's shared strings as scanned for the plan sheet
	// (sstOK), for the Entry sheet's scan to reuse.
	sst   *sstTable
	sstOK bool

	// fromPlan is set when the hidden sheet was missing and the layout
	// came from ReadOptions.Layout.
	fromPlan bool
}

// readData reads the hidden sheet. It returns the layout and, for blind
// plans, each unit's code; with a key the layout is unblinded (treatments
// and seed restored) after the key is checked against the fingerprint.
// When the sheet is missing, opt.Layout (the layout file the workbook was
// made from) stands in for it.
func readData(f *excelize.File, path string, opt ReadOptions) (dataSheet, error) {
	if idx, err := f.GetSheetIndex(SheetData); err != nil || idx < 0 {
		return noData(path, opt)
	}
	get := func(c string) (string, error) {
		return f.GetCellValue(SheetData, c, excelize.Options{RawCellValue: true})
	}
	sst, sstOK := sharedStrings(f)
	if sstOK {
		if sc, ok := scanSheetWith(f, SheetData, sst, dataLimits); ok && sc.wide == "" && sc.many == 0 {
			// One streaming pass instead of excelize's in-memory sheet.
			get = func(c string) (string, error) { return sc.value(c), nil }
		}
	}
	ds, err := decodeData(path, opt, get, true)
	ds.sst, ds.sstOK = sst, sstOK
	return ds, err
}

// dataLimits bound the scan of the hidden sheet: the columns of any
// sheet, and the rows of the most chunks it can hold.
var dataLimits = scanLimits{cols: maxColumns, rows: maxChunks + 3}

// noData is readData for a workbook without the hidden sheet.
func noData(path string, opt ReadOptions) (dataSheet, error) {
	if opt.Layout != nil {
		return fromLayout(*opt.Layout, opt.Key)
	}
	return dataSheet{}, &FileError{Path: path, Sheet: SheetData, Msg: "the hidden plan sheet is missing (was the data pasted into a new workbook?), so the workbook cannot be matched to its plan; give the layout it was made from: allot check " + path + " --plan layout.json (written by allot layout -o layout.json)"}
}

// decodeData checks and decodes the hidden sheet's cells, which get
// returns by reference. keepUnits keeps the units' JSON in st.Units (Fill
// writes the document again, so it is decoded by encoding/json alone); a
// check needs only the decoded units.
func decodeData(path string, opt ReadOptions, get func(string) (string, error), keepUnits bool) (dataSheet, error) {
	fail := func(cell, msg string) error {
		return &FileError{Path: path, Sheet: SheetData, Cell: cell, Msg: msg}
	}
	fp, err := get("B1")
	if err != nil {
		return dataSheet{}, fail("B1", "unreadable: "+err.Error())
	}
	sum, _ := get("B2")
	b3, _ := get("B3")
	n, err := strconv.Atoi(b3)
	if err != nil || n < 1 || n > maxChunks {
		return dataSheet{}, fail("B3", fmt.Sprintf("the chunk count %q is not a whole number from 1 to %d: the plan sheet was edited; use an unedited copy of the workbook", b3, maxChunks))
	}
	texts := make([]string, n)
	size := 0
	for i := range texts {
		v, err := get(cell(1, 4+i))
		if err != nil {
			return dataSheet{}, fail(cell(1, 4+i), "unreadable: "+err.Error())
		}
		texts[i], size = v, size+len(v)
	}
	doc := make([]byte, 0, size)
	for _, v := range texts {
		doc = append(doc, v...)
	}
	if digest(doc) != sum {
		return dataSheet{}, fail("A4", "the stored plan does not match its checksum in B2: the plan sheet was edited; use an unedited copy of the workbook")
	}
	if !utf8.Valid(doc) {
		return dataSheet{}, fail("A4", "the stored plan is not valid UTF-8 text: the plan sheet was damaged; use an unedited copy")
	}
	var st stored
	var units []design.Unit
	ok := false
	if !keepUnits {
		st, units, ok = decodeStored(doc)
	}
	if !ok {
		st, units = stored{}, nil
		if err := json.Unmarshal(doc, &st); err != nil {
			return dataSheet{}, fail("A4", "the stored plan is not valid JSON: "+err.Error())
		}
		if err := json.Unmarshal(st.Units, &units); err != nil {
			return dataSheet{}, fail("A4", "the stored units are not valid JSON: "+err.Error())
		}
		if !keepUnits {
			st.Units = nil
		}
	}
	p, err := design.ParsePlan(st.Plan)
	if err != nil {
		return dataSheet{}, fail("A4", "the stored plan is not valid: "+err.Error())
	}
	ds := dataSheet{st: st, chunks: n, fp: fp}
	l := design.Layout{Plan: p, Units: units, Spares: st.Spares}
	if opt.Layout != nil && opt.Layout.Plan.Fingerprint() != fp {
		return dataSheet{}, fail("B1", fmt.Sprintf("the workbook's plan (fingerprint %.12s) is not the one in --plan (%.12s); give the layout this workbook was written from, or leave --plan out", fp, opt.Layout.Plan.Fingerprint()))
	}
	if !p.Blind {
		if p.Fingerprint() != fp {
			return dataSheet{}, fail("B1", "the plan fingerprint does not match the stored plan: the plan sheet was edited")
		}
		if err := l.Check(); err != nil {
			return dataSheet{}, fail("A4", "the stored layout is inconsistent: "+err.Error())
		}
		ds.layout = l
		return ds, nil
	}
	if ds.layout, err = readBlind(l, st.Labels, fp, opt.Key); err != nil {
		return dataSheet{}, &FileError{Path: path, Sheet: SheetData, Cell: err.(*cellError).cell, Msg: err.Error()}
	}
	ds.labels = st.Labels
	return ds, nil
}

// cellError is an error found in a cell of the hidden sheet.
type cellError struct{ cell, msg string }

func (e *cellError) Error() string { return e.msg }

// readBlind returns the stored layout l of a blind plan (codes per unit in
// labels, fingerprint fp from cell B1): sealed (treatments −1, each unit
// with its code) without a key, unblinded by randomize.Unblind with one.
func readBlind(l design.Layout, labels []string, fp string, key *design.Key) (design.Layout, error) {
	if len(labels) != len(l.Units) {
		return design.Layout{}, &cellError{"A4", "the stored blind codes do not match the units: the plan sheet was edited"}
	}
	for i := range l.Units {
		l.Units[i].Treatment, l.Units[i].Code = -1, labels[i]
	}
	if l.Plan.BlindMode != "" {
		// The fingerprint of a plan with a blind mode leaves the seed out:
		// it can be checked without the key.
		if l.Plan.Fingerprint() != fp {
			return design.Layout{}, &cellError{"B1", "the plan fingerprint does not match the stored plan: the plan sheet was edited"}
		}
		if err := l.Check(); err != nil {
			return design.Layout{}, &cellError{"A4", "the stored layout is inconsistent: " + err.Error()}
		}
	}
	if key == nil {
		return l, nil
	}
	if key.Format == design.KeyFormatV1 && key.Fingerprint != fp {
		return design.Layout{}, &cellError{"B1", "the key belongs to another plan (its fingerprint and seed do not reproduce this workbook's); give the key file written with this layout"}
	}
	full, err := randomize.Unblind(l, *key)
	if err != nil {
		return design.Layout{}, &cellError{"B1", err.Error()}
	}
	return full, nil
}

// fromLayout stands a layout file in for a lost hidden sheet. A sealed
// blind layout (as allot layout -o writes it) is unblinded with key when
// one is given; one already unblinded is used as it is.
func fromLayout(l design.Layout, key *design.Key) (dataSheet, error) {
	if l.IsSealed() && key != nil {
		full, err := randomize.Unblind(l, *key)
		if err != nil {
			return dataSheet{}, fmt.Errorf("--key: %w", err)
		}
		l = full
	}
	ds := dataSheet{layout: l, fromPlan: true}
	if l.Plan.Blind {
		for _, u := range l.Units {
			ds.labels = append(ds.labels, l.Label(u))
		}
	}
	return ds, nil
}
