package paper_test

import (
	"bytes"
	"encoding/xml"
	"fmt"
	"image"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report/paper"
)

var created = time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC)

// rcbd is an open plan: 4 feeds in 12 benches, measured in a random order.
func rcbd(t testing.TB) design.Layout {
	t.Helper()
	p := design.Plan{Title: "Four feeds for lettuce (test)", Design: design.RCBD,
		Factors: []design.Factor{{Name: "feed", Levels: []string{"lowN", "midN", "highN", "slowrelease"}}},
		Reps:    []int{1, 1, 1, 1}, Blocks: 12, BlockName: "bench", Seed: 42, Generator: randomize.Generator, Order: true,
		Grid:      &design.Grid{Rows: 2, Cols: 2, Numbering: design.Serpentine},
		Responses: []design.Response{{Name: "height_cm"}, {Name: "leaves"}}}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// blind is a blind plan of animals from a list, blocked by litter, with
// treatment names that must not appear on anything printed.
func blind(t testing.TB, subsamples int) design.Layout {
	t.Helper()
	var units []design.UnitSpec
	for b := 1; b <= 4; b++ {
		for k := 1; k <= 3; k++ {
			units = append(units, design.UnitSpec{ID: fmt.Sprintf("Mäus-%d%02d", b, k), Block: b, BlockLabel: fmt.Sprintf("L%d", 10+b)})
		}
	}
	p := design.Plan{Title: "Wound healing, blinded scoring (test)", Design: design.RCBD,
		Factors: []design.Factor{{Name: "dressing", Levels: []string{"Saline", "Hydrogel", "Honeygauze"}}},
		Reps:    []int{1, 1, 1}, Blocks: 4, BlockName: "litter", Seed: 7, Generator: randomize.Generator, Units: units,
		Blind: true, Order: true, Subsamples: subsamples,
		Responses: []design.Response{{Name: "area_mm2", Min: ptr(0), Max: ptr(400)}}}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

func ptr(v float64) *float64 { return &v }

func need(t *testing.T, tools ...string) {
	t.Helper()
	for _, tool := range tools {
		if _, err := exec.LookPath(tool); err != nil {
			t.Skipf("%s is not installed (Debian: poppler-utils for pdftoppm/pdftotext/pdffonts, zbar-tools for zbarimg); skipping the check of the rendered PDF", tool)
		}
	}
}

func renderLabels(t *testing.T, v design.View, o paper.LabelOptions) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := paper.Labels(&b, v, o); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func writeTemp(t *testing.T, name string, b []byte) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// labelCase is a label job and the boxes where its labels must fall,
// computed here from the stated geometry (not by the package).
type labelCase struct {
	name   string
	view   func(t testing.TB) design.View
	opt    paper.LabelOptions
	page   [2]float64 // mm
	slots  func(k int) [4]float64
	nslots int
}

func sheetCase(name string, view func(testing.TB) design.View, s paper.Sheet, start int, cut, subs, meas bool) labelCase {
	return labelCase{name: name, view: view, opt: paper.LabelOptions{Sheet: &s, Start: start, CutMarks: cut, Subsamples: subs, ByMeasurement: meas, Created: created},
		page: [2]float64{s.Page.W, s.Page.H}, nslots: s.Cols * s.Rows,
		slots: func(k int) [4]float64 {
			r, c := k/s.Cols, k%s.Cols
			return [4]float64{s.Left + float64(c)*(s.W+s.GapH), s.Top + float64(r)*(s.H+s.GapV), s.W, s.H}
		}}
}

func preset(t testing.TB, name string) paper.Sheet {
	s, ok := paper.PresetNamed(name)
	if !ok {
		t.Fatalf("no preset %q", name)
	}
	return s
}

func labelCases(t testing.TB) []labelCase {
	open := func(t testing.TB) design.View { return rcbd(t).View() }
	blind1 := func(t testing.TB) design.View { return blind(t, 0).View() }
	blind3 := func(t testing.TB) design.View { return blind(t, 3).View() }
	custom := paper.Sheet{Page: paper.Letter, Cols: 2, Rows: 4, W: 80, H: 50, Top: 20, Left: 15, GapH: 5, GapV: 4}
	cases := []labelCase{
		sheetCase("a4-3x7 measurement order, start 5, cut marks", open, preset(t, "a4-3x7"), 5, true, false, true),
		sheetCase("letter-3x10 blind unit order", blind1, preset(t, "letter-3x10"), 0, false, false, false),
		sheetCase("a4-5x13 blind subsamples", blind3, preset(t, "a4-5x13"), 2, true, true, true),
		sheetCase("custom letter 2x4 80x50", open, custom, 0, true, false, false),
		sheetCase("a4-4x10", open, preset(t, "a4-4x10"), 0, false, false, true),
		{name: "roll 50x25", view: blind1, opt: paper.LabelOptions{Roll: &paper.Roll{W: 50, H: 25}, Created: created},
			page: [2]float64{50, 25}, nslots: 1, slots: func(int) [4]float64 { return [4]float64{0, 0, 50, 25} }},
	}
	return cases
}

// expected returns the code text and unit ID of every label in order.
func expected(v design.View, subs, meas bool) (codes, ids []string) {
	seq, _ := v.Sequence(meas)
	n := 1
	if subs {
		n = v.Layout.Plan.Subsamples
	}
	for _, i := range seq {
		u := v.Layout.Units[i]
		// The code spells the one non-ASCII letter of the test IDs as its
		// UTF-8 bytes, percent-encoded.
		esc := strings.ReplaceAll(u.ID, "ä", "%C3%A4")
		for k := 1; k <= n; k++ {
			if subs {
				codes = append(codes, "allot:"+v.Fingerprint[:12]+":"+esc+"/"+strconv.Itoa(k))
				ids = append(ids, u.ID+"/"+strconv.Itoa(k))
				continue
			} else {
				codes = append(codes, "allot:"+v.Fingerprint[:12]+":"+esc)
			}
			ids = append(ids, u.ID)
		}
	}
	return codes, ids
}

type zbarXML struct {
	Sources []struct {
		Href    string `xml:"href,attr"`
		Symbols []struct {
			Type string `xml:"type,attr"`
			Data string `xml:"data"`
		} `xml:"index>symbol"`
	} `xml:"source"`
}

const dpi = 300

// TestQRCodesDecode renders every page, cuts out each label's box and
// decodes it with zbarimg (an independent decoder): each box holds exactly
// one code, the one of the unit meant for that place, and skipped or
// unused places hold none.
func TestQRCodesDecode(t *testing.T) {
	need(t, "pdftoppm", "zbarimg")
	cases := labelCases(t)
	if testing.Short() {
		cases = cases[:1]
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			v := c.view(t)
			pdf := writeTemp(t, "labels.pdf", renderLabels(t, v, c.opt))
			dir := t.TempDir()
			if out, err := exec.Command("pdftoppm", "-r", strconv.Itoa(dpi), "-gray", pdf, filepath.Join(dir, "page")).CombinedOutput(); err != nil {
				t.Fatalf("pdftoppm: %v\n%s", err, out)
			}
			pages, _ := filepath.Glob(filepath.Join(dir, "page-*.pgm"))
			sort.Strings(pages)
			codes, _ := expected(v, c.opt.Subsamples, c.opt.ByMeasurement)
			want := map[string]string{} // crop file → code ("" for an empty place)
			var crops []string
			label := 0
			for pi, pg := range pages {
				img := readPGM(t, pg)
				for k := 0; k < c.nslots; k++ {
					code := ""
					if !(pi == 0 && k < c.opt.Start) && label < len(codes) {
						code = codes[label]
						label++
					}
					b := c.slots(k)
					px := func(x float64) int { return int(math.Round(x / 25.4 * dpi)) }
					sub := img.SubImage(image.Rect(px(b[0]), px(b[1]), px(b[0]+b[2]), px(b[1]+b[3]))).(*image.Gray)
					name := filepath.Join(dir, fmt.Sprintf("crop-%02d-%03d.pgm", pi, k))
					writePGM(t, name, sub)
					crops = append(crops, name)
					want[name] = code
				}
			}
			if label != len(codes) {
				t.Fatalf("%d pages hold %d labels, want %d", len(pages), label, len(codes))
			}
			args := append([]string{"--nodbus", "--xml", "-q", "-Sdisable", "-Sqrcode.enable"}, crops...)
			out, _ := exec.Command("zbarimg", args...).Output() // exit 4 when a crop holds no code
			var res zbarXML
			if err := xml.Unmarshal(out, &res); err != nil {
				t.Fatalf("zbarimg output: %v\n%s", err, out)
			}
			got := map[string][]string{}
			for _, s := range res.Sources {
				for _, sym := range s.Symbols {
					got[s.Href] = append(got[s.Href], sym.Data)
				}
			}
			decoded := 0
			for _, name := range crops {
				g, w := got[name], want[name]
				switch {
				case w == "" && len(g) > 0:
					t.Errorf("%s: an empty place decodes to %q", filepath.Base(name), g)
				case w != "" && (len(g) != 1 || g[0] != w):
					t.Errorf("%s: decodes to %q, want %q", filepath.Base(name), g, w)
				case w != "":
					decoded++
				}
			}
			t.Logf("%d of %d codes decoded in their label's box at %d dpi", decoded, len(codes), dpi)
		})
	}
}

// readPGM reads a binary 8-bit greyscale portable graymap (P5), as
// pdftoppm -gray writes it.
func readPGM(t *testing.T, path string) *image.Gray {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var w, h, maxv int
	var magic string
	n, err := fmt.Sscan(string(b[:min(len(b), 64)]), &magic, &w, &h, &maxv)
	if err != nil || n != 4 || magic != "P5" || maxv != 255 {
		t.Fatalf("%s: not an 8-bit P5 graymap (%v)", path, err)
	}
	// The header ends after the single white space that follows maxval.
	off, fields := 0, 0
	for fields < 4 {
		for b[off] == ' ' || b[off] == '\n' || b[off] == '\r' || b[off] == '\t' {
			off++
		}
		for b[off] != ' ' && b[off] != '\n' && b[off] != '\r' && b[off] != '\t' {
			off++
		}
		fields++
	}
	off++
	if len(b)-off != w*h {
		t.Fatalf("%s: %d bytes of pixels for %d × %d", path, len(b)-off, w, h)
	}
	return &image.Gray{Pix: b[off:], Stride: w, Rect: image.Rect(0, 0, w, h)}
}

func writePGM(t *testing.T, path string, img *image.Gray) {
	t.Helper()
	r := img.Bounds()
	var buf bytes.Buffer
	fmt.Fprintf(&buf, "P5\n%d %d\n255\n", r.Dx(), r.Dy())
	for y := r.Min.Y; y < r.Max.Y; y++ {
		buf.Write(img.Pix[img.PixOffset(r.Min.X, y):img.PixOffset(r.Max.X, y)])
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestSheetGrid checks the package's label boxes against the grid the
// geometry states, and that every box lies on the page, to 0.1 mm.
func TestSheetGrid(t *testing.T) {
	const tol = 0.1
	for _, c := range labelCases(t) {
		if c.opt.Sheet == nil {
			continue
		}
		t.Run(c.name, func(t *testing.T) {
			s := *c.opt.Sheet
			if err := s.Validate(); err != nil {
				t.Fatal(err)
			}
			for k := 0; k < s.PerSheet(); k++ {
				b, w := s.Box(k), c.slots(k)
				if math.Abs(b.X-w[0]) > tol || math.Abs(b.Y-w[1]) > tol || math.Abs(b.W-w[2]) > tol || math.Abs(b.H-w[3]) > tol {
					t.Errorf("label %d at %+v, want %v", k, b, w)
				}
				if b.X < -tol || b.Y < -tol || b.X+b.W > s.Page.W+tol || b.Y+b.H > s.Page.H+tol {
					t.Errorf("label %d at %+v leaves the %s page", k, b, s.Page.Name)
				}
			}
		})
	}
}

// TestPresets checks that every preset's labels lie on its page, centred
// to 0.1 mm.
func TestPresets(t *testing.T) {
	for _, p := range paper.Presets() {
		s := p.Sheet
		if err := s.Validate(); err != nil {
			t.Errorf("%s: %v", p.Name, err)
		}
		right := s.Page.W - (s.Left + float64(s.Cols)*s.W + float64(s.Cols-1)*s.GapH)
		bottom := s.Page.H - (s.Top + float64(s.Rows)*s.H + float64(s.Rows-1)*s.GapV)
		if math.Abs(right-s.Left) > 0.1 || math.Abs(bottom-s.Top) > 0.1 || s.Left < 0 || s.Top < 0 {
			t.Errorf("%s: margins left %.2f right %.2f top %.2f bottom %.2f", p.Name, s.Left, right, s.Top, bottom)
		}
		if !strings.HasPrefix(p.Name, strings.ToLower(s.Page.Name)+"-") || !strings.HasSuffix(p.Name, fmt.Sprintf("%dx%d", s.Cols, s.Rows)) {
			t.Errorf("preset %q does not name its page and grid", p.Name)
		}
	}
}

type bboxDoc struct {
	Pages []struct {
		W     float64 `xml:"width,attr"`
		H     float64 `xml:"height,attr"`
		Words []struct {
			XMin float64 `xml:"xMin,attr"`
			YMin float64 `xml:"yMin,attr"`
			XMax float64 `xml:"xMax,attr"`
			YMax float64 `xml:"yMax,attr"`
			Text string  `xml:",chardata"`
		} `xml:"word"`
	} `xml:"body>doc>page"`
}

// TestRenderedGeometry reads the word boxes of the rendered PDF
// (pdftotext -bbox): the pages have the stated size, every unit ID lies
// inside the box of its place, at the same offset from the box's corner on
// every label to 0.1 mm, so the printed labels sit on the requested grid.
func TestRenderedGeometry(t *testing.T) {
	need(t, "pdftotext")
	const tol = 0.1
	for _, c := range labelCases(t) {
		t.Run(c.name, func(t *testing.T) {
			v := c.view(t)
			pdf := writeTemp(t, "labels.pdf", renderLabels(t, v, c.opt))
			out, err := exec.Command("pdftotext", "-bbox", pdf, "-").Output()
			if err != nil {
				t.Fatal(err)
			}
			var doc bboxDoc
			dec := xml.NewDecoder(bytes.NewReader(out))
			dec.Strict = false
			dec.AutoClose = xml.HTMLAutoClose
			dec.Entity = xml.HTMLEntity
			if err := dec.Decode(&doc); err != nil {
				t.Fatal(err)
			}
			_, ids := expected(v, c.opt.Subsamples, c.opt.ByMeasurement)
			toMM := 25.4 / 72
			label := 0
			var dx0, dy0 float64
			for pi, pg := range doc.Pages {
				if math.Abs(pg.W*toMM-c.page[0]) > tol || math.Abs(pg.H*toMM-c.page[1]) > tol {
					t.Fatalf("page %d is %.2f × %.2f mm, want %v", pi+1, pg.W*toMM, pg.H*toMM, c.page)
				}
				// The unit IDs come in label order; other words (the
				// place, treatment, title, plan) are passed over.
				for _, w := range pg.Words {
					if label >= len(ids) || w.Text != ids[label] {
						continue
					}
					k := -1
					for s := 0; s < c.nslots; s++ {
						b := c.slots(s)
						if w.XMin*toMM >= b[0]-tol && w.XMax*toMM <= b[0]+b[2]+tol && w.YMin*toMM >= b[1]-tol && w.YMax*toMM <= b[1]+b[3]+tol {
							k = s
						}
					}
					if k < 0 {
						t.Errorf("page %d: unit ID %q at (%.2f, %.2f) mm lies in no label box", pi+1, w.Text, w.XMin*toMM, w.YMin*toMM)
						continue
					}
					if wp, wk := (label+c.opt.Start)/c.nslots, (label+c.opt.Start)%c.nslots; wp != pi || wk != k {
						t.Errorf("unit ID %q on page %d place %d, want page %d place %d", w.Text, pi+1, k, wp+1, wk)
					}
					b := c.slots(k)
					dx, dy := w.XMin*toMM-b[0], w.YMin*toMM-b[1]
					if label == 0 {
						dx0, dy0 = dx, dy
					} else if math.Abs(dx-dx0) > tol || math.Abs(dy-dy0) > tol {
						t.Errorf("page %d place %d: unit ID %.3f, %.3f mm from the box corner, the first %.3f, %.3f mm", pi+1, k, dx, dy, dx0, dy0)
					}
					label++
				}
			}
			if label != len(ids) {
				t.Errorf("found %d unit IDs, want %d", label, len(ids))
			}
		})
	}
}

// TestBlindLabelsNameNoTreatment extracts the text of blind labels and
// recording sheets: the codes are there, the treatment and factor names
// are not.
func TestBlindLabelsNameNoTreatment(t *testing.T) {
	need(t, "pdftotext")
	for _, subs := range []int{0, 3} {
		l := blind(t, subs)
		v := l.View()
		s := preset(t, "a4-3x7")
		docs := map[string][]byte{"labels": renderLabels(t, v, paper.LabelOptions{Sheet: &s, Subsamples: subs > 0, Created: created})}
		var b bytes.Buffer
		if err := paper.Record(&b, v, paper.RecordOptions{Page: paper.A4, ByMeasurement: true, Created: created}); err != nil {
			t.Fatal(err)
		}
		docs["sheet"] = b.Bytes()
		for name, pdf := range docs {
			out, err := exec.Command("pdftotext", writeTemp(t, name+".pdf", pdf), "-").Output()
			if err != nil {
				t.Fatal(err)
			}
			text := strings.ToLower(string(out))
			for _, tr := range append([]string{"dressing"}, l.Plan.Factors[0].Levels...) {
				if strings.Contains(text, strings.ToLower(tr)) {
					t.Errorf("blind %s (subsamples %d) shows %q", name, subs, tr)
				}
			}
			for _, code := range l.Codes {
				if !strings.Contains(string(out), code) {
					t.Errorf("blind %s (subsamples %d) lacks code %s", name, subs, code)
				}
			}
		}
	}
}

// TestFontsEmbedded lists the fonts of both documents (pdffonts): every
// one is embedded; and their images (pdfimages): there are none, the QR
// codes are vector shapes.
func TestFontsEmbedded(t *testing.T) {
	need(t, "pdffonts", "pdfimages")
	v := rcbd(t).View()
	s := preset(t, "a4-3x7")
	var rec bytes.Buffer
	if err := paper.Record(&rec, v, paper.RecordOptions{Page: paper.Letter, Created: created}); err != nil {
		t.Fatal(err)
	}
	for name, pdf := range map[string][]byte{"labels": renderLabels(t, v, paper.LabelOptions{Sheet: &s, Created: created}), "sheet": rec.Bytes()} {
		out, err := exec.Command("pdffonts", writeTemp(t, name+".pdf", pdf)).Output()
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(strings.TrimSpace(string(out)), "\n")
		if len(lines) < 3 {
			t.Fatalf("%s: no fonts listed:\n%s", name, out)
		}
		imgs, err := exec.Command("pdfimages", "-list", writeTemp(t, name+"-i.pdf", pdf)).Output()
		if err != nil {
			t.Fatal(err)
		}
		// Two header lines, then one line per image.
		if n := len(strings.Split(strings.TrimSpace(string(imgs)), "\n")); n != 2 {
			t.Errorf("%s: %d image(s) in the PDF, want none:\n%s", name, n-2, imgs)
		}
		for _, ln := range lines[2:] {
			f := strings.Fields(ln)
			// name type… encoding emb sub uni object ID
			if len(f) < 6 || f[len(f)-5] != "yes" {
				t.Errorf("%s: font not embedded: %s", name, ln)
			}
		}
	}
}

// TestRecordingSheet checks the text of a recording sheet: every page has
// the title, the fingerprint and "page i of n", and the units come in
// measurement order.
func TestRecordingSheet(t *testing.T) {
	need(t, "pdftotext")
	for _, page := range []paper.Page{paper.A4, paper.Letter} {
		l := rcbd(t)
		v := l.View()
		var b bytes.Buffer
		if err := paper.Record(&b, v, paper.RecordOptions{Page: page, ByMeasurement: true, Created: created}); err != nil {
			t.Fatal(err)
		}
		pdf := writeTemp(t, "sheet.pdf", b.Bytes())
		out, err := exec.Command("pdftotext", "-layout", pdf, "-").Output()
		if err != nil {
			t.Fatal(err)
		}
		pages := strings.Split(strings.TrimRight(string(out), "\f\n"), "\f")
		if len(pages) < 2 {
			t.Fatalf("%s: %d page(s), want 2 for 48 units", page.Name, len(pages))
		}
		var order []string
		for i, pg := range pages {
			for _, want := range []string{l.Plan.Title, v.Fingerprint, fmt.Sprintf("page %d of %d", i+1, len(pages)), "height_cm", "leaves", "Notes"} {
				if !strings.Contains(pg, want) {
					t.Errorf("%s page %d lacks %q", page.Name, i+1, want)
				}
			}
			for _, ln := range strings.Split(pg, "\n") {
				f := strings.Fields(ln)
				if len(f) >= 5 {
					if _, err := strconv.Atoi(f[0]); err == nil {
						order = append(order, f[1])
					}
				}
			}
		}
		seq, _ := v.Sequence(true)
		if len(order) != len(seq) {
			t.Fatalf("%s: %d unit rows, want %d", page.Name, len(order), len(seq))
		}
		for k, i := range seq {
			if order[k] != l.Units[i].ID {
				t.Errorf("%s: row %d is unit %s, want %s", page.Name, k+1, order[k], l.Units[i].ID)
			}
		}
	}
}

// TestDeterministic: the same input gives the same bytes.
func TestDeterministic(t *testing.T) {
	v := rcbd(t).View()
	s := preset(t, "a4-3x7")
	a := renderLabels(t, v, paper.LabelOptions{Sheet: &s, CutMarks: true, Created: created})
	b := renderLabels(t, v, paper.LabelOptions{Sheet: &s, CutMarks: true, Created: created})
	if !bytes.Equal(a, b) {
		t.Error("two renderings of the same labels differ")
	}
}

func TestGeometryErrors(t *testing.T) {
	v := rcbd(t).View()
	a4 := func(cols, rows int, w, h, top, left, gh, gv float64) *paper.Sheet {
		return &paper.Sheet{Page: paper.A4, Cols: cols, Rows: rows, W: w, H: h, Top: top, Left: left, GapH: gh, GapV: gv}
	}
	cases := []struct {
		name  string
		opt   paper.LabelOptions
		field string
		msg   string
	}{
		{"too wide", paper.LabelOptions{Sheet: a4(3, 7, 70, 38, 10, 5, 2, 0)}, "label", "beyond the A4 page's width of 210 mm"},
		{"too tall", paper.LabelOptions{Sheet: a4(3, 8, 60, 38, 10, 5, 2, 0)}, "label", "beyond the A4 page's height of 297 mm"},
		{"no columns", paper.LabelOptions{Sheet: a4(0, 7, 60, 38, 10, 5, 2, 0)}, "sheet", "at least 1 column"},
		{"negative gap", paper.LabelOptions{Sheet: a4(3, 7, 60, 38, 10, 5, -2, 0)}, "gap", "cannot be negative"},
		{"too small for the code", paper.LabelOptions{Sheet: a4(4, 20, 45, 12, 10, 5, 2, 0)}, "label", "too small for the code"},
		{"too narrow for text", paper.LabelOptions{Sheet: a4(7, 7, 28, 38, 10, 4, 1, 0)}, "label", "beside the code"},
		{"start beyond the sheet", paper.LabelOptions{Sheet: a4(3, 7, 60, 38, 10, 5, 2, 0), Start: 21}, "start", "from 0 to 20"},
		{"start on a roll", paper.LabelOptions{Roll: &paper.Roll{W: 50, H: 25}, Start: 1}, "start", "a roll"},
		{"cut marks on a roll", paper.LabelOptions{Roll: &paper.Roll{W: 50, H: 25}, CutMarks: true}, "roll", "cut marks"},
		{"subsamples without them", paper.LabelOptions{Roll: &paper.Roll{W: 50, H: 25}, Subsamples: true}, "subsamples", "one measurement per unit"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var b bytes.Buffer
			err := paper.Labels(&b, v, c.opt)
			ge, ok := err.(*paper.GeometryError)
			if !ok {
				t.Fatalf("error %v, want a *GeometryError", err)
			}
			if ge.Field != c.field || !strings.Contains(ge.Msg, c.msg) {
				t.Errorf("got field %q, %q; want field %q containing %q", ge.Field, ge.Msg, c.field, c.msg)
			}
		})
	}
	// A plan without a measurement order cannot be printed in one.
	p := v.Layout.Plan
	p.Order = false
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := paper.LabelsOf(l.View(), false, true); err == nil || !strings.Contains(err.Error(), "no measurement order") {
		t.Errorf("measurement order of a plan without one: %v", err)
	}
}

func BenchmarkLabels(b *testing.B) {
	for _, blocks := range []int{12, 120} {
		p := rcbd(b).Plan
		p.Blocks = blocks
		l, err := randomize.Assign(p)
		if err != nil {
			b.Fatal(err)
		}
		v := l.View()
		s, _ := paper.PresetNamed("a4-3x7")
		b.Run(fmt.Sprintf("units=%d", len(l.Units)), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				var buf bytes.Buffer
				if err := paper.Labels(&buf, v, paper.LabelOptions{Sheet: &s, Created: created}); err != nil {
					b.Fatal(err)
				}
			}
		})
		b.Run(fmt.Sprintf("sheet/units=%d", len(l.Units)), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				var buf bytes.Buffer
				if err := paper.Record(&buf, v, paper.RecordOptions{Page: paper.A4, ByMeasurement: true, Created: created}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// TestQRSurvivesDamage stands in for a wet, scratched label: on each
// rendered label a blot covering the middle 30% × 30% of the symbol
// (about 9% of its area) is wiped white and a scratch one module wide is
// drawn across it; every code must still decode (error-correction level
// H restores up to about 30% of the codewords).
func TestQRSurvivesDamage(t *testing.T) {
	need(t, "pdftoppm", "zbarimg")
	v := rcbd(t).View()
	s := preset(t, "a4-3x7")
	pdf := writeTemp(t, "labels.pdf", renderLabels(t, v, paper.LabelOptions{Sheet: &s, Created: created}))
	dir := t.TempDir()
	if out, err := exec.Command("pdftoppm", "-r", strconv.Itoa(dpi), "-gray", "-f", "1", "-l", "1", pdf, filepath.Join(dir, "page")).CombinedOutput(); err != nil {
		t.Fatalf("pdftoppm: %v\n%s", err, out)
	}
	pages, _ := filepath.Glob(filepath.Join(dir, "page-*.pgm"))
	img := readPGM(t, pages[0])
	codes, _ := expected(v, false, false)
	var crops []string
	px := func(x float64) int { return int(math.Round(x / 25.4 * dpi)) }
	for k := 0; k < s.PerSheet(); k++ {
		b := s.Box(k)
		r := image.Rect(px(b.X), px(b.Y), px(b.X+b.W), px(b.Y+b.H))
		crop := image.NewGray(image.Rect(0, 0, r.Dx(), r.Dy()))
		for y := 0; y < r.Dy(); y++ {
			copy(crop.Pix[y*crop.Stride:(y+1)*crop.Stride], img.Pix[img.PixOffset(r.Min.X, r.Min.Y+y):])
		}
		// The symbol: the dark pixels in the label's left 45%.
		x0, y0, x1, y1 := crop.Rect.Dx(), crop.Rect.Dy(), 0, 0
		for y := 0; y < crop.Rect.Dy(); y++ {
			for x := 0; x < crop.Rect.Dx()*45/100; x++ {
				if crop.GrayAt(x, y).Y < 128 {
					x0, y0, x1, y1 = min(x0, x), min(y0, y), max(x1, x), max(y1, y)
				}
			}
		}
		side := x1 - x0
		for y := y0 + side*35/100; y < y0+side*65/100; y++ {
			for x := x0 + side*35/100; x < x0+side*65/100; x++ {
				crop.Pix[y*crop.Stride+x] = 255
			}
		}
		mod := side / 29 // version 3: 29 modules across
		for y := y0 + side*3/4; y < y0+side*3/4+mod; y++ {
			for x := x0; x <= x1; x++ {
				crop.Pix[y*crop.Stride+x] = 0
			}
		}
		name := filepath.Join(dir, fmt.Sprintf("damaged-%02d.pgm", k))
		writePGM(t, name, crop)
		crops = append(crops, name)
	}
	out, _ := exec.Command("zbarimg", append([]string{"--nodbus", "--xml", "-q"}, crops...)...).Output()
	var res zbarXML
	if err := xml.Unmarshal(out, &res); err != nil {
		t.Fatalf("zbarimg output: %v\n%s", err, out)
	}
	got := map[string]string{}
	for _, src := range res.Sources {
		for _, sym := range src.Symbols {
			got[src.Href] = sym.Data
		}
	}
	for k, name := range crops {
		if got[name] != codes[k] {
			t.Errorf("damaged label %d decodes to %q, want %q", k, got[name], codes[k])
		}
	}
	t.Logf("%d of %d damaged codes decoded", len(got), len(crops))
}

// TestRecordingSheetTurns: a plan with more responses than fit upright
// gets landscape pages, each still with its page number; one with far
// too many is refused.
func TestRecordingSheetTurns(t *testing.T) {
	need(t, "pdftotext")
	l := rcbd(t)
	for i := 0; i < 6; i++ {
		l.Plan.Responses = append(l.Plan.Responses, design.Response{Name: fmt.Sprintf("leaf_%d_mm", i+1)})
	}
	v := design.View{Layout: l, Shown: l.View().Shown, Fingerprint: l.View().Fingerprint}
	var b bytes.Buffer
	if err := paper.Record(&b, v, paper.RecordOptions{Page: paper.A4, Created: created}); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command("pdftotext", "-bbox", writeTemp(t, "wide.pdf", b.Bytes()), "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	var doc bboxDoc
	dec := xml.NewDecoder(bytes.NewReader(out))
	dec.Strict, dec.AutoClose, dec.Entity = false, xml.HTMLAutoClose, xml.HTMLEntity
	if err := dec.Decode(&doc); err != nil {
		t.Fatal(err)
	}
	for i, pg := range doc.Pages {
		if pg.W*25.4/72 < 296 || pg.H*25.4/72 > 211 {
			t.Errorf("page %d is %.1f × %.1f mm, want A4 landscape", i+1, pg.W*25.4/72, pg.H*25.4/72)
		}
	}
	if len(doc.Pages) < 3 {
		t.Errorf("%d landscape pages for 48 units, want at least 3", len(doc.Pages))
	}
	for i := 0; i < 12; i++ {
		l.Plan.Responses = append(l.Plan.Responses, design.Response{Name: fmt.Sprintf("extra_%d", i+1)})
	}
	v.Layout = l
	err = paper.Record(&b, v, paper.RecordOptions{Page: paper.A4, Created: created})
	if ge, ok := err.(*paper.GeometryError); !ok || !strings.Contains(ge.Msg, "responses do not fit across") {
		t.Errorf("20 responses: %v", err)
	}
	// Some of them at a time fit, upright.
	b.Reset()
	if err := paper.Record(&b, v, paper.RecordOptions{Page: paper.A4, Responses: []string{"extra_3", "height_cm"}, Created: created}); err != nil {
		t.Fatal(err)
	}
	out, err = exec.Command("pdftotext", "-layout", writeTemp(t, "two.pdf", b.Bytes()), "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	if head := string(out); !strings.Contains(head, "extra_3") || !strings.Contains(head, "height_cm") || strings.Contains(head, "leaves") || strings.Index(head, "extra_3") > strings.Index(head, "height_cm") {
		t.Errorf("--responses extra_3,height_cm:\n%.600s", head)
	}
	err = paper.Record(&b, v, paper.RecordOptions{Page: paper.A4, Responses: []string{"hieght"}, Created: created})
	if ge, ok := err.(*paper.GeometryError); !ok || ge.Field != "responses" {
		t.Errorf("unknown response: %v", err)
	}
}

// TestCutMarksOutsideLabels renders a sheet with and without cut marks:
// every pixel the marks change lies outside all label boxes, and there
// are marks on every side.
func TestCutMarksOutsideLabels(t *testing.T) {
	need(t, "pdftoppm")
	v := rcbd(t).View()
	const r = 100 // dpi
	for _, name := range []string{"a4-3x7", "letter-3x10", "a4-4x10"} {
		s := preset(t, name)
		var imgs [2]*image.Gray
		for i, cut := range []bool{false, true} {
			pdf := writeTemp(t, "l.pdf", renderLabels(t, v, paper.LabelOptions{Sheet: &s, CutMarks: cut, Created: created}))
			dir := t.TempDir()
			if out, err := exec.Command("pdftoppm", "-r", strconv.Itoa(r), "-gray", "-f", "1", "-l", "1", pdf, filepath.Join(dir, "p")).CombinedOutput(); err != nil {
				t.Fatalf("pdftoppm: %v\n%s", err, out)
			}
			pages, _ := filepath.Glob(filepath.Join(dir, "p-*.pgm"))
			imgs[i] = readPGM(t, pages[0])
		}
		toMM := 25.4 / r
		var sides [4]int // top, bottom, left, right
		for y := 0; y < imgs[0].Rect.Dy(); y++ {
			for x := 0; x < imgs[0].Rect.Dx(); x++ {
				if imgs[0].GrayAt(x, y) == imgs[1].GrayAt(x, y) {
					continue
				}
				// The pixel's square, in mm.
				x0, y0, x1, y1 := float64(x)*toMM, float64(y)*toMM, float64(x+1)*toMM, float64(y+1)*toMM
				for k := 0; k < s.PerSheet(); k++ {
					b := s.Box(k)
					if x1 > b.X+0.3 && x0 < b.X+b.W-0.3 && y1 > b.Y+0.3 && y0 < b.Y+b.H-0.3 {
						t.Fatalf("%s: a cut mark at (%.1f, %.1f) mm lies inside label %d", name, x0, y0, k)
					}
				}
				switch {
				case y1 < s.Top:
					sides[0]++
				case y0 > s.Page.H-s.Top:
					sides[1]++
				case x1 < s.Left:
					sides[2]++
				default:
					sides[3]++
				}
			}
		}
		if sides[0] == 0 || sides[1] == 0 || (s.Left > 2.5 && (sides[2] == 0 || sides[3] == 0)) {
			t.Errorf("%s: cut-mark pixels top, bottom, left, right: %v", name, sides)
		}
	}
}
