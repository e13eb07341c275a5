package workbook

import (
	"archive/zip"
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

// contentLayouts are small plans that between them reach every branch of
// the writer: blocks as rows of positions and as grids (row-wise and
// serpentine, some places empty), several printed pages, measurement
// order, factorial legends, more treatments than tints, blind codes per
// treatment and per unit with spares, a split plot's outlines, subsamples,
// numeric and text unit IDs, letter paper and non-ASCII text.
func contentLayouts(t *testing.T) map[string]design.Layout {
	t.Helper()
	assign := func(p design.Plan) design.Layout {
		t.Helper()
		l, err := randomize.Assign(p)
		if err != nil {
			t.Fatal(err)
		}
		return l
	}
	out := map[string]design.Layout{
		"rcbd":    testLayout(t, false),
		"blind":   testLayout(t, true).Sealed(),
		"split":   splitLayout(t),
		"unicode": unicodeLayout(t, 24),
	}
	sub := testLayout(t, false).Plan
	sub.Subsamples = 3
	out["subsamples"] = assign(sub)
	// Ten treatments (more than the tints) in 24 blocks of numeric IDs:
	// the Map sheet runs to several pages.
	ten := design.Plan{Title: "ten & more", Design: design.RCBD,
		Factors: []design.Factor{{Name: "t", Levels: []string{"a", "b", "c", "d", "e", "f", "g", "h", "i", "j"}}},
		Reps:    []int{1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, Blocks: 24, BlockName: "bench",
		Responses: []design.Response{{Name: "y", Min: f64(0), Max: f64(1000)}}, Seed: 1}
	out["ten"] = assign(ten)
	// A 2 × 3 factorial on 3 × 3 grids (serpentine, random places) with a
	// measurement order, in 12 blocks: grid blocks over several pages.
	grid := design.Plan{Title: "grid", Design: design.RCBD,
		Factors: []design.Factor{{Name: "N", Levels: []string{"lo", "hi"}}, {Name: "P", Levels: []string{"p0", "p1", "p2"}}},
		Reps:    []int{1, 1, 1, 1, 1, 1}, Blocks: 12, BlockName: "tray", Order: true,
		Grid:      &design.Grid{Rows: 3, Cols: 3, Numbering: design.Serpentine, Placement: design.RandomPlaces},
		Responses: []design.Response{{Name: "count", Kind: "count"}, {Name: "w", Min: f64(-1)}}, Seed: 3}
	out["grid"] = assign(grid)
	crd := design.Plan{Title: "crd", Design: design.CRD,
		Factors: []design.Factor{{Name: "diet", Levels: []string{"A", "B"}}},
		Reps:    []int{5, 5}, Blocks: 1, BlockName: "room",
		Grid:      &design.Grid{Rows: 2, Cols: 5, Numbering: design.RowWise},
		Responses: []design.Response{{Name: "gain"}}, Seed: 9}
	out["crd"] = assign(crd)
	for _, mode := range []string{design.BlindTreatment, design.BlindUnit} {
		p := design.Plan{
			Title: "spares", Design: design.RCBD, Factors: []design.Factor{{Name: "dose", Levels: []string{"qlow", "qmid", "qhigh"}}},
			Reps: []int{1, 1, 1}, BlockName: "litter", Responses: []design.Response{{Name: "score"}},
			Seed: 5, Blind: true, BlindMode: mode, PerBlock: 3, Grid: &design.Grid{Rows: 2, Cols: 2, Numbering: design.RowWise, Placement: design.RandomPlaces},
		}
		rows := []design.UnitRow{{ID: "a", Block: "L1"}, {ID: "b", Block: "L1"}, {ID: "c", Block: "L1"}, {ID: "d", Block: "L1"},
			{ID: "e", Block: "L2"}, {ID: "f", Block: "L2"}, {ID: "g", Block: "L2"}}
		p.Units, p.Blocks = design.BlocksFromColumn(rows)
		// A fixed secret: the same codes on every run.
		l, err := randomize.AssignSecret(p, []byte("content test secret, 32 bytes.."))
		if err != nil {
			t.Fatal(err)
		}
		out["spares-"+mode] = l.Sealed()
	}
	return out
}

// TestWorkbookContent writes each of contentLayouts and compares what
// excelize reads back from every sheet (each cell's value, type and style,
// row heights, column widths, merges, validations, panes, print setup and
// page breaks) with testdata/content.golden. The golden file was made by
// the writer that set every Map cell one at a time and let excelize
// marshal the sheet, so it holds the streamed writer to the same content.
func TestWorkbookContent(t *testing.T) {
	layouts := contentLayouts(t)
	names := make([]string, 0, len(layouts))
	for n := range layouts {
		names = append(names, n)
	}
	sort.Strings(names)
	var b bytes.Buffer
	for _, n := range names {
		m := meta
		if n == "crd" {
			m.Paper = PaperLetter
		}
		path := filepath.Join(t.TempDir(), n+".xlsx")
		if err := Write(path, layouts[n], m, false); err != nil {
			t.Fatal(err)
		}
		fmt.Fprintf(&b, "=== %s\n", n)
		dumpWorkbook(t, &b, path)
	}
	golden := filepath.Join("testdata", "content.golden")
	if *update {
		if err := os.WriteFile(golden, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if got := b.String(); got != string(want) {
		gl, wl := strings.Split(got, "\n"), strings.Split(string(want), "\n")
		for i := 0; i < max(len(gl), len(wl)); i++ {
			g, w := "", ""
			if i < len(gl) {
				g = gl[i]
			}
			if i < len(wl) {
				w = wl[i]
			}
			if g != w {
				t.Fatalf("workbook content differs from %s at line %d:\ngot  %s\nwant %s", golden, i+1, g, w)
			}
		}
	}
}

// dumpWorkbook writes what excelize reads back from the workbook at path,
// sheet by sheet. Styles are numbered in order of first use, so that the
// dump compares what a cell looks like, not the style table's order.
func dumpWorkbook(t *testing.T, w io.Writer, path string) {
	t.Helper()
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	js := func(v any) string {
		b, err := json.Marshal(v)
		if err != nil {
			t.Fatal(err)
		}
		return string(b)
	}
	styles := map[string]int{}
	styleOf := func(id int) string {
		s, err := f.GetStyle(id)
		if err != nil {
			t.Fatal(err)
		}
		k := js(s)
		n, ok := styles[k]
		if !ok {
			n = len(styles) + 1
			styles[k] = n
			fmt.Fprintf(w, "style %d %s\n", n, k)
		}
		return fmt.Sprint(n)
	}
	fmt.Fprintf(w, "sheets %q active %d\n", f.GetSheetList(), f.GetActiveSheetIndex())
	fmt.Fprintf(w, "names %s\n", js(f.GetDefinedName()))
	breaks, order := pageBreaks(t, path)
	for i, sheet := range f.GetSheetList() {
		vis, _ := f.GetSheetVisible(sheet)
		fmt.Fprintf(w, "--- sheet %s visible %v\n", sheet, vis)
		for _, get := range []func() (any, error){
			func() (any, error) { return f.GetSheetProps(sheet) },
			func() (any, error) { return f.GetPageLayout(sheet) },
			func() (any, error) { return f.GetPageMargins(sheet) },
			func() (any, error) { return f.GetHeaderFooter(sheet) },
			func() (any, error) { return f.GetPanes(sheet) },
			func() (any, error) { return f.GetSheetView(sheet, 0) },
			func() (any, error) { return f.GetMergeCells(sheet) },
			func() (any, error) { return f.GetDataValidations(sheet) },
			func() (any, error) { return f.GetSheetProtection(sheet) },
		} {
			v, err := get()
			if err != nil {
				t.Fatal(err)
			}
			fmt.Fprintln(w, js(v))
		}
		part := fmt.Sprintf("xl/worksheets/sheet%d.xml", i+1)
		fmt.Fprintf(w, "breaks %s\n", breaks[part])
		fmt.Fprintf(w, "column order %s\n", order[part])
		rows, err := f.GetRows(sheet, excelize.Options{RawCellValue: true})
		if err != nil {
			t.Fatal(err)
		}
		cols := 0
		for _, r := range rows {
			cols = max(cols, len(r))
		}
		cols += 2
		for c := 1; c <= cols; c++ {
			cw, err := f.GetColWidth(sheet, colName(c))
			if err != nil {
				t.Fatal(err)
			}
			fmt.Fprintf(w, "col %s width %v\n", colName(c), cw)
		}
		for r := 1; r <= len(rows)+2; r++ {
			h, err := f.GetRowHeight(sheet, r)
			if err != nil {
				t.Fatal(err)
			}
			fmt.Fprintf(w, "row %d height %v\n", r, h)
			for c := 1; c <= cols; c++ {
				ref := cell(c, r)
				v, err := f.GetCellValue(sheet, ref, excelize.Options{RawCellValue: true})
				if err != nil {
					t.Fatal(err)
				}
				id, err := f.GetCellStyle(sheet, ref)
				if err != nil {
					t.Fatal(err)
				}
				if v == "" && id == 0 {
					continue
				}
				typ, err := f.GetCellType(sheet, ref)
				if err != nil {
					t.Fatal(err)
				}
				fmt.Fprintf(w, "%s %s %q style %s\n", ref, typeName(typ, v), v, styleOf(id))
			}
		}
	}
}

// typeName is a cell's stored type: a number, text (shared or inline, the
// same to every reader) or empty.
func typeName(t excelize.CellType, v string) string {
	switch t {
	case excelize.CellTypeSharedString, excelize.CellTypeInlineString:
		return "text"
	case excelize.CellTypeNumber:
		return "number"
	case excelize.CellTypeUnset:
		if v == "" {
			return "empty"
		}
		return "number"
	}
	return fmt.Sprintf("type%d", t)
}

// pageBreaks returns each worksheet's row and column breaks as written,
// and the order of its column descriptions (a range as its columns).
func pageBreaks(t *testing.T, path string) (breaks, order map[string]string) {
	t.Helper()
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer zr.Close()
	re := regexp.MustCompile(`<(rowBreaks|colBreaks)[ >].*?</(rowBreaks|colBreaks)>|<(rowBreaks|colBreaks)[^>]*/>`)
	col := regexp.MustCompile(`<col [^>]*>`)
	num := func(s, attr string) int {
		m := regexp.MustCompile(` ` + attr + `="(\d+)"`).FindStringSubmatch(s)
		if m == nil {
			t.Fatalf("%s without %s", s, attr)
		}
		n, _ := strconv.Atoi(m[1])
		return n
	}
	breaks, order = map[string]string{}, map[string]string{}
	for _, zf := range zr.File {
		if !strings.HasPrefix(zf.Name, "xl/worksheets/") {
			continue
		}
		rc, err := zf.Open()
		if err != nil {
			t.Fatal(err)
		}
		b, err := io.ReadAll(rc)
		rc.Close()
		if err != nil {
			t.Fatal(err)
		}
		breaks[zf.Name] = strings.Join(re.FindAllString(string(b), -1), "")
		var cols []string
		for _, c := range col.FindAllString(string(b), -1) {
			for k := num(c, "min"); k <= num(c, "max"); k++ {
				cols = append(cols, colName(k))
			}
		}
		order[zf.Name] = strings.Join(cols, " ")
	}
	return breaks, order
}

// integerTextByAtoi is integerText's definition: Atoi succeeds and Itoa of
// the result gives the text back, within 15 characters.
func integerTextByAtoi(v string) (int, bool) {
	n, err := strconv.Atoi(v)
	if len(v) > 15 || err != nil || strconv.Itoa(n) != v {
		return 0, false
	}
	return n, true
}

func TestIntegerText(t *testing.T) {
	for _, v := range []string{"", "0", "-0", "00", "7", "007", "-7", "--7", "+7", "101", "1e3", "1_000", " 1", "1 ",
		"999999999999999", "-99999999999999", "-999999999999999", "1000000000000000", "12a", "-", "٣", "0x1F"} {
		n, ok := integerText(v)
		wn, wok := integerTextByAtoi(v)
		if n != wn || ok != wok {
			t.Errorf("integerText(%q) = %d, %v; strconv gives %d, %v", v, n, ok, wn, wok)
		}
	}
}

func FuzzIntegerText(f *testing.F) {
	for _, v := range []string{"0", "-0", "007", "101", "-42", "+1", "999999999999999"} {
		f.Add(v)
	}
	f.Fuzz(func(t *testing.T, v string) {
		n, ok := integerText(v)
		wn, wok := integerTextByAtoi(v)
		if n != wn || ok != wok {
			t.Errorf("integerText(%q) = %d, %v; strconv gives %d, %v", v, n, ok, wn, wok)
		}
	})
}

// TestTextWidth: the widest line, East Asian wide characters and emoji
// counting two (widths as a terminal shows them).
func TestTextWidth(t *testing.T) {
	for _, c := range []struct {
		s string
		w float64
	}{{"", 0}, {"abc", 3}, {"ab\ncde", 3}, {"abcd\ne", 4}, {"a\n\nbb", 2}, {"肥料", 4}, {"🌱 bio", 6}, {"é", 1}, {"x\n肥料試験", 8}} {
		if got := textWidth(c.s); got != c.w {
			t.Errorf("textWidth(%q) = %v, want %v", c.s, got, c.w)
		}
	}
}
