package report

import (
	"bytes"
	"fmt"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
)

func mapLayout(t *testing.T, blocks int, blind bool, grid *design.Grid) design.Layout {
	t.Helper()
	p := design.Plan{Title: "Map test: four feeds on benches, with a title long enough that it has to wrap on an A4 page", Design: design.RCBD,
		Factors: []design.Factor{{Name: "feed", Levels: []string{"F0", "F1", "F2", "F3"}}}, Reps: []int{1, 1, 1, 1},
		Blocks: blocks, BlockName: "bench", Seed: 9, Generator: randomize.Generator, Blind: blind, Grid: grid}
	if grid != nil {
		p.Grid.Numbering = design.RowWise
	}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

func TestMapPages(t *testing.T) {
	tests := []struct {
		name             string
		blocks           int
		grid             *design.Grid
		paper            string
		wantW, wantH     float64 // points
		minPages, maxPgs int
	}{
		{"rows of positions, A4", 12, nil, "a4", 595.3, 841.9, 1, 2},
		{"2x2 grids, A4", 10, &design.Grid{Rows: 2, Cols: 2}, "a4", 595.3, 841.9, 3, 5},
		{"2x2 grids, letter", 10, &design.Grid{Rows: 2, Cols: 2}, "letter", 612, 792, 3, 5},
		{"wide grid goes landscape", 2, &design.Grid{Rows: 1, Cols: 4}, "a4", 595.3, 841.9, 1, 2},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			l := mapLayout(t, tt.blocks, false, tt.grid)
			pages, err := MapPages(l, tt.paper)
			if err != nil {
				t.Fatal(err)
			}
			if len(pages) < tt.minPages || len(pages) > tt.maxPgs {
				t.Errorf("%d pages, want %d to %d", len(pages), tt.minPages, tt.maxPgs)
			}
			w, h := float64(pages[0].w.Points()), float64(pages[0].h.Points())
			if !(near(w, tt.wantW) && near(h, tt.wantH) || near(w, tt.wantH) && near(h, tt.wantW)) {
				t.Errorf("page %.1f × %.1f pt, want %.1f × %.1f", w, h, tt.wantW, tt.wantH)
			}
			// Every block on exactly one page, whole.
			g, _ := newMapGeom(l, tt.paper, false)
			if g.perPage*len(pages) < tt.blocks || g.perPage*(len(pages)-1) >= tt.blocks {
				t.Errorf("%d blocks per page on %d pages for %d blocks", g.perPage, len(pages), tt.blocks)
			}
			// The title wraps inside the page rather than running off it.
			for _, line := range g.titleLines {
				if textWidth(textStyle(mapBold, titleSize, 0, 0), line) > g.w-2*g.margin {
					t.Errorf("title line %q wider than the page", line)
				}
			}
			if g.labelSize < 12 {
				t.Errorf("treatment labels at %v pt: too small to read at arm's length", g.labelSize)
			}
		})
	}
}

func near(a, b float64) bool { return a > b-1 && a < b+1 }

func TestMapPNGAt300DPI(t *testing.T) {
	l := mapLayout(t, 3, false, &design.Grid{Rows: 2, Cols: 2})
	pages, err := MapPages(l, "a4")
	if err != nil {
		t.Fatal(err)
	}
	b, err := pages[0].Render("png")
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	// pHYs: 11811 pixels per metre (300 dpi) both ways, unit metre.
	if i := bytes.Index(b, []byte("pHYs")); i < 0 || !bytes.Equal(b[i+4:i+13], []byte{0, 0, 0x2e, 0x23, 0, 0, 0x2e, 0x23, 1}) {
		t.Error("PNG does not say 300 dpi (pHYs chunk)")
	}
	// A4 is 8.27 × 11.69 in: 2480 × 3508 pixels at 300 dpi.
	if r := img.Bounds(); r.Dx() != 2480 || r.Dy() != 3508 {
		t.Errorf("PNG %d × %d pixels, want 2480 × 3508 (A4 at 300 dpi)", r.Dx(), r.Dy())
	}
}

func TestMapBlindIsColourless(t *testing.T) {
	l := mapLayout(t, 2, true, nil)
	pages, err := MapPages(l, "a4")
	if err != nil {
		t.Fatal(err)
	}
	b, err := pages[0].Render("png")
	if err != nil {
		t.Fatal(err)
	}
	img, _ := png.Decode(bytes.NewReader(b))
	r := img.Bounds()
	for y := r.Min.Y; y < r.Max.Y; y += 7 {
		for x := r.Min.X; x < r.Max.X; x += 7 {
			cr, cg, cb, _ := img.At(x, y).RGBA()
			if cr != cg || cg != cb {
				t.Fatalf("blind map has colour at (%d, %d): %d %d %d", x, y, cr>>8, cg>>8, cb>>8)
			}
		}
	}
	svg, _ := pages[0].Render("svg")
	for _, code := range l.Codes {
		if !bytes.Contains(svg, []byte(">"+code+"<")) {
			t.Errorf("blind map lacks code %q", code)
		}
	}
	for _, name := range []string{">F0<", ">F1<"} {
		if bytes.Contains(svg, []byte(name)) {
			t.Errorf("blind map shows treatment %s", name)
		}
	}
}

func TestMapColoursAndShapesDistinct(t *testing.T) {
	seen := map[string]bool{}
	for tr := 0; tr < 64; tr++ {
		c, s := mapMark(tr)
		key := string([]byte{c.R, c.G, c.B}) + strings.TrimPrefix(typeName(s), "draw.")
		if seen[key] {
			t.Fatalf("treatment %d repeats colour and shape of an earlier one", tr)
		}
		seen[key] = true
	}
}

func typeName(v any) string {
	return strings.TrimSpace(strings.Split(strings.TrimPrefix(fmtType(v), "*"), "{")[0])
}

func TestMapTooManyPagesRefused(t *testing.T) {
	l := mapLayout(t, 25000, false, nil)
	_, err := MapPages(l, "a4")
	if err == nil || !strings.Contains(err.Error(), "more than the 200 a map may have") || !strings.Contains(err.Error(), "25000 benches") {
		t.Errorf("got %v", err)
	}
	// The one-picture map stays bounded and says so.
	g, _ := newMapGeom(l, "a4", true)
	if g.blocks != maxScreenBlocks {
		t.Errorf("screen map draws %d blocks", g.blocks)
	}
}

func TestWriteMapFiles(t *testing.T) {
	if testing.Short() {
		t.Skip("renders seven pages at 300 dpi")
	}
	dir := t.TempDir()
	l := mapLayout(t, 10, false, &design.Grid{Rows: 2, Cols: 2})
	written, err := WriteMap(filepath.Join(dir, "m.png"), l, "a4", false)
	if err != nil {
		t.Fatal(err)
	}
	if len(written) < 3 || !strings.HasSuffix(written[0], "m-1.png") {
		t.Errorf("wrote %v", written)
	}
	pdf := filepath.Join(dir, "m.pdf")
	if _, err := WriteMap(pdf, l, "a4", false); err != nil {
		t.Fatal(err)
	}
	if _, err := WriteMap(pdf, l, "a4", false); err == nil {
		t.Error("replaced a map without force")
	}
	info, err := exec.LookPath("pdfinfo")
	if err != nil {
		t.Skip("pdfinfo not installed (Debian package poppler-utils): skipping the page count")
	}
	out, err := exec.Command(info, pdf).Output()
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(out), "Pages:           "+itoa(len(written))) || !strings.Contains(string(out), "(A4)") {
		t.Errorf("pdfinfo:\n%s", out)
	}
	_ = os.Remove(pdf)
}

func fmtType(v any) string { return strings.TrimPrefix(fmt.Sprintf("%T", v), "draw.") }

func itoa(n int) string { return fmt.Sprint(n) }
