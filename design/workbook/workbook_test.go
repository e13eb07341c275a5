package workbook

import (
	"archive/zip"
	"bytes"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

func f64(v float64) *float64 { return &v }

func testLayout(t testing.TB, blind bool) design.Layout {
	t.Helper()
	p := design.Plan{
		Title: "workbook test", Design: design.RCBD,
		Factors: []design.Factor{{Name: "feed", Levels: []string{"F0", "F1", "F2"}}},
		Reps:    []int{1, 1, 1}, Blocks: 3, BlockName: "bench",
		Responses: []design.Response{{Name: "height_cm", Min: f64(0), Max: f64(200)}, {Name: "mass_g"}},
		Seed:      17, Blind: blind,
	}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

var meta = Meta{Version: "test", Created: time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)}

// filled writes the workbook and types values into it as a person would:
// height = 10·row index + .25, mass a large value with one decimal.
func filled(t *testing.T, l design.Layout) (string, *excelize.File) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "trial.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	c := layoutColumns(l.Plan)
	nd := c.designCount(l.Plan)
	for i := range l.Units {
		f.SetCellFloat(SheetEntry, cell(nd+1, i+2), float64(10*i)+0.25, -1, 64)
		f.SetCellValue(SheetEntry, cell(nd+2, i+2), 1000000000000.4+float64(i))
	}
	return path, f
}

func save(t *testing.T, f *excelize.File, path string) {
	t.Helper()
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
}

func TestRoundTrip(t *testing.T) {
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	fl, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(fl.Problems) != 0 {
		t.Fatalf("problems: %v", fl.Problems)
	}
	for i := range l.Units {
		if got, want := fl.Values[0][i].Text, fmt.Sprint(float64(10*i)+0.25); got != want {
			t.Errorf("unit %d height %q, want %q", i, got, want)
		}
		if got, want := fl.Values[1][i].Text, fmt.Sprintf("%.1f", 1000000000000.4+float64(i)); got != want {
			t.Errorf("unit %d mass %q, want %q (every digit)", i, got, want)
		}
	}
	if fl.Layout.Plan.Fingerprint() != l.Plan.Fingerprint() {
		t.Error("plan changed in the round trip")
	}
}

func TestMutations(t *testing.T) {
	l := testLayout(t, false)
	const (
		colBlock = 2 // B
		colTreat = 4 // D
		colH     = 5 // E
	)
	tests := []struct {
		name   string
		mutate func(f *excelize.File)
		opt    ReadOptions
		fatal  string // a *FileError containing this
		sev    Severity
		cell   string
		msg    string
		clean  bool
	}{
		{name: "sorted rows are harmless", clean: true, mutate: func(f *excelize.File) {
			// Reverse the data rows, as sorting by a column would.
			rows, _ := f.GetRows(SheetEntry, excelize.Options{RawCellValue: true})
			data := rows[1:]
			for k := range data {
				r := data[len(data)-1-k]
				row := k + 2
				for j, v := range r {
					var n float64
					if _, err := fmt.Sscan(v, &n); err == nil && j != 3 {
						f.SetCellFloat(SheetEntry, cell(j+1, row), n, -1, 64)
					} else {
						f.SetCellStr(SheetEntry, cell(j+1, row), v)
					}
				}
			}
		}},
		{name: "deleted row", mutate: func(f *excelize.File) { f.RemoveRow(SheetEntry, 3) }, sev: Error, msg: "unit 102", cell: ""},
		{name: "duplicated row", mutate: func(f *excelize.File) { f.DuplicateRowTo(SheetEntry, 2, 11) }, sev: Error, cell: "A11", msg: "appears again (first in A2)"},
		{name: "swapped treatments", mutate: func(f *excelize.File) {
			a, _ := f.GetCellValue(SheetEntry, "D2")
			b, _ := f.GetCellValue(SheetEntry, "D3")
			f.SetCellStr(SheetEntry, "D2", b)
			f.SetCellStr(SheetEntry, "D3", a)
		}, sev: Error, cell: "D2", msg: "Treatment was"},
		{name: "edited block", mutate: func(f *excelize.File) { f.SetCellInt(SheetEntry, cell(colBlock, 4), 3) }, sev: Error, cell: "B4", msg: `Bench was "1" in the plan and is now "3"`},
		{name: "text in a number cell", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "n/a") }, sev: Error, cell: "E5", msg: `"n/a" is not a number`},
		{name: "decimal comma", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "12,5") }, sev: Error, cell: "E5", msg: "--decimal-comma"},
		{name: "decimal comma accepted", opt: ReadOptions{DecimalComma: true}, clean: true, mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "12,5") }},
		{name: "number stored as text", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "12.5") }, sev: Warning, cell: "E5", msg: "number stored as text"},
		{name: "out of range", mutate: func(f *excelize.File) { f.SetCellFloat(SheetEntry, "E5", 999, -1, 64) }, sev: Error, cell: "E5", msg: "outside the declared range 0..200"},
		{name: "blank response", mutate: func(f *excelize.File) { f.SetCellValue(SheetEntry, "E5", nil) }, sev: Warning, msg: "1 unit of treatment"},
		{name: "unknown unit", mutate: func(f *excelize.File) { f.SetCellInt(SheetEntry, "A4", 999) }, sev: Error, cell: "A4", msg: `unit "999" is not in the plan`},
		{name: "moved column", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E1", "mass_g") }, fatal: `cell E1: header "mass_g" where "height_cm" belongs`},
		{name: "plan sheet deleted", mutate: func(f *excelize.File) { f.DeleteSheet(SheetData) }, fatal: "hidden plan sheet is missing"},
		{name: "date cell", mutate: func(f *excelize.File) {
			st, _ := f.NewStyle(&excelize.Style{NumFmt: 14})
			f.SetCellFloat(SheetEntry, "E5", 45000, -1, 64)
			f.SetCellStyle(SheetEntry, "E5", "E5", st)
		}, sev: Error, cell: "E5", msg: "formatted as a date"},
		{name: "custom date format", mutate: func(f *excelize.File) {
			code := `dd"."mm"."yyyy`
			st, _ := f.NewStyle(&excelize.Style{CustomNumFmt: &code})
			f.SetCellStyle(SheetEntry, "E5", "E5", st)
		}, sev: Error, cell: "E5", msg: "formatted as a date"},
		{name: "formula without a saved result", mutate: func(f *excelize.File) {
			f.SetCellValue(SheetEntry, "E5", nil)
			f.SetCellFormula(SheetEntry, "E5", "E4*2")
		}, sev: Error, cell: "E5", msg: "formula =E4*2 without a saved result"},
		{name: "TRUE/FALSE cell", mutate: func(f *excelize.File) { f.SetCellBool(SheetEntry, "E5", true) }, sev: Error, cell: "E5", msg: "TRUE/FALSE cell"},
		{name: "NaN text", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "NaN") }, sev: Error, cell: "E5", msg: "is NaN"},
		{name: "Inf text", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "-Inf") }, sev: Error, cell: "E5", msg: "is an infinity"},
		{name: "hex text", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "E5", "0x10") }, sev: Error, cell: "E5", msg: "hexadecimal"},
		{name: "range given on check", opt: ReadOptions{Ranges: map[string]Range{"height_cm": {Min: f64(0), Max: f64(1000)}}}, mutate: func(f *excelize.File) { f.SetCellFloat(SheetEntry, "E5", 999, -1, 64) }, sev: Warning, msg: "checked against the range 0..1000 given with --range, not the plan's 0..200"},
		{name: "status lost with a reason", mutate: func(f *excelize.File) {
			f.SetCellValue(SheetEntry, "E5", nil)
			f.SetCellValue(SheetEntry, "F5", nil)
			f.SetCellStr(SheetEntry, "G5", "lost")
			f.SetCellStr(SheetEntry, "H5", "pot knocked over")
		}, sev: Warning, msg: "Status: 1 unit lost and 0 units excluded"},
		{name: "status lost without a reason", mutate: func(f *excelize.File) {
			f.SetCellValue(SheetEntry, "E5", nil)
			f.SetCellValue(SheetEntry, "F5", nil)
			f.SetCellStr(SheetEntry, "G5", "Lost")
		}, sev: Error, cell: "H5", msg: "is lost but the Reason is empty"},
		{name: "status lost with a value", mutate: func(f *excelize.File) {
			f.SetCellStr(SheetEntry, "G5", "lost")
			f.SetCellStr(SheetEntry, "H5", "died")
		}, sev: Error, cell: "E5", msg: "is lost but has the value"},
		{name: "status unknown word", mutate: func(f *excelize.File) { f.SetCellStr(SheetEntry, "G5", "dead") }, sev: Error, cell: "G5", msg: `Status "dead": must be empty, measured, lost or excluded`},
		{name: "chunk count huge", mutate: func(f *excelize.File) { f.SetCellStr(SheetData, "B3", "1000000000000") }, fatal: "is not a whole number from 1 to"},
		{name: "plan JSON edited", mutate: func(f *excelize.File) {
			v, _ := f.GetCellValue(SheetData, "A4")
			f.SetCellStr(SheetData, "A4", strings.Replace(v, `"seed":17`, `"seed":18`, 1))
		}, fatal: "does not match its checksum"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			path, f := filled(t, l)
			tt.mutate(f)
			save(t, f, path)
			before, _ := os.ReadFile(path)
			fl, err := Read(path, tt.opt)
			after, _ := os.ReadFile(path)
			if string(before) != string(after) {
				t.Error("Read modified the file")
			}
			if tt.fatal != "" {
				var fe *FileError
				if !errors.As(err, &fe) || !strings.Contains(err.Error(), tt.fatal) {
					t.Fatalf("got %v, want a FileError with %q", err, tt.fatal)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if tt.clean {
				if len(fl.Problems) != 0 {
					t.Errorf("problems: %v", fl.Problems)
				}
				return
			}
			for _, p := range fl.Problems {
				if p.Severity == tt.sev && p.Cell == tt.cell && strings.Contains(p.Msg, tt.msg) {
					return
				}
			}
			t.Errorf("no %s at %q with %q; got %v", tt.sev, tt.cell, tt.msg, fl.Problems)
		})
	}
}

func TestBlind(t *testing.T) {
	l := testLayout(t, true)
	path, f := filled(t, l)
	save(t, f, path)
	// Nothing in the workbook names a treatment or the seed.
	g, _ := excelize.OpenFile(path)
	for _, sheet := range g.GetSheetList() {
		rows, _ := g.GetRows(sheet)
		for _, r := range rows {
			for _, v := range r {
				if strings.Contains(v, `"seed":17`) || v == "F1" || strings.Contains(v, "\nF1") {
					t.Errorf("sheet %s reveals the blind: %q", sheet, v)
				}
			}
		}
	}
	fl, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !fl.Sealed || fl.Errors() != 0 {
		t.Errorf("sealed %v, problems %v", fl.Sealed, fl.Problems)
	}
	key := design.KeyOf(l)
	fl, err = Read(path, ReadOptions{Key: &key})
	if err != nil || fl.Sealed || fl.Layout.Units[0].Treatment != l.Units[0].Treatment {
		t.Fatalf("with key: %v", err)
	}
	other := testLayout(t, true)
	other.Plan.Seed = 18
	other, _ = randomize.Assign(other.Plan)
	wrong := design.KeyOf(other)
	if _, err := Read(path, ReadOptions{Key: &wrong}); err == nil || !strings.Contains(err.Error(), "the key belongs to another plan") {
		t.Errorf("wrong key: %v", err)
	}
}

func TestRefusesOverwrite(t *testing.T) {
	l := testLayout(t, false)
	path := filepath.Join(t.TempDir(), "x.xlsx")
	os.WriteFile(path, []byte("user data"), 0o644)
	if err := Write(path, l, meta, false); err == nil || !strings.Contains(err.Error(), "--force") {
		t.Fatalf("got %v", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "user data" {
		t.Error("file replaced")
	}
	if err := Write(path, l, meta, true); err != nil {
		t.Fatal(err)
	}
}

func TestNotAWorkbook(t *testing.T) {
	path := filepath.Join(t.TempDir(), "x.xlsx")
	os.WriteFile(path, []byte("this is not a zip"), 0o644)
	_, err := Read(path, ReadOptions{})
	var fe *FileError
	if !errors.As(err, &fe) || !strings.Contains(err.Error(), "cannot be read as an .xlsx workbook") {
		t.Errorf("got %v", err)
	}
}

// TestLibreOfficeRoundTrip re-saves a filled workbook in another
// spreadsheet program and reads it back: the data must be identical.
func TestLibreOfficeRoundTrip(t *testing.T) {
	lo := needLibreOffice(t)
	l := testLayout(t, false)
	path, f := filled(t, l)
	save(t, f, path)
	out := filepath.Join(t.TempDir(), "resaved")
	home := t.TempDir() // a fresh profile, so parallel runs do not collide
	cmd := exec.Command(lo, "--headless", "--norestore", "-env:UserInstallation=file://"+home, "--convert-to", "xlsx", "--outdir", out, path)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("libreoffice: %v\n%s", err, b)
	}
	want, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	got, err := Read(filepath.Join(out, "trial.xlsx"), ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(got.Problems) != 0 {
		t.Errorf("problems after re-save: %v", got.Problems)
	}
	for k := range want.Values {
		for i := range want.Values[k] {
			if got.Values[k][i].Text != want.Values[k][i].Text {
				t.Errorf("response %d unit %d: %q after re-save, %q before", k, i, got.Values[k][i].Text, want.Values[k][i].Text)
			}
		}
	}
}

// FuzzReadWorkbook feeds mutated workbooks and random bytes to the reader:
// it must never panic, and must return either a result or an error. Run it
// with -fuzzminimizetime=0: minimising an 8 kB workbook input byte by byte
// takes minutes and looks like a stall.
func FuzzReadWorkbook(f *testing.F) {
	l := testLayout(f, false)
	dir := f.TempDir()
	path := filepath.Join(dir, "seed.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		f.Fatal(err)
	}
	valid, _ := os.ReadFile(path)
	f.Add(valid)
	// A non-ASCII plan, so that mutations reach multi-byte text.
	upath := filepath.Join(dir, "unicode.xlsx")
	if err := Write(upath, unicodeLayout(f, 2), meta, false); err != nil {
		f.Fatal(err)
	}
	uvalid, _ := os.ReadFile(upath)
	f.Add(uvalid)
	f.Add([]byte("PK\x03\x04 not really a zip"))
	f.Add([]byte{})
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(t.TempDir(), "f.xlsx")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		fl, err := Read(p, ReadOptions{})
		if err == nil && fl == nil {
			t.Fatal("nil result without error")
		}
	})
}

func BenchmarkWorkbook(b *testing.B) {
	for _, blocks := range []int{100, 1000} {
		p := design.Plan{Title: "bench", Design: design.RCBD,
			Factors: []design.Factor{{Name: "t", Levels: []string{"a", "b", "c", "d", "e", "f", "g", "h", "i", "j"}}},
			Reps:    []int{1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, Blocks: blocks, BlockName: "bench",
			Responses: []design.Response{{Name: "y", Min: f64(0), Max: f64(100)}}, Seed: 1}
		l, err := randomize.Assign(p)
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("units=%d/write+read", blocks*10), func(b *testing.B) {
			b.ReportAllocs()
			dir := b.TempDir()
			for i := 0; i < b.N; i++ {
				path := filepath.Join(dir, fmt.Sprintf("w%d.xlsx", i))
				if err := Write(path, l, meta, false); err != nil {
					b.Fatal(err)
				}
				fl, err := Read(path, ReadOptions{})
				if err != nil || fl.Errors() != 0 {
					b.Fatal(err)
				}
			}
		})
	}
}

func TestSubsamples(t *testing.T) {
	l := testLayout(t, false)
	l.Plan.Subsamples = 3
	l, err := randomize.Assign(l.Plan)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "sub.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	f, _ := excelize.OpenFile(path)
	rows, _ := f.GetRows(SheetEntry)
	if len(rows) != 1+3*len(l.Units) || rows[0][4] != "Subsample" {
		t.Fatalf("%d rows, header %v", len(rows), rows[0])
	}
	// Fill heights; leave unit 1's third subsample empty, delete one row.
	for r := 2; r <= len(rows); r++ {
		if r != 4 {
			f.SetCellFloat(SheetEntry, cell(6, r), float64(r)+0.1, -1, 64)
		}
	}
	f.RemoveRow(SheetEntry, 10)
	f.SaveAs(path)
	fl, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	obs := fl.Observations(0)
	if len(obs.Subsamples[0]) != 2 || obs.Subsamples[0][0] != "2.1" {
		t.Errorf("first unit's subsamples %v", obs.Subsamples[0])
	}
	found := false
	for _, p := range fl.Problems {
		found = found || p.Severity == Error && strings.Contains(p.Msg, "subsample 3 has no row")
	}
	if !found {
		t.Errorf("deleted subsample row not reported: %v", fl.Problems)
	}
}

func TestOversizedWorkbookRefused(t *testing.T) {
	// A zip whose one sheet unpacks to 8 MiB of spaces, read with a 2 MiB
	// limit: refused with a clear error, not read into memory.
	path := filepath.Join(t.TempDir(), "bomb.xlsx")
	out, _ := os.Create(path)
	zw := zip.NewWriter(out)
	for _, name := range []string{"[Content_Types].xml", "xl/workbook.xml", "xl/worksheets/sheet1.xml"} {
		w, _ := zw.Create(name)
		w.Write([]byte("<?xml version=\"1.0\"?>"))
		if name == "xl/worksheets/sheet1.xml" {
			chunk := bytes.Repeat([]byte(" "), 1<<20)
			for i := 0; i < 8; i++ {
				w.Write(chunk)
			}
		}
	}
	zw.Close()
	out.Close()
	_, err := Read(path, ReadOptions{UnzipLimit: 2 << 20})
	if err == nil || !strings.Contains(err.Error(), "unpacks to more than 2 MiB") {
		t.Errorf("got %v", err)
	}
}

func TestEntryHygiene(t *testing.T) {
	l := testLayout(t, false)
	path := filepath.Join(t.TempDir(), "h.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	dvs, err := f.GetDataValidations(SheetEntry)
	if err != nil || len(dvs) != 3 || dvs[0].Sqref != "E2:E10" || dvs[0].Type != "decimal" || dvs[2].Type != "list" || dvs[2].Sqref != "G2:G10" {
		t.Errorf("validations %+v %v", dvs, err)
	}
	panes, err := f.GetPanes(SheetEntry)
	if err != nil || !panes.Freeze || panes.YSplit != 1 {
		t.Errorf("panes %+v %v", panes, err)
	}
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	var sheets string
	for _, zf := range zr.File {
		if strings.HasPrefix(zf.Name, "xl/worksheets/") {
			rc, _ := zf.Open()
			b := new(bytes.Buffer)
			b.ReadFrom(rc)
			rc.Close()
			sheets += b.String()
		}
	}
	// Printing: one page wide, A4, header and footer; a filter on the
	// header row and no protection (a protected sheet cannot be sorted).
	for _, want := range []string{`<autoFilter ref="$A$1:$I$10"`, `fitToPage="true"`, `paperSize="9"`, `fitToWidth="1"`, `fitToHeight="0"`, "&amp;P of &amp;N", "Plan " + l.Plan.Fingerprint()[:12], `customHeight="1"`} {
		if !strings.Contains(sheets, want) {
			t.Errorf("worksheets lack %s", want)
		}
	}
	if strings.Contains(sheets, "<sheetProtection") {
		t.Error("a sheet is protected: sorting would fail")
	}
	vis, _ := f.GetSheetVisible(SheetData)
	if vis {
		t.Error("the plan sheet is visible")
	}
}

// TestBlindModesAndSpares: a blind workbook (one code per treatment or per
// unit) written from the sealed layout names no treatment on any sheet but
// the plan's description, reads back with its key, and lists its spares;
// a grid plan has Row and Column columns.
func TestBlindModesAndSpares(t *testing.T) {
	for _, mode := range []string{design.BlindTreatment, design.BlindUnit} {
		t.Run(mode, func(t *testing.T) {
			p := design.Plan{
				Title: "spares", Design: design.RCBD, Factors: []design.Factor{{Name: "dose", Levels: []string{"qlow", "qmid", "qhigh"}}},
				Reps: []int{1, 1, 1}, BlockName: "litter", Responses: []design.Response{{Name: "score"}},
				Seed: 5, Blind: true, BlindMode: mode, PerBlock: 3, Grid: &design.Grid{Rows: 2, Cols: 2, Numbering: design.RowWise, Placement: design.RandomPlaces},
			}
			rows := []design.UnitRow{{ID: "a", Block: "L1"}, {ID: "b", Block: "L1"}, {ID: "c", Block: "L1"}, {ID: "d", Block: "L1"},
				{ID: "e", Block: "L2"}, {ID: "f", Block: "L2"}, {ID: "g", Block: "L2"}}
			p.Units, p.Blocks = design.BlocksFromColumn(rows)
			l, err := randomize.Assign(p)
			if err != nil {
				t.Fatal(err)
			}
			path := filepath.Join(t.TempDir(), "blind.xlsx")
			if err := Write(path, l.Sealed(), meta, false); err != nil {
				t.Fatal(err)
			}
			g, _ := excelize.OpenFile(path)
			for _, sheet := range []string{SheetEntry, SheetMap, SheetStudy} {
				cells, _ := g.GetRows(sheet)
				for _, r := range cells {
					for _, v := range r {
						if strings.HasPrefix(v, "dose: ") {
							continue // the Study sheet's list of levels
						}
						for _, name := range []string{"qlow", "qmid", "qhigh"} {
							if strings.Contains(v, name) {
								t.Errorf("sheet %s names %q: %q", sheet, name, v)
							}
						}
					}
				}
			}
			head, _ := g.GetRows(SheetEntry)
			if got := strings.Join(head[0], ","); got != "Unit,Litter,Position,Row,Column,Code,score,Status,Reason,Notes" {
				t.Errorf("Entry header %s", got)
			}
			study, _ := g.GetRows(SheetStudy)
			spares := ""
			for _, r := range study {
				if len(r) > 1 && r[0] == "Spare units" {
					spares = r[1]
				}
			}
			if !strings.Contains(spares, "litter L1: ") || len(l.Spares) != 1 {
				t.Errorf("spares %v, Study row %q", l.Spares, spares)
			}
			fl, err := Read(path, ReadOptions{})
			if err != nil || !fl.Sealed || fl.Errors() != 0 {
				t.Fatalf("sealed read: %v %v", err, fl.Problems)
			}
			key := design.KeyOf(l)
			fl, err = Read(path, ReadOptions{Key: &key})
			if err != nil {
				t.Fatal(err)
			}
			for i, u := range fl.Layout.Units {
				if u.Treatment != l.Units[i].Treatment || u.Row != l.Units[i].Row {
					t.Fatalf("unit %s unblinded as %d, laid out as %d", u.ID, u.Treatment, l.Units[i].Treatment)
				}
			}
			if len(fl.Layout.Spares) != 1 || fl.Layout.Spares[0] != l.Spares[0] {
				t.Errorf("spares read back %v", fl.Layout.Spares)
			}
		})
	}
}

// TestMapAndStudySheets: the Map sheet shows each place's unit ID and
// treatment in rows tall enough for both lines, with a legend; the Study
// sheet wraps its long lines.
func TestMapAndStudySheets(t *testing.T) {
	l := testLayout(t, false)
	path := filepath.Join(t.TempDir(), "m.xlsx")
	if err := Write(path, l, Meta{Version: "test", Paper: PaperLetter}, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	rows, _ := f.GetRows(SheetMap)
	var legend []string
	for r, row := range rows {
		if len(row) > 1 && row[0] == "Legend" {
			for k := r; k < len(rows) && len(rows[k]) > 1 && rows[k][1] != ""; k++ {
				legend = append(legend, rows[k][1])
			}
		}
	}
	places := 0
	for r, row := range rows {
		for _, v := range row {
			if strings.Contains(v, "\n") {
				places++
				h, _ := f.GetRowHeight(SheetMap, r+1)
				if h < 30 {
					t.Errorf("Map row %d is %v pt high: the treatment under the ID is hidden", r+1, h)
				}
			}
		}
	}
	if places != len(l.Units) {
		t.Errorf("%d places on the Map sheet for %d units", places, len(l.Units))
	}
	if strings.Join(legend, " ") != "F0 F1 F2" {
		t.Errorf("legend %q", legend)
	}
	ps, _ := f.GetPageLayout(SheetMap)
	if ps.Size == nil || *ps.Size != 1 || ps.FitToWidth == nil || *ps.FitToWidth != 1 {
		t.Errorf("Map page setup %+v: want letter (1), one page wide", ps)
	}
	st, _ := f.GetCellStyle(SheetStudy, "B4")
	if s, _ := f.GetStyle(st); s == nil || s.Alignment == nil || !s.Alignment.WrapText {
		t.Error("Study text does not wrap")
	}
	head, _ := f.GetCellValue(SheetStudy, "B4")
	if head != "randomised complete block design, 3 benches" {
		t.Errorf("Study design line %q", head)
	}
}
