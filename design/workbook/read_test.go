package workbook

import (
	"archive/zip"
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

func TestStatusHandedOn(t *testing.T) {
	l := testLayout(t, false)
	path, f := filled(t, l)
	// Unit on row 3 lost, row 4 excluded (its value kept for the record).
	f.SetCellValue(SheetEntry, "E3", nil)
	f.SetCellValue(SheetEntry, "F3", nil)
	f.SetCellStr(SheetEntry, "G3", "lost")
	f.SetCellStr(SheetEntry, "H3", "died day 12")
	f.SetCellStr(SheetEntry, "G4", "excluded")
	f.SetCellStr(SheetEntry, "H4", "wrong dose given")
	save(t, f, path)
	fl, err := Read(path, ReadOptions{})
	if err != nil || fl.Errors() != 0 {
		t.Fatalf("%v %v", err, fl.Problems)
	}
	if s := fl.Status[1]; s.Status != StatusLost || s.Reason != "died day 12" || s.Cell != "Entry!G3" {
		t.Errorf("status of unit 2: %+v", s)
	}
	obs := fl.Observations(0)
	if obs.Values.Len() != len(l.Units)-2 || len(obs.Losses) != 2 {
		t.Fatalf("%d values, %d losses", obs.Values.Len(), len(obs.Losses))
	}
	ex := obs.Losses[1]
	if ex.Unit != l.Units[2].ID || ex.Status != StatusExcluded || ex.Value != "20.25" || ex.Block != "1" || ex.Treatment != l.Label(l.Units[2]) {
		t.Errorf("excluded unit: %+v", ex)
	}
	for _, p := range fl.Problems {
		if strings.Contains(p.Msg, "no value (missing)") {
			t.Errorf("a lost unit is also reported missing: %s", p)
		}
	}
}

func TestSimulatedMarkerIsChecksummed(t *testing.T) {
	l := testLayout(t, false)
	dir := t.TempDir()
	src, dst := filepath.Join(dir, "w.xlsx"), filepath.Join(dir, "sim.xlsx")
	if err := Write(src, l, meta, false); err != nil {
		t.Fatal(err)
	}
	vals := [][]float64{make([]float64, len(l.Units)), make([]float64, len(l.Units))}
	if err := Fill(src, dst, vals, "SIMULATED by allot demo", false); err != nil {
		t.Fatal(err)
	}
	// Clearing the visible notice does not make the data pass as measured.
	f, _ := excelize.OpenFile(dst)
	f.SetCellValue(SheetStudy, "A2", nil)
	save(t, f, dst)
	fl, err := Read(dst, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !fl.Simulated() || fl.SimulatedNote == "" {
		t.Errorf("simulated %v, note %q", fl.Simulated(), fl.SimulatedNote)
	}
	// Removing it from the plan data breaks the checksum.
	f, _ = excelize.OpenFile(dst)
	v, _ := f.GetCellValue(SheetData, "A4")
	f.SetCellStr(SheetData, "A4", strings.Replace(v, `,"simulated":"SIMULATED by allot demo"`, "", 1))
	save(t, f, dst)
	if _, err := Read(dst, ReadOptions{}); err == nil || !strings.Contains(err.Error(), "checksum") {
		t.Errorf("edited marker: %v", err)
	}
}

func TestLostPlanSheetRecoveredWithLayout(t *testing.T) {
	l := testLayout(t, false)
	path, f := filled(t, l)
	f.DeleteSheet(SheetData)
	save(t, f, path)
	if _, err := Read(path, ReadOptions{}); err == nil || !strings.Contains(err.Error(), "--plan layout.json") {
		t.Fatalf("without a layout: %v", err)
	}
	fl, err := Read(path, ReadOptions{Layout: &l})
	if err != nil || fl.Errors() != 0 {
		t.Fatalf("%v %v", err, fl.Problems)
	}
	if !strings.Contains(fl.Problems[0].Msg, "checked against the layout given with --plan") {
		t.Errorf("first problem %v", fl.Problems[0])
	}
	if fl.Values[0][3].Text != "30.25" {
		t.Errorf("value %q", fl.Values[0][3].Text)
	}
	// A layout of another plan is refused when the sheet is there.
	path2, f2 := filled(t, l)
	save(t, f2, path2)
	other := testLayout(t, false)
	other.Plan.Seed = 99
	other, _ = randomize.Assign(other.Plan)
	if _, err := Read(path2, ReadOptions{Layout: &other}); err == nil || !strings.Contains(err.Error(), "is not the one in --plan") {
		t.Errorf("other layout: %v", err)
	}
}

func TestKeyOnOpenWorkbook(t *testing.T) {
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	key := design.Key{Fingerprint: l.Plan.Fingerprint()}
	if _, err := Read(path, ReadOptions{Key: &key}); err == nil || !strings.Contains(err.Error(), "not blind, so it has no key") {
		t.Errorf("got %v", err)
	}
}

func TestNotAnXLSX(t *testing.T) {
	dir := t.TempDir()
	ods := filepath.Join(dir, "a.xlsx") // misnamed: the content decides
	{
		out, _ := os.Create(ods)
		zw := zip.NewWriter(out)
		w, _ := zw.Create("mimetype")
		w.Write([]byte("application/vnd.oasis.opendocument.spreadsheet"))
		zw.Close()
		out.Close()
	}
	xls := filepath.Join(dir, "b.xls")
	os.WriteFile(xls, append([]byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}, make([]byte, 512)...), 0o644)
	for _, tt := range []struct{ path, want string }{
		{dir, "is a directory, not a workbook"},
		{ods, "is an OpenDocument spreadsheet (.ods); allot reads .xlsx: save a copy as Excel 2007-365 (.xlsx)"},
		{xls, "is an Excel 97-2003 workbook (.xls)"},
		{filepath.Join(dir, "none.xlsx"), "cannot be opened"},
	} {
		_, err := Read(tt.path, ReadOptions{})
		if err == nil || !strings.Contains(err.Error(), tt.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%s: got %v, want one line with %q", tt.path, err, tt.want)
		}
	}
}

func TestNumberLikeIDsStayText(t *testing.T) {
	p := design.Plan{Title: "ids", Design: design.CRD, Factors: []design.Factor{{Name: "t", Levels: []string{"a", "b"}}},
		Reps: []int{2, 2}, Blocks: 1, BlockName: "block", Responses: []design.Response{{Name: "y"}}, Seed: 1,
		Units: []design.UnitSpec{{ID: "007", Block: 1}, {ID: "0123", Block: 1}, {ID: "+1", Block: 1}, {ID: "42", Block: 1}}}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "ids.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	f, _ := excelize.OpenFile(path)
	for r := 2; r <= 5; r++ {
		v, _ := f.GetCellValue(SheetEntry, cell(1, r))
		typ, _ := f.GetCellType(SheetEntry, cell(1, r))
		number := typ == excelize.CellTypeNumber || typ == excelize.CellTypeUnset
		if number != (v == "42") {
			t.Errorf("unit %q written as number: %v", v, number)
		}
	}
	fl, err := Read(path, ReadOptions{})
	if err != nil || fl.Errors() != 0 {
		t.Fatalf("%v %v", err, fl.Problems)
	}
}

// rewriteSheet copies the workbook at path, passing the Entry sheet's XML
// through edit.
func rewriteSheet(t *testing.T, path string, edit func(string) string) {
	t.Helper()
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	zw := zip.NewWriter(&b)
	for _, zf := range zr.File {
		rc, _ := zf.Open()
		data, _ := io.ReadAll(rc)
		rc.Close()
		if zf.Name == "xl/worksheets/sheet2.xml" { // Entry is the second sheet
			data = []byte(edit(string(data)))
		}
		w, _ := zw.Create(zf.Name)
		w.Write(data)
	}
	zw.Close()
	zr.Close()
	os.WriteFile(path, b.Bytes(), 0o644)
}

func TestBoundedReading(t *testing.T) {
	if testing.Short() {
		t.Skip("builds a 200,000-row sheet")
	}
	l := testLayout(t, false)
	path := filepath.Join(t.TempDir(), "wide.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	// One cell in column XFD (the last) on each of 200,000 rows.
	rewriteSheet(t, path, func(s string) string {
		var rows strings.Builder
		for r := 11; r < 200011; r++ {
			fmt.Fprintf(&rows, `<row r="%d"><c r="XFD%d" t="inlineStr"><is><t>x</t></is></c></row>`, r, r)
		}
		return strings.Replace(s, "</sheetData>", rows.String()+"</sheetData>", 1)
	})
	_, err := Read(path, ReadOptions{})
	if err == nil || !strings.Contains(err.Error(), "cell XFD11") || !strings.Contains(err.Error(), "beyond the 512 columns") {
		t.Errorf("got %v", err)
	}
	// 200,000 rows in column A: refused by the row limit.
	path2 := filepath.Join(t.TempDir(), "long.xlsx")
	Write(path2, l, meta, false)
	rewriteSheet(t, path2, func(s string) string {
		var rows strings.Builder
		for r := 11; r < 200011; r++ {
			fmt.Fprintf(&rows, `<row r="%d"><c r="A%d"><v>%d</v></c></row>`, r, r, r)
		}
		return strings.Replace(s, "</sheetData>", rows.String()+"</sheetData>", 1)
	})
	_, err = Read(path2, ReadOptions{})
	if err == nil || !strings.Contains(err.Error(), "more than 10010 rows with content, where the plan has 9") {
		t.Errorf("got %v", err)
	}
}

// TestGridStatusAndDesignFlags: on a blind grid plan with spares the Row
// and Column cells sit before the code and the Status columns after the
// responses; an edited Row cell is a design problem, a lost unit is not;
// a lost plan sheet is stood in for by the sealed layout and its key.
func TestGridStatusAndDesignFlags(t *testing.T) {
	p := design.Plan{
		Title: "grid status", Design: design.RCBD, Factors: []design.Factor{{Name: "dose", Levels: []string{"qlow", "qmid", "qhigh"}}},
		Reps: []int{1, 1, 1}, BlockName: "litter", Responses: []design.Response{{Name: "score", Min: f64(0), Max: f64(10)}},
		Seed: 5, Blind: true, BlindMode: design.BlindUnit, PerBlock: 3, Grid: &design.Grid{Rows: 2, Cols: 2, Numbering: design.RowWise, Placement: design.RandomPlaces},
	}
	rows := []design.UnitRow{{ID: "a", Block: "L1"}, {ID: "b", Block: "L1"}, {ID: "c", Block: "L1"}, {ID: "d", Block: "L1"},
		{ID: "e", Block: "L2"}, {ID: "f", Block: "L2"}, {ID: "g", Block: "L2"}}
	p.Units, p.Blocks = design.BlocksFromColumn(rows)
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	key := design.KeyOf(l)
	path := filepath.Join(t.TempDir(), "grid.xlsx")
	if err := Write(path, l.Sealed(), meta, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	head, _ := f.GetRows(SheetEntry)
	if got := strings.Join(head[0], ","); got != "Unit,Litter,Position,Row,Column,Code,score,Status,Reason,Notes" {
		t.Fatalf("Entry header %s", got)
	}
	for r := 2; r <= len(l.Units)+1; r++ {
		f.SetCellValue(SheetEntry, fmt.Sprintf("G%d", r), r)
	}
	f.SetCellValue(SheetEntry, "G2", nil)
	f.SetCellStr(SheetEntry, "H2", "lost")
	f.SetCellStr(SheetEntry, "I2", "escaped")
	row3, _ := f.GetCellValue(SheetEntry, "D3")
	f.SetCellStr(SheetEntry, "D3", map[string]string{"1": "2", "2": "1"}[row3])
	save(t, f, path)
	fl, err := Read(path, ReadOptions{Key: &key})
	if err != nil {
		t.Fatal(err)
	}
	dp := fl.DesignProblems()
	if fl.Errors() != 1 || len(dp) != 1 || dp[0].Cell != "D3" || !strings.Contains(dp[0].Msg, "Row was") {
		t.Errorf("errors %d, design problems %v (all: %v)", fl.Errors(), dp, fl.Problems)
	}
	if s := fl.Status[0]; s.Status != StatusLost || s.Reason != "escaped" || s.Cell != "Entry!H2" {
		t.Errorf("status %+v", s)
	}
	if fl.Sealed || len(fl.Layout.Spares) != 1 {
		t.Errorf("sealed %v, spares %v", fl.Sealed, fl.Layout.Spares)
	}
	// Without the plan sheet: the sealed layout with its key stands in.
	f, _ = excelize.OpenFile(path)
	f.DeleteSheet(SheetData)
	save(t, f, path)
	sealed := l.Sealed()
	fl, err = Read(path, ReadOptions{Layout: &sealed, Key: &key})
	if err != nil {
		t.Fatal(err)
	}
	if fl.Sealed || fl.Layout.Units[0].Treatment != l.Units[0].Treatment || fl.Values[0][1].Text != "3" {
		t.Errorf("recovered: sealed %v, treatment %d, value %q", fl.Sealed, fl.Layout.Units[0].Treatment, fl.Values[0][1].Text)
	}
}

// TestFillBlindKeepsFingerprint: filling a blind workbook (whose cell B1 is
// the full plan's fingerprint, not the sealed plan's) with a notice keeps
// it readable, with and without the key.
func TestFillBlindKeepsFingerprint(t *testing.T) {
	l := testLayout(t, true)
	dir := t.TempDir()
	src, dst := filepath.Join(dir, "b.xlsx"), filepath.Join(dir, "sim.xlsx")
	if err := Write(src, l, meta, false); err != nil {
		t.Fatal(err)
	}
	vals := [][]float64{make([]float64, len(l.Units)), make([]float64, len(l.Units))}
	if err := Fill(src, dst, vals, "SIMULATED by allot demo", false); err != nil {
		t.Fatal(err)
	}
	key := design.KeyOf(l)
	for _, k := range []*design.Key{nil, &key} {
		fl, err := Read(dst, ReadOptions{Key: k})
		if err != nil || !fl.Simulated() || fl.Sealed != (k == nil) {
			t.Errorf("key %v: %v, simulated %v", k != nil, err, fl != nil && fl.Simulated())
		}
	}
}
