package workbook

import (
	"path/filepath"
	"testing"

	"github.com/xuri/excelize/v2"
)

// TestScanSheet checks the streaming sheet reader against excelize's own
// reading (GetRows with raw values, GetCellType) on a workbook with every
// kind of cell a technician or another program leaves behind.
func TestScanSheet(t *testing.T) {
	l := testLayout(t, false)
	path := filepath.Join(t.TempDir(), "kinds.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	f.SetCellFloat(SheetEntry, "E2", 12.25, -1, 64)
	f.SetCellStr(SheetEntry, "E3", "12,5")
	f.SetCellStr(SheetEntry, "E4", "13.5")
	f.SetCellValue(SheetEntry, "E5", true)
	f.SetCellFormula(SheetEntry, "E6", "1+2")
	f.SetCellStr(SheetEntry, "F2", `a & b <c> "d" 'e'`)
	f.SetCellRichText(SheetEntry, "F3", []excelize.RichTextRun{{Text: "rich "}, {Text: "text", Font: &excelize.Font{Bold: true}}})
	f.SetCellInt(SheetEntry, "H12", 7) // beyond the last row and column
	date, _ := f.NewStyle(&excelize.Style{NumFmt: 14})
	f.SetCellFloat(SheetEntry, "E7", 45000, -1, 64)
	f.SetCellStyle(SheetEntry, "E7", "E7", date)
	f.SetCellFormula(SheetEntry, "E8", "E2*2", excelize.FormulaOpts{Type: new(excelize.STCellFormulaTypeShared), Ref: new("E8:E9")})
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	f.Close()
	f, err = excelize.OpenFile(path, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	for _, sheet := range []string{SheetEntry, SheetData, SheetStudy, SheetMap} {
		sc, ok := scanSheet(f, sheet, scanLimits{})
		if !ok {
			t.Fatalf("%s: the streaming reader did not apply", sheet)
		}
		// excelize gives a merged range's every cell the type of its first
		// cell; the scan, like the sheet's XML, has only the first cell.
		merged := map[string]bool{}
		mc, err := f.GetMergeCells(sheet)
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range mc {
			c1, r1, _ := excelize.CellNameToCoordinates(m.GetStartAxis())
			c2, r2, _ := excelize.CellNameToCoordinates(m.GetEndAxis())
			for r := r1; r <= r2; r++ {
				for c := c1; c <= c2; c++ {
					if r != r1 || c != c1 {
						ref, _ := excelize.CoordinatesToCellName(c, r)
						merged[ref] = true
					}
				}
			}
		}
		typer := newCellTyper(f, sheet)
		infoOf := typer.fromScan(sc)
		rows, err := f.GetRows(sheet, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		for r := 0; r < max(len(rows), len(sc.rows)); r++ {
			for c := 0; c < 12; c++ {
				var want string
				if r < len(rows) && c < len(rows[r]) {
					want = rows[r][c]
				}
				ref, _ := excelize.CoordinatesToCellName(c+1, r+1)
				if got := sc.value(ref); got != want {
					t.Errorf("%s!%s: %q, excelize %q", sheet, ref, got, want)
				}
				if merged[ref] {
					continue
				}
				if sheet == SheetEntry {
					// The check's view of a cell: type, formula, date format.
					if got, want := infoOf(ref), typer.info(ref); got != want {
						t.Errorf("%s!%s: cell info %+v, from excelize %+v", sheet, ref, got, want)
					}
				}
				typ, _ := f.GetCellType(sheet, ref)
				if wantText := typ != excelize.CellTypeNumber && typ != excelize.CellTypeUnset; sc.isText(ref) != wantText {
					t.Errorf("%s!%s: text %v, excelize type %v", sheet, ref, sc.isText(ref), typ)
				}
			}
		}
	}
}

// FuzzScanWorksheet feeds arbitrary markup to the sheet and shared-string
// scanners: they must fail cleanly (ok false) or return cells, never panic.
func FuzzScanWorksheet(f *testing.F) {
	f.Add([]byte(`<worksheet><sheetData><row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1"><v>1.5</v></c></row><row r="3"/></sheetData></worksheet>`))
	f.Add([]byte(`<sst><si><t>a &amp; b</t></si><si><r><t>x</t></r><rPh><t>y</t></rPh></si><si/></sst>`))
	f.Add([]byte(`<row r="2"><c r="C2" t="inlineStr"><is><t xml:space="preserve"> t </t></is></c></row>`))
	f.Fuzz(func(t *testing.T, b []byte) {
		sst, ok := scanSharedStrings(b)
		if !ok {
			sst = []string{"s0"}
		}
		if s, ok := scanWorksheet(b, sst, scanLimits{cols: 64, rows: 100}); ok {
			for r := range s.rows {
				if len(s.rows[r]) != len(s.meta[r]) {
					t.Fatalf("row %d: %d values, %d types", r, len(s.rows[r]), len(s.meta[r]))
				}
			}
		}
	})
}
