package workbook

import (
	"bytes"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

// unicodeLayout is a plan of 4 × 160 = 640 units whose block labels, level
// names and unit IDs use accents, CJK and emoji (an invented scenario).
func unicodeLayout(t testing.TB, blocks int) design.Layout {
	t.Helper()
	p := design.Plan{
		Title: "Essai d'engrais — 肥料試験 🌱", Design: design.RCBD,
		Factors:   []design.Factor{{Name: "engrais", Levels: []string{"Témoin", "氮肥", "Phosphore-é", "🌿 bio"}}},
		Reps:      []int{1, 1, 1, 1},
		Blocks:    blocks,
		BlockName: "école",
		Responses: []design.Response{{Name: "hauteur_cm", Min: f64(0), Max: f64(1e7)}, {Name: "質量_g"}},
		Seed:      2026,
	}
	for b := 1; b <= blocks; b++ {
		for k := 1; k <= 4; k++ {
			p.Units = append(p.Units, design.UnitSpec{ID: fmt.Sprintf("plante-é%03d-%d-植🌱", b, k), Block: b, BlockLabel: fmt.Sprintf("Bâtiment-%d-東", b)})
		}
	}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

func TestUnicodeRoundTrip(t *testing.T) {
	l := unicodeLayout(t, 160)
	if len(l.Units) < 600 {
		t.Fatalf("%d units", len(l.Units))
	}
	path, f := filled(t, l)
	save(t, f, path)
	fl, err := Read(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(fl.Problems) != 0 {
		t.Fatalf("problems: %v", fl.Problems[:min(5, len(fl.Problems))])
	}
	for i, u := range l.Units {
		if fl.Layout.Units[i].ID != u.ID {
			t.Fatalf("unit %d ID %q, want %q", i, fl.Layout.Units[i].ID, u.ID)
		}
	}
	// Every cell of every sheet is valid UTF-8, and the plan's chunks are
	// cut between characters.
	g, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	for _, sheet := range g.GetSheetList() {
		rows, _ := g.GetRows(sheet)
		for r, row := range rows {
			for c, v := range row {
				if !utf8.ValidString(v) {
					t.Errorf("sheet %s cell %s is not valid UTF-8", sheet, cell(c+1, r+1))
				}
			}
		}
	}
	n, _ := g.GetCellValue(SheetData, "B3")
	if n == "1" {
		t.Error("the stored plan fits one chunk: the test does not exercise chunking")
	}
	head, _ := g.GetCellValue(SheetEntry, "B1")
	if head != "École" {
		t.Errorf("block header %q", head)
	}
}

func TestChunksCutBetweenCharacters(t *testing.T) {
	doc := strings.Repeat("aé植🌱", 5000)
	for _, limit := range []int{1, 2, 3, 7, 30000} {
		cs := chunks(doc, limit)
		if strings.Join(cs, "") != doc {
			t.Fatalf("limit %d: chunks do not rejoin", limit)
		}
		for _, c := range cs {
			units := 0
			for _, r := range c {
				units++
				if r >= 0x10000 {
					units++
				}
			}
			if !utf8.ValidString(c) || units > max(limit, 2) {
				t.Fatalf("limit %d: chunk of %d UTF-16 units, valid %v", limit, units, utf8.ValidString(c))
			}
		}
	}
}

// TestCSVGolden fixes the CSV export of a small non-ASCII plan, and reads
// it back in every dialect a spreadsheet program writes.
func TestCSVGolden(t *testing.T) {
	l := unicodeLayout(t, 2)
	var b bytes.Buffer
	if err := WriteCSV(&b, l); err != nil {
		t.Fatal(err)
	}
	golden := filepath.Join("testdata", "unicode_csv.golden")
	if *update {
		os.WriteFile(golden, b.Bytes(), 0o644)
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if b.String() != string(want) {
		t.Errorf("CSV differs from %s:\n%s", golden, b.String())
	}
	// Fill in values (the third response-less row stays empty).
	lines := strings.Split(strings.TrimRight(b.String(), "\n"), "\n")
	for i := 1; i < len(lines); i++ {
		lines[i] = strings.Replace(lines[i], ",,", fmt.Sprintf(",%d.5,7,", i), 1)
		lines[i] = strings.TrimSuffix(lines[i], ",") // keep the field count
	}
	comma := strings.Join(lines, "\n") + "\n"
	semi := strings.ReplaceAll(strings.ReplaceAll(comma, ".5", "|5"), ",", ";")
	semi = strings.ReplaceAll(semi, "|", ",")
	tests := []struct {
		name string
		text string
		opt  ReadOptions
	}{
		{"comma LF", comma, ReadOptions{}},
		{"comma CRLF with BOM", "\xEF\xBB\xBF" + strings.ReplaceAll(comma, "\n", "\r\n"), ReadOptions{}},
		{"semicolon, decimal comma", semi, ReadOptions{DecimalComma: true}},
		{"tab", strings.ReplaceAll(comma, ",", "\t"), ReadOptions{}},
		{"CR only", strings.ReplaceAll(comma, "\n", "\r"), ReadOptions{}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			fl, err := ReadCSV(strings.NewReader(tt.text), "u.csv", l, tt.opt)
			if err != nil {
				t.Fatal(err)
			}
			if fl.Errors() != 0 {
				t.Fatalf("problems: %v", fl.Problems)
			}
			if got := fl.Values[0][0].Text; got != "1.5" {
				t.Errorf("first value %q", got)
			}
		})
	}
}

func TestCSVProblems(t *testing.T) {
	l := testLayout(t, false)
	var b bytes.Buffer
	WriteCSV(&b, l)
	base := b.String()
	tests := []struct {
		name, text string
		fatal      string // a FileError containing this
		cell, msg  string // else an error problem
	}{
		{name: "ragged row", text: strings.Replace(base, "\n102,", "\n102,x,", 1), cell: "A3", msg: "line 3 has 10 fields where the header has 9"},
		{name: "quoted newline in Notes", text: strings.Replace(base, ",,,,\n", ",,,,\"two\nlines\"\n", 1)},
		{name: "bare quote", text: strings.Replace(base, "\n102,", "\n10\"2,", 1), fatal: "line 3, column 3"},
		{name: "one field per line", text: strings.ReplaceAll(base, ",", "|"), fatal: "the header line has a single field"},
		{name: "UTF-16", text: "\xFF\xFEU\x00", fatal: "UTF-16"},
		{name: "NaN", text: strings.Replace(base, ",,,,\n", ",NaN,,,\n", 1), cell: "F2", msg: "is NaN"},
		{name: "hex float", text: strings.Replace(base, ",,,,\n", ",0x1p3,,,\n", 1), cell: "F2", msg: "hexadecimal"},
		{name: "TRUE", text: strings.Replace(base, ",,,,\n", ",TRUE,,,\n", 1), cell: "F2", msg: "TRUE or FALSE"},
		{name: "underscore", text: strings.Replace(base, ",,,,\n", ",1_0,,,\n", 1), cell: "F2", msg: "underscore"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			fl, err := ReadCSV(strings.NewReader(tt.text), "p.csv", l, ReadOptions{})
			if tt.fatal != "" {
				if err == nil || !strings.Contains(err.Error(), tt.fatal) {
					t.Fatalf("got %v, want %q", err, tt.fatal)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if tt.msg == "" {
				if fl.Errors() != 0 {
					t.Errorf("problems %v", fl.Problems)
				}
				return
			}
			for _, p := range fl.Problems {
				if p.Severity == Error && p.Cell == tt.cell && strings.Contains(p.Msg, tt.msg) {
					return
				}
			}
			t.Errorf("no error at %s with %q: %v", tt.cell, tt.msg, fl.Problems)
		})
	}
}

func TestEscapeCell(t *testing.T) {
	for in, want := range map[string]string{
		"=1+1": "'=1+1", "@SUM(A1)": "'@SUM(A1)", "\tx": "'\tx", "-1": "-1", "+2": "+2", "-2.5e3": "-2.5e3",
		"+A1": "'+A1", "-x": "'-x", "007": "007", "plain": "plain", "": "",
	} {
		if got := EscapeCell(in); got != want {
			t.Errorf("EscapeCell(%q) = %q, want %q", in, got, want)
		}
		if got := UnescapeCell(EscapeCell(in)); got != in {
			t.Errorf("round trip of %q gives %q", in, got)
		}
	}
}

// FuzzReadCSV: the CSV reader never panics; a result without an error is
// a full Filled value.
func FuzzReadCSV(f *testing.F) {
	l := unicodeLayout(f, 2)
	var b bytes.Buffer
	WriteCSV(&b, l)
	f.Add(b.String())
	f.Add("\xEF\xBB\xBF" + strings.ReplaceAll(b.String(), ",", ";"))
	f.Add("Unit\r\r\"a\nb\",\"")
	f.Fuzz(func(t *testing.T, s string) {
		fl, err := ReadCSV(strings.NewReader(s), "f.csv", l, ReadOptions{DecimalComma: true})
		if err == nil && (fl == nil || len(fl.Values) != len(l.Plan.Responses)) {
			t.Fatal("result without values and without error")
		}
	})
}

func TestInvalidTextRefused(t *testing.T) {
	for _, id := range []string{"a\xffb", "bell\x07"} {
		l := testLayout(t, false)
		l.Units[0].ID = id
		err := Write(filepath.Join(t.TempDir(), "x.xlsx"), l, meta, false)
		if err == nil || !strings.Contains(err.Error(), "unit ID") {
			t.Errorf("%q: got %v", id, err)
		}
	}
}
