package workbook

import (
	"archive/zip"
	"bytes"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

// sameAsExcelize reads the workbook at path both ways, with the package's
// parts read directly (readParts) and through excelize (readExcelize, the
// reader before it), and fails unless they give the same result or the
// same error. direct says whether readParts must have applied.
func sameAsExcelize(t *testing.T, path string, opt ReadOptions, direct bool) (*Filled, error) {
	t.Helper()
	want, werr := readExcelize(path, opt)
	got, gerr := readParts(path, opt)
	if gerr == errNoStream {
		if direct {
			t.Fatalf("the parts were not read directly (excelize: %v)", werr)
		}
		return want, werr
	}
	if !reflect.DeepEqual(gerr, werr) {
		t.Fatalf("error %v\nexcelize: %v", gerr, werr)
	}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("result differs from excelize's:\n%s", describeDiff(got, want))
	}
	// Read takes the direct path and falls back to the same answer.
	fl, err := Read(path, opt)
	if !reflect.DeepEqual(err, werr) || !reflect.DeepEqual(fl, want) {
		t.Fatalf("Read: %v, %v", fl, err)
	}
	samePlanSheet(t, path, opt)
	return got, gerr
}

// samePlanSheet compares the plan sheet as ReadLayout and ReadView read
// it with readData through excelize.
func samePlanSheet(t *testing.T, path string, opt ReadOptions) {
	t.Helper()
	got, gerr := readPlanSheet(path, opt)
	var want dataSheet
	f, werr := open(path, opt.UnzipLimit)
	if werr == nil {
		want, werr = readData(f, path, opt)
		f.Close()
	}
	if !reflect.DeepEqual(gerr, werr) {
		t.Fatalf("plan sheet: error %v\nexcelize: %v", gerr, werr)
	}
	// The check needs neither the units' JSON nor the shared strings
	// kept with the plan sheet.
	want.st.Units, want.sst, want.sstOK = nil, nil, false
	got.sst, got.sstOK = nil, false
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("plan sheet %+v\nexcelize %+v", got, want)
	}
}

func describeDiff(got, want *Filled) string {
	if got == nil || want == nil {
		return fmt.Sprintf("%v vs %v", got, want)
	}
	var b strings.Builder
	fmt.Fprintf(&b, "problems %v\nexcelize %v\n", got.Problems, want.Problems)
	for r := range want.Values {
		for i := range want.Values[r] {
			if r < len(got.Values) && i < len(got.Values[r]) && got.Values[r][i] != want.Values[r][i] {
				fmt.Fprintf(&b, "value %d/%d: %+v, excelize %+v\n", r, i, got.Values[r][i], want.Values[r][i])
			}
		}
	}
	if !reflect.DeepEqual(got.Status, want.Status) {
		fmt.Fprintf(&b, "status %v\nexcelize %v\n", got.Status, want.Status)
	}
	if !reflect.DeepEqual(got.Layout, want.Layout) {
		b.WriteString("layouts differ\n")
	}
	fmt.Fprintf(&b, "label %q/%q simulated %q/%q sealed %v/%v", got.Label, want.Label, got.SimulatedNote, want.SimulatedNote, got.Sealed, want.Sealed)
	return b.String()
}

// TestPartsSameAsExcelize checks the direct reading of the package
// against excelize's on workbooks with every kind of cell, edit and
// damage the check reports, and on each plan form (blocks, grids, blind
// codes, subsamples, split plots, non-ASCII text).
func TestPartsSameAsExcelize(t *testing.T) {
	l := testLayout(t, false)
	blind := testLayout(t, true)
	key := design.KeyOf(blind)
	sub := testLayout(t, false)
	sub.Plan.Subsamples = 3
	sub, err := randomize.Assign(sub.Plan)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name   string
		l      design.Layout
		mutate func(f *excelize.File)
		opt    ReadOptions
	}{
		{name: "clean", l: l},
		{name: "sorted rows", l: l, mutate: func(f *excelize.File) {
			rows, _ := f.GetRows(SheetEntry, excelize.Options{RawCellValue: true})
			for k, r := range rows[1:] {
				for j, v := range r {
					f.SetCellStr(SheetEntry, cell(j+1, len(rows)-k), v)
				}
			}
		}},
		{name: "deleted and duplicated rows", l: l, mutate: func(f *excelize.File) {
			f.RemoveRow(SheetEntry, 3)
			f.DuplicateRowTo(SheetEntry, 2, 9)
		}},
		{name: "edited design cells", l: l, mutate: func(f *excelize.File) {
			f.SetCellInt(SheetEntry, "B4", 3)
			f.SetCellStr(SheetEntry, "D2", "F9")
			f.SetCellInt(SheetEntry, "A5", 999)
		}},
		{name: "every kind of response cell", l: l, mutate: func(f *excelize.File) {
			f.SetCellStr(SheetEntry, "E2", "n/a")
			f.SetCellStr(SheetEntry, "E3", "12,5")
			f.SetCellStr(SheetEntry, "E4", " 12.5 ")
			f.SetCellFloat(SheetEntry, "E5", 999, -1, 64)
			f.SetCellValue(SheetEntry, "E6", nil)
			f.SetCellBool(SheetEntry, "E7", true)
			f.SetCellStr(SheetEntry, "E8", "-Inf")
			f.SetCellStr(SheetEntry, "E9", "0x10")
			st, _ := f.NewStyle(&excelize.Style{NumFmt: 14})
			f.SetCellStyle(SheetEntry, "F2", "F2", st)
			code := `dd"."mm"."yyyy`
			cst, _ := f.NewStyle(&excelize.Style{CustomNumFmt: &code})
			f.SetCellStyle(SheetEntry, "F3", "F3", cst)
			num, _ := f.NewStyle(&excelize.Style{NumFmt: 2})
			f.SetCellStyle(SheetEntry, "F4", "F4", num)
			f.SetCellValue(SheetEntry, "F5", nil)
			f.SetCellFormula(SheetEntry, "F5", "E4*2")
			f.SetCellFormula(SheetEntry, "F6", "F4+1")
			f.SetCellFormula(SheetEntry, "F7", "F4*2", excelize.FormulaOpts{Type: new(excelize.STCellFormulaTypeShared), Ref: new("F7:F9")})
			f.SetCellRichText(SheetEntry, "J3", []excelize.RichTextRun{{Text: "rich "}, {Text: "note é", Font: &excelize.Font{Bold: true}}})
			f.SetCellStr(SheetEntry, "J4", `a & b <c> "d" 'e'`)
		}},
		{name: "decimal comma accepted", l: l, opt: ReadOptions{DecimalComma: true}, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E3", "12,5") }},
		{name: "status and reason", l: l, mutate: func(f *excelize.File) {
			f.SetCellValue(SheetEntry, "E5", nil)
			f.SetCellStr(SheetEntry, "G5", "Lost")
			f.SetCellStr(SheetEntry, "G6", "excluded")
			f.SetCellStr(SheetEntry, "H6", "pot knocked over")
			f.SetCellStr(SheetEntry, "G7", "dead")
			f.SetCellStr(SheetEntry, "G8", "measured")
			f.SetCellValue(SheetEntry, "F8", nil)
		}},
		{name: "range given on check", l: l, opt: ReadOptions{Ranges: map[string]Range{"height_cm": {Min: f64(0), Max: f64(1000)}}}, mutate: func(f *excelize.File) { f.SetCellFloat(SheetEntry, "E5", 999, -1, 64) }},
		{name: "range of no response", l: l, opt: ReadOptions{Ranges: map[string]Range{"nope": {}}}},
		{name: "range of no response and a moved column", l: l, opt: ReadOptions{Ranges: map[string]Range{"nope": {}}}, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E1", "mass_g") }},
		{name: "moved column", l: l, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E1", "mass_g") }},
		{name: "header cleared", l: l, mutate: func(f *excelize.File) {
			for c := 1; c <= 10; c++ {
				f.SetCellValue(SheetEntry, cell(c, 1), nil)
			}
		}},
		{name: "status columns absent", l: l, mutate: func(f *excelize.File) {
			f.RemoveCol(SheetEntry, "G")
			f.RemoveCol(SheetEntry, "G")
		}},
		{name: "cells far right", l: l, mutate: func(f *excelize.File) {
			f.SetCellStr(SheetEntry, "Z3", "stray")
			f.SetCellStr(SheetEntry, cell(maxColumns, 4), "last")
		}},
		{name: "cell beyond the columns", l: l, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, cell(maxColumns+1, 4), "x") }},
		{name: "cell beyond the columns and a moved column", l: l, mutate: func(f *excelize.File) {
			f.SetCellStr(SheetEntry, "E1", "mass_g")
			f.SetCellStr(SheetEntry, cell(maxColumns+1, 6), "x")
		}},
		{name: "rows below the units", l: l, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "A40", "note") }},
		{name: "notice on the Study sheet", l: l, mutate: func(f *excelize.File) { f.SetCellStr(SheetStudy, "A2", "SIMULATED test notice") }},
		{name: "Study sheet deleted", l: l, mutate: func(f *excelize.File) { f.DeleteSheet(SheetStudy) }},
		{name: "title merged over the notice cell", l: l, mutate: func(f *excelize.File) { f.MergeCell(SheetStudy, "A1", "B2") }},
		{name: "notice merged", l: l, mutate: func(f *excelize.File) {
			f.SetCellStr(SheetStudy, "A2", "SIMULATED test notice")
			f.MergeCell(SheetStudy, "A2", "B2")
		}},
		{name: "Map sheet deleted", l: l, mutate: func(f *excelize.File) { f.DeleteSheet(SheetMap) }},
		{name: "plan sheet deleted", l: l, mutate: func(f *excelize.File) { f.DeleteSheet(SheetData) }},
		{name: "plan sheet deleted, layout given", l: l, opt: ReadOptions{Layout: &l}, mutate: func(f *excelize.File) { f.DeleteSheet(SheetData) }},
		{name: "layout of another plan given", l: l, opt: ReadOptions{Layout: &blind}},
		{name: "plan JSON edited", l: l, mutate: func(f *excelize.File) {
			v, _ := f.GetCellValue(SheetData, "A4")
			f.SetCellStr(SheetData, "A4", strings.Replace(v, `"seed":17`, `"seed":18`, 1))
		}},
		{name: "chunk count edited", l: l, mutate: func(f *excelize.File) { f.SetCellStr(SheetData, "B3", "x") }},
		{name: "key on an open workbook", l: l, opt: ReadOptions{Key: &key}},
		{name: "blind without key", l: blind},
		{name: "blind with key", l: blind, opt: ReadOptions{Key: &key}},
		{name: "blind code edited", l: blind, opt: ReadOptions{Key: &key}, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "D3", "XX") }},
		{name: "subsamples", l: sub, mutate: func(f *excelize.File) {
			f.RemoveRow(SheetEntry, 10)
			f.DuplicateRowTo(SheetEntry, 3, 12)
			f.SetCellStr(SheetEntry, "E5", "7")
			f.SetCellStr(SheetEntry, "E6", "x")
		}},
		{name: "non-ASCII plan", l: unicodeLayout(t, 3), mutate: func(f *excelize.File) {
			f.SetCellStr(SheetEntry, "F3", "Témoin 🌱")
			f.SetCellStr(SheetEntry, "H4", "lost")
			f.SetCellStr(SheetEntry, "I4", "mangé par un escargot 🐌")
		}},
		{name: "split plot", l: splitLayout(t)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path, f := filled(t, tt.l)
			if tt.mutate != nil {
				tt.mutate(f)
			}
			save(t, f, path)
			sameAsExcelize(t, path, tt.opt, true)
		})
	}
}

// TestPartsLibreOffice: a workbook re-saved by LibreOffice (shared
// strings, its own styles and markup) is read directly, as excelize reads
// it.
func TestPartsLibreOffice(t *testing.T) {
	lo := needLibreOffice(t)
	l := unicodeLayout(t, 2)
	path, f := filled(t, l)
	f.SetCellStr(SheetEntry, "H3", "excluded")
	f.SetCellStr(SheetEntry, "I3", "« hors essai » & co")
	f.SetCellStr(SheetEntry, "F4", "12.5")
	save(t, f, path)
	out := filepath.Join(t.TempDir(), "out")
	home := t.TempDir() // a fresh profile, so parallel runs do not collide
	cmd := exec.Command(lo, "--headless", "--norestore", "-env:UserInstallation=file://"+home, "--convert-to", "xlsx", "--outdir", out, path)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("libreoffice: %v\n%s", err, b)
	}
	saved := filepath.Join(out, "trial.xlsx")
	fl, err := sameAsExcelize(t, saved, ReadOptions{}, true)
	if err != nil || fl.Errors() != 0 {
		t.Fatalf("%v %v", err, fl.Problems)
	}
}

// TestPartsDamaged: a workbook with one part damaged is read as excelize
// reads it, whichever part it is, read by the check or not. excelize
// refuses a workbook when a part's entry header is damaged, and keeps what
// inflated before an error in a part's data (so a damaged part the check
// does not read does not matter).
func TestPartsDamaged(t *testing.T) {
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, zf := range zr.File {
		names = append(names, zf.Name)
	}
	zr.Close()
	for _, name := range names {
		for _, header := range []bool{false, true} {
			t.Run(fmt.Sprintf("%s header %v", name, header), func(t *testing.T) {
				damaged := filepath.Join(t.TempDir(), "damaged.xlsx")
				if err := os.WriteFile(damaged, damage(t, path, name, header), 0o644); err != nil {
					t.Fatal(err)
				}
				if _, err := sameAsExcelize(t, damaged, ReadOptions{}, false); header && err == nil {
					t.Errorf("a damaged entry header of %s was read", name)
				}
			})
		}
	}
}

// damage returns the zip at path with entry name's local header (its
// signature) or compressed data (in its middle) changed.
func damage(t *testing.T, path, name string, header bool) []byte {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	zr, err := zip.NewReader(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatal(err)
	}
	for _, zf := range zr.File {
		if zf.Name != name {
			continue
		}
		off, err := zf.DataOffset()
		if err != nil {
			t.Fatal(err)
		}
		if header {
			b[bytes.LastIndex(b[:off], []byte("PK\x03\x04"))] ^= 0xff // the header's signature
			return b
		}
		n := int64(zf.CompressedSize64)
		for i := off + n/2; i < off+n/2+8 && i < off+n; i++ {
			b[i] ^= 0x5a
		}
		return b
	}
	t.Fatalf("no entry %s", name)
	return nil
}

// TestPartsMarkup: markup the scanner does not read (a prefixed element
// name) sends the check to excelize, which reads it as before.
func TestPartsMarkup(t *testing.T) {
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	rewriteSheet(t, path, func(s string) string {
		return strings.Replace(s, "<sheetData>", "<sheetData><x:ext/>", 1)
	})
	if _, err := readParts(path, ReadOptions{}); err != errNoStream {
		t.Fatalf("read directly: %v", err)
	}
	fl, err := Read(path, ReadOptions{})
	if err != nil || fl.Errors() != 0 {
		t.Fatalf("%v %v", err, fl)
	}
}

// FuzzPartsSameAsExcelize replaces one part of a filled workbook (the
// Entry, plan or Study sheet, the shared strings or the workbook part)
// with the fuzzer's XML: the direct reading must give what the reading
// through excelize gives, or hand the check to it.
func FuzzPartsSameAsExcelize(f *testing.F) {
	l := testLayout(f, false)
	dir := f.TempDir()
	path := filepath.Join(dir, "seed.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		f.Fatal(err)
	}
	g, err := excelize.OpenFile(path)
	if err != nil {
		f.Fatal(err)
	}
	g.SetCellFloat(SheetEntry, "E3", 12.5, -1, 64)
	g.SetCellStr(SheetEntry, "F4", "1,5")
	g.SetCellStr(SheetEntry, "G5", "lost")
	g.SetCellFormula(SheetEntry, "E6", "E3*2")
	if err := g.SaveAs(path); err != nil {
		f.Fatal(err)
	}
	g.Close()
	zr, err := zip.OpenReader(path)
	if err != nil {
		f.Fatal(err)
	}
	original := map[string][]byte{}
	var names []string
	for _, zf := range zr.File {
		rc, _ := zf.Open()
		b, _ := io.ReadAll(rc)
		rc.Close()
		original[zf.Name] = b
		names = append(names, zf.Name)
	}
	zr.Close()
	fuzzed := []string{"xl/worksheets/sheet2.xml", "xl/worksheets/sheet4.xml", "xl/worksheets/sheet1.xml", "xl/sharedStrings.xml", "xl/workbook.xml"}
	for i, name := range fuzzed {
		f.Add(byte(i), original[name])
	}
	f.Fuzz(func(t *testing.T, which byte, part []byte) {
		var b bytes.Buffer
		zw := zip.NewWriter(&b)
		for _, name := range names {
			w, _ := zw.Create(name)
			if name == fuzzed[int(which)%len(fuzzed)] {
				w.Write(part)
			} else {
				w.Write(original[name])
			}
		}
		zw.Close()
		p := filepath.Join(t.TempDir(), "f.xlsx")
		if err := os.WriteFile(p, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
		sameAsExcelize(t, p, ReadOptions{}, false)
	})
}
