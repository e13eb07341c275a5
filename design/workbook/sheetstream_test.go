package workbook

import (
	"bytes"
	"io"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

// TestStreamingScanner reads parts through a reader giving one byte at a
// time, and a few at a time, so that every tag, entity and comment is cut
// by the end of the scanner's buffer somewhere: the cells and shared
// strings must be those of the part read whole.
func TestStreamingScanner(t *testing.T) {
	sheet := []byte(`<?xml version="1.0"?><worksheet><!-- a comment with <tags> --><sheetData>` +
		`<row r="1"><c r="A1" t="s"><v>1</v></c><c r="C1" s="3"><v>1.5</v></c><c r='D1' t="inlineStr"><is><t xml:space="preserve"> a &amp; b &#x1F331; &#233;</t></is></c></row>` +
		`<row r="3"/><row r="4" spans="1:3"><c r="A4" t="str"><f>1+1</f><v>2</v></c><c r="B4"><f t="shared" si="0"/><v>3</v></c><c t="b"><v>1</v></c></row>` +
		`<?pi stuff?><row r="6"><c r="A6" t="inlineStr"><is><r><t>ri</t></r><r><t>ch</t></r><rPh><t>x</t></rPh></is></c><c r="B6" t="e"><v>#DIV/0!</v></c></row>` +
		`</sheetData></worksheet>`)
	sst := []byte(`<?xml version="1.0"?><sst count="3"><si><t>plain</t></si><si><r><t>ri</t></r><r><rPr><b/></rPr><t>ch é</t></r><rPh><t>phon</t></rPh></si><si/><si><t>&lt;&#34;q&#34;&gt; &unknown; &#xZZ; &#1114112;</t></si></sst>`)
	wantSST, ok := scanSharedStrings(sst)
	if !ok {
		t.Fatal("shared strings not scanned")
	}
	if want := []string{"plain", "rich é", "", `<"q"> &unknown; &#xZZ; &#1114112;`}; !reflect.DeepEqual(wantSST, want) {
		t.Fatalf("shared strings %q, want %q", wantSST, want)
	}
	want, ok := scanWorksheet(sheet, wantSST, scanLimits{})
	if !ok {
		t.Fatal("sheet not scanned")
	}
	if got := want.value("D1"); got != " a & b 🌱 é" {
		t.Errorf("D1 %q", got)
	}
	readers := map[string]func(io.Reader) io.Reader{
		"one byte": func(r io.Reader) io.Reader { return oneByte{r} },
		"3 bytes":  func(r io.Reader) io.Reader { return &chunked{r: r, n: 3} },
		"7 bytes":  func(r io.Reader) io.Reader { return &chunked{r: r, n: 7} },
	}
	for name, mk := range readers {
		t.Run(name, func(t *testing.T) {
			tab, ok := readSST(&xmlScanner{src: mk(bytes.NewReader(sst))}, 0)
			if !ok || !reflect.DeepEqual(tab, tableOf(wantSST)) {
				t.Fatalf("shared strings %v %v", ok, tab)
			}
			got, ok := collectSheet(&xmlScanner{src: mk(bytes.NewReader(sheet))}, tab, scanLimits{})
			if !ok || !reflect.DeepEqual(got, want) {
				t.Fatalf("sheet %v:\n%+v\nwhole: %+v", ok, got, want)
			}
		})
	}
	// A read error ends the scan as not applying.
	sc := &xmlScanner{src: io.MultiReader(bytes.NewReader(sheet[:100]), errReader{})}
	if _, ok := collectSheet(sc, tableOf(wantSST), scanLimits{}); ok {
		t.Error("a read error passed")
	}
}

type oneByte struct{ r io.Reader }

func (o oneByte) Read(p []byte) (int, error) {
	if len(p) == 0 {
		return 0, nil
	}
	return o.r.Read(p[:1])
}

type chunked struct {
	r io.Reader
	n int
}

func (c *chunked) Read(p []byte) (int, error) { return c.r.Read(p[:min(len(p), c.n)]) }

type errReader struct{}

func (errReader) Read([]byte) (int, error) { return 0, io.ErrUnexpectedEOF }

// TestSharedStringTable checks the compact shared-string table against
// excelize's reading of the same workbook: plain, non-ASCII, rich-text,
// empty and escaped strings, each cell's text as excelize gives it.
func TestSharedStringTable(t *testing.T) {
	f := excelize.NewFile()
	texts := []string{"plain", "", "Témoin — 肥料 🌱", "a & b <c> \"d\" 'e'", " spaced ", "line\nbreak", strings.Repeat("long ", 2000)}
	for i, s := range texts {
		f.SetCellStr("Sheet1", cell(1, i+1), s)
	}
	f.SetCellRichText("Sheet1", "B1", []excelize.RichTextRun{{Text: "rich "}, {Text: "Text é", Font: &excelize.Font{Bold: true}}, {Text: ""}})
	f.SetCellRichText("Sheet1", "B2", []excelize.RichTextRun{{Text: "🌿"}, {Text: " bio", Font: &excelize.Font{Italic: true}}})
	path := filepath.Join(t.TempDir(), "sst.xlsx")
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	g, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	tab, ok := sharedStrings(g)
	if !ok || tab.len() == 0 {
		t.Fatalf("table %v %v", ok, tab)
	}
	sc, ok := scanSheetWith(g, "Sheet1", tab, scanLimits{})
	if !ok {
		t.Fatal("sheet not scanned")
	}
	rows, err := g.GetRows("Sheet1", excelize.Options{RawCellValue: true})
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for r, row := range rows {
		for c, want := range row {
			ref := cell(c+1, r+1)
			if got := sc.value(ref); got != want {
				t.Errorf("%s: %q, excelize %q", ref, got, want)
			}
			n++
		}
	}
	if n < len(texts)+2 {
		t.Errorf("only %d cells compared", n)
	}
	// Each string once, one after the other.
	if got, want := len(tab.buf), tab.end[tab.len()-1]; got != want {
		t.Errorf("buffer %d bytes, strings end at %d", got, want)
	}
}
