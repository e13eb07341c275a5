package report

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"image"
	"image/color"
	"io"
	"path/filepath"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/atomicfile"

	xfont "golang.org/x/image/font"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Bench-map limits: a printed map has at most MaxMapPages pages (a PDF,
// or one SVG or PNG file per page), and the one-picture map for screens
// (MapFigure) draws at most maxScreenBlocks blocks.
const (
	MaxMapPages     = 200
	maxScreenBlocks = 100
	mapDPI          = 300 // PNG resolution of a bench map, for printing
)

// Paper sizes of a printed map, portrait, in millimetres.
var paperMM = map[string][2]float64{"a4": {210, 297}, "letter": {215.9, 279.4}}

// mapGeom is the arrangement of a map: page size, the grid each block is
// drawn as, cell size and fonts, and how many blocks go on a page.
type mapGeom struct {
	l            design.Layout
	w, h         vg.Length // page
	margin       vg.Length
	rows, cols   int // display grid of a block
	cellW, cellH vg.Length
	labelSize    vg.Length
	titleLines   []string
	info         string
	legendH      vg.Length
	blockH       vg.Length
	perPage      int
	pages        int
	blocks       int // blocks drawn
	tall         bool
}

var (
	mapRegular = font.Font{Typeface: "Liberation", Variant: "Sans"}
	mapBold    = font.Font{Typeface: "Liberation", Variant: "Sans", Weight: xfont.WeightBold}
)

func textStyle(f font.Font, size vg.Length, xa draw.XAlignment, ya draw.YAlignment) draw.TextStyle {
	return draw.TextStyle{Color: color.Black, Font: font.From(f, size), Handler: plot.DefaultTextHandler, XAlign: xa, YAlign: ya}
}

func textWidth(sty draw.TextStyle, s string) vg.Length {
	w, _, _ := sty.Handler.Box(s, sty.Font)
	return w
}

// wrapText breaks s into lines no wider than width in style sty.
func wrapText(sty draw.TextStyle, s string, width vg.Length) []string {
	var lines []string
	cur := ""
	for _, word := range strings.Fields(s) {
		try := strings.TrimSpace(cur + " " + word)
		if cur != "" && textWidth(sty, try) > width {
			lines = append(lines, cur)
			cur = word
			continue
		}
		cur = try
	}
	return append(lines, cur)
}

// displayGrid is how a block is drawn: its grid, or for plans without a
// grid its positions in reading order, at most perRow to a row.
func displayGrid(p design.Plan, perRow int) (rows, cols int) {
	if g := p.Grid; g != nil {
		return g.Rows, g.Cols
	}
	n := p.MaxBlockSize()
	cols = min(n, perRow)
	return (n + cols - 1) / cols, cols
}

// place returns the display row and column (1-based) of unit u.
func (g *mapGeom) place(u design.Unit) (int, int) {
	if g.l.Plan.Grid != nil {
		return u.Row, u.Col
	}
	return (u.Position-1)/g.cols + 1, (u.Position-1)%g.cols + 1
}

const (
	mm         = vg.Millimeter
	titleSize  = 16
	infoSize   = 10
	headSize   = 12
	idSize     = 10
	orderSize  = 9
	maxLabel   = 16 // the treatment label's size when it fits: readable at arm's length
	minLabel   = 8
	legendSize = 11
)

// newMapGeom arranges the map of l on paper (tall: one page as long as
// all blocks need, for screens).
func newMapGeom(l design.Layout, paper string, tall bool) (*mapGeom, error) {
	size, ok := paperMM[strings.ToLower(paper)]
	if paper == "" {
		size, ok = paperMM["a4"], true
	}
	if !ok {
		return nil, fmt.Errorf("paper %q: must be a4 or letter", paper)
	}
	p := l.Plan
	g := &mapGeom{l: l, margin: 12 * mm, tall: tall, blocks: p.Blocks}
	pw, ph := vg.Length(size[0])*mm, vg.Length(size[1])*mm
	const minCell = 28 * mm
	g.rows, g.cols = displayGrid(p, max(1, int((pw-2*g.margin)/minCell)))
	g.w, g.h = pw, ph
	if vg.Length(g.cols)*minCell > pw-2*g.margin {
		g.w, g.h = ph, pw // landscape for a wide grid
	}
	usable := g.w - 2*g.margin
	g.cellW = min(55*mm, usable/vg.Length(g.cols))
	g.cellH = max(min(g.cellW*0.55, 24*mm), 15*mm)
	if p.Order {
		g.cellH += 3 * mm
	}
	// The label's size: the largest that fits every label in a cell.
	g.labelSize = maxLabel
	for _, lab := range mapLabels(l) {
		for g.labelSize > minLabel && textWidth(textStyle(mapBold, g.labelSize, draw.XCenter, draw.YCenter), lab) > g.cellW-4*mm {
			g.labelSize--
		}
	}
	// Title: wrapped, never clipped.
	title := "Map of " + p.Title
	if p.Title == "" {
		title = "Bench map"
	}
	g.titleLines = wrapText(textStyle(mapBold, titleSize, draw.XLeft, draw.YTop), title, usable)
	if p.Blind {
		g.info = fmt.Sprintf("plan %.12s · blind codes", p.Fingerprint())
	} else {
		g.info = fmt.Sprintf("plan %.12s · seed %d", p.Fingerprint(), p.Seed)
	}
	g.legendH = g.legendHeight(usable)
	g.blockH = (headSize+8)*vg.Points(1) + vg.Length(g.rows)*g.cellH + 4*mm
	head := g.headerH()
	avail := g.h - 2*g.margin - head - g.legendH
	if !tall && g.blockH > avail {
		// A tall grid: shrink its rows to fit a page.
		g.cellH = max(10*mm, (avail-(headSize+8)-4*mm)/vg.Length(g.rows))
		g.blockH = (headSize+8)*vg.Points(1) + vg.Length(g.rows)*g.cellH + 4*mm
	}
	if tall {
		g.blocks = min(p.Blocks, maxScreenBlocks)
		g.perPage, g.pages = g.blocks, 1
		g.h = 2*g.margin + head + g.legendH + vg.Length(g.blocks)*g.blockH
		return g, nil
	}
	g.perPage = max(1, int(avail/g.blockH))
	g.pages = (p.Blocks + g.perPage - 1) / g.perPage
	return g, nil
}

func (g *mapGeom) headerH() vg.Length {
	return vg.Length(len(g.titleLines))*(titleSize+4) + (infoSize + 10)
}

// mapLabels returns the distinct labels (treatment names or codes).
func mapLabels(l design.Layout) []string {
	if l.Plan.Blind {
		return l.Codes
	}
	var out []string
	for _, t := range l.Plan.Treatments() {
		out = append(out, t.Name)
	}
	return out
}

// mapMark is how treatment t is told apart besides its name: a colour
// and a glyph shape, the pair unique for up to 64 treatments.
func mapMark(t int) (color.RGBA, draw.GlyphDrawer) {
	shapes := []draw.GlyphDrawer{draw.CircleGlyph{}, draw.SquareGlyph{}, draw.TriangleGlyph{}, draw.PyramidGlyph{}, draw.RingGlyph{}, draw.BoxGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}}
	return palette[t%len(palette)], shapes[(t+t/len(palette))%len(shapes)]
}

// marked reports whether the map tells treatments apart by colour and
// shape: never for a blind plan (colour would group the codes).
func (g *mapGeom) marked() bool {
	return !g.l.Plan.Blind && len(g.l.Plan.Treatments()) <= 64
}

func tint(c color.RGBA) color.RGBA {
	f := func(v uint8) uint8 { return uint8(255 - (255-int(v))/5) }
	return color.RGBA{f(c.R), f(c.G), f(c.B), 255}
}

func (g *mapGeom) legendItems() []string {
	if g.l.Plan.Blind {
		return []string{fmt.Sprintf("Blind codes %s: no colours or shapes, so that the map does not group them; the key is kept apart.", strings.Join(g.l.Codes, ", "))}
	}
	return mapLabels(g.l)
}

// legendHeight is the height of the legend at the foot of each page.
func (g *mapGeom) legendHeight(usable vg.Length) vg.Length {
	sty := textStyle(mapRegular, legendSize, draw.XLeft, draw.YCenter)
	if g.l.Plan.Blind {
		return vg.Length(len(wrapText(sty, g.legendItems()[0], usable)))*(legendSize+4) + 8*mm
	}
	item := g.legendItemW(usable)
	per := max(1, int(usable/item))
	rows := (len(g.legendItems()) + per - 1) / per
	return vg.Length(rows)*(legendSize+8) + 10*mm
}

func (g *mapGeom) legendItemW(usable vg.Length) vg.Length {
	sty := textStyle(mapRegular, legendSize, draw.XLeft, draw.YCenter)
	w := vg.Length(0)
	for _, s := range g.legendItems() {
		w = max(w, textWidth(sty, s))
	}
	return min(w+14*mm, usable)
}

// paintPage draws page k (0-based) of the map.
func (g *mapGeom) paintPage(c draw.Canvas, k int) {
	p := g.l.Plan
	c.FillPolygon(color.White, []vg.Point{c.Min, {X: c.Max.X, Y: c.Min.Y}, c.Max, {X: c.Min.X, Y: c.Max.Y}})
	left := c.Min.X + g.margin
	y := c.Max.Y - g.margin // top-down
	ts := textStyle(mapBold, titleSize, draw.XLeft, draw.YTop)
	for _, line := range g.titleLines {
		c.FillText(ts, vg.Point{X: left, Y: y}, line)
		y -= titleSize + 4
	}
	b0 := k*g.perPage + 1
	b1 := min(b0+g.perPage-1, g.blocks)
	info := g.info
	name := blockNameOf(p)
	if p.Design == design.RCBD {
		if b0 == b1 {
			info += fmt.Sprintf(" · %s %s", name, p.BlockLabel(b0))
		} else {
			info += fmt.Sprintf(" · %s %s–%s", design.Plural(name), p.BlockLabel(b0), p.BlockLabel(b1))
		}
	}
	if g.tall && g.blocks < p.Blocks {
		info += fmt.Sprintf(" · the first %d of %d %s (print the map for all)", g.blocks, p.Blocks, design.Plural(name))
	}
	if !g.tall {
		info += fmt.Sprintf(" · page %d of %d", k+1, g.pages)
	}
	c.FillText(textStyle(mapRegular, infoSize, draw.XLeft, draw.YTop), vg.Point{X: left, Y: y}, info)
	y -= infoSize + 10
	byBlock := map[int][]design.Unit{}
	for _, u := range g.l.Units {
		if u.Block >= b0 && u.Block <= b1 {
			byBlock[u.Block] = append(byBlock[u.Block], u)
		}
	}
	for b := b0; b <= b1; b++ {
		g.paintBlock(c, left, y, b, byBlock[b])
		y -= g.blockH
	}
	g.paintLegend(c, left, c.Min.Y+g.margin+g.legendH)
}

func blockNameOf(p design.Plan) string {
	if p.BlockName == "" {
		return "block"
	}
	return p.BlockName
}

// paintBlock draws block b with its top-left corner at (left, top).
func (g *mapGeom) paintBlock(c draw.Canvas, left, top vg.Length, b int, units []design.Unit) {
	p := g.l.Plan
	if p.Design == design.RCBD {
		name := blockNameOf(p)
		r, n := utf8.DecodeRuneInString(name)
		head := string(unicode.ToUpper(r)) + name[n:] + " " + p.BlockLabel(b)
		c.FillText(textStyle(mapBold, headSize, draw.XLeft, draw.YTop), vg.Point{X: left, Y: top}, head)
	}
	top -= headSize + 8
	border := draw.LineStyle{Color: color.Gray{Y: 0x30}, Width: vg.Points(1)}
	ids := textStyle(mapRegular, idSize, draw.XCenter, draw.YTop)
	label := textStyle(mapBold, g.labelSize, draw.XCenter, draw.YCenter)
	order := textStyle(mapRegular, orderSize, draw.XRight, draw.YBottom)
	for _, u := range units {
		r, col := g.place(u)
		x0 := left + vg.Length(col-1)*g.cellW
		y0 := top - vg.Length(r-1)*g.cellH
		x1, y1 := x0+g.cellW, y0-g.cellH
		pts := []vg.Point{{X: x0, Y: y0}, {X: x1, Y: y0}, {X: x1, Y: y1}, {X: x0, Y: y1}}
		fill := color.RGBA{0xFF, 0xFF, 0xFF, 0xFF}
		var glyph draw.GlyphDrawer
		var mark color.RGBA
		if g.marked() && u.Treatment >= 0 {
			mark, glyph = mapMark(u.Treatment)
			fill = tint(mark)
		}
		c.FillPolygon(fill, pts)
		c.StrokeLines(border, append(pts, pts[0]))
		c.FillText(ids, vg.Point{X: (x0 + x1) / 2, Y: y0 - 2*mm}, u.ID)
		c.FillText(label, vg.Point{X: (x0 + x1) / 2, Y: (y0+y1)/2 - 1.5*mm}, g.l.Label(u))
		if glyph != nil {
			c.DrawGlyphNoClip(draw.GlyphStyle{Color: mark, Radius: vg.Points(4), Shape: glyph}, vg.Point{X: x0 + 3.5*mm, Y: y0 - 3.5*mm})
		}
		if u.Order > 0 {
			c.FillText(order, vg.Point{X: x1 - 1.5*mm, Y: y1 + 1.5*mm}, fmt.Sprintf("#%d", u.Order))
		}
	}
}

// paintLegend draws the legend with its top at top.
func (g *mapGeom) paintLegend(c draw.Canvas, left, top vg.Length) {
	usable := g.w - 2*g.margin
	c.FillText(textStyle(mapBold, legendSize, draw.XLeft, draw.YTop), vg.Point{X: left, Y: top}, "Legend")
	y := top - (legendSize + 16)
	sty := textStyle(mapRegular, legendSize, draw.XLeft, draw.YCenter)
	if g.l.Plan.Blind {
		for _, line := range wrapText(sty, g.legendItems()[0], usable) {
			c.FillText(sty, vg.Point{X: left, Y: y}, line)
			y -= legendSize + 4
		}
		return
	}
	item := g.legendItemW(usable)
	per := max(1, int(usable/item))
	for i, name := range g.legendItems() {
		x := left + vg.Length(i%per)*item
		yy := y - vg.Length(i/per)*(legendSize+8)
		if g.marked() {
			mark, glyph := mapMark(i)
			sw := []vg.Point{{X: x, Y: yy + 3*mm}, {X: x + 9*mm, Y: yy + 3*mm}, {X: x + 9*mm, Y: yy - 3*mm}, {X: x, Y: yy - 3*mm}}
			c.FillPolygon(tint(mark), sw)
			c.StrokeLines(draw.LineStyle{Color: color.Gray{Y: 0x30}, Width: vg.Points(0.8)}, append(sw, sw[0]))
			c.DrawGlyphNoClip(draw.GlyphStyle{Color: mark, Radius: vg.Points(4), Shape: glyph}, vg.Point{X: x + 4.5*mm, Y: yy})
		}
		c.FillText(sty, vg.Point{X: x + 11*mm, Y: yy}, name)
	}
}

// MapFigure draws the layout as one picture for screens and reports: each
// block as its grid (or rows of positions), each place with its unit ID,
// treatment (or blind code) and measurement order, a legend, A4 wide. It
// draws at most the first 100 blocks and says so; MapPages makes the
// printable pages of every block.
func MapFigure(l design.Layout) Figure {
	g, _ := newMapGeom(l, "a4", true) // "a4" is always known
	return Figure{Name: "map", Title: "Map of " + l.Plan.Title, paint: func(c draw.Canvas) { g.paintPage(c, 0) }, dpi: mapDPI, w: g.w, h: g.h}
}

// MapPages returns the printable bench map: pages of paper ("a4" or
// "letter"), each with the title, the plan's fingerprint, the page number
// and a legend, and as many whole blocks as fit. A map needing more than
// MaxMapPages pages is refused.
func MapPages(l design.Layout, paper string) ([]Figure, error) {
	g, err := newMapGeom(l, paper, false)
	if err != nil {
		return nil, err
	}
	if g.pages > MaxMapPages {
		return nil, fmt.Errorf("the map of %d %s would take %d pages, more than the %d a map may have; the Map sheet of the workbook lists every %s", l.Plan.Blocks, design.Plural(blockNameOf(l.Plan)), g.pages, MaxMapPages, blockNameOf(l.Plan))
	}
	figs := make([]Figure, g.pages)
	for k := range figs {
		k := k
		figs[k] = Figure{Name: fmt.Sprintf("map-%d", k+1), Title: fmt.Sprintf("Map of %s, page %d of %d", l.Plan.Title, k+1, g.pages),
			paint: func(c draw.Canvas) { g.paintPage(c, k) }, dpi: mapDPI, w: g.w, h: g.h}
	}
	return figs, nil
}

// renderPages draws painted figures: several pages make one PDF; SVG and
// PNG take one figure.
func renderPages(figs []Figure, format string) ([]byte, error) {
	var b bytes.Buffer
	var err error
	switch format {
	case "pdf":
		// Each page goes in as its 300 dpi picture: the PDF back end of
		// gonum/plot encodes text in code page 1252 only (and mislabels
		// bold fonts), which would garble names in other scripts.
		c := vgpdf.New(figs[0].w, figs[0].h)
		for i, f := range figs {
			if i > 0 {
				c.NextPage()
			}
			img := vgimg.NewWith(vgimg.UseWH(f.w, f.h), vgimg.UseDPI(mapDPI))
			f.paint(draw.New(img))
			c.DrawImage(vg.Rectangle{Max: vg.Point{X: f.w, Y: f.h}}, flipped(img.Image()))
		}
		_, err = c.WriteTo(&b)
	case "svg":
		c := vgsvg.New(figs[0].w, figs[0].h)
		figs[0].paint(draw.New(c))
		_, err = c.WriteTo(&b)
	case "png":
		dpi := figs[0].dpi
		if dpi == 0 {
			dpi = vgimg.DefaultDPI
		}
		c := vgimg.NewWith(vgimg.UseWH(figs[0].w, figs[0].h), vgimg.UseDPI(dpi))
		figs[0].paint(draw.New(c))
		if _, err = (vgimg.PngCanvas{Canvas: c}).WriteTo(&b); err == nil {
			return withDPI(b.Bytes(), dpi), nil
		}
	default:
		return nil, fmt.Errorf("report: unknown figure format %q", format)
	}
	return b.Bytes(), err
}

// withDPI adds a pHYs chunk (PNG specification, 11.3.5.3) saying the
// image has dpi pixels per inch, so that it prints at its size; the chunk
// goes right after IHDR, which fills bytes 8 to 33.
func withDPI(png []byte, dpi int) []byte {
	if len(png) < 33 || string(png[12:16]) != "IHDR" {
		return png
	}
	ppm := uint32(float64(dpi)/0.0254 + 0.5)
	chunk := make([]byte, 0, 21)
	chunk = binary.BigEndian.AppendUint32(chunk, 9)
	chunk = append(chunk, "pHYs"...)
	chunk = binary.BigEndian.AppendUint32(chunk, ppm)
	chunk = binary.BigEndian.AppendUint32(chunk, ppm)
	chunk = append(chunk, 1) // unit: metre
	chunk = binary.BigEndian.AppendUint32(chunk, crc32.ChecksumIEEE(chunk[4:]))
	out := make([]byte, 0, len(png)+len(chunk))
	out = append(out, png[:33]...)
	out = append(out, chunk...)
	return append(out, png[33:]...)
}

// flipped returns img upside down: vgpdf places an image with its first
// row at the bottom of the page.
func flipped(img image.Image) image.Image {
	b := img.Bounds()
	out := image.NewRGBA(b)
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			out.Set(x, b.Max.Y-1-(y-b.Min.Y), img.At(x, y))
		}
	}
	return out
}

// WriteMap writes the printable map of l to path by its extension: .pdf
// as one file of all pages; .svg or .png as path itself when the map has
// one page, and otherwise one file per page, NAME-1.png, NAME-2.png, …
// It returns the files written; none is replaced without force.
func WriteMap(path string, l design.Layout, paper string, force bool) ([]string, error) {
	format := strings.TrimPrefix(strings.ToLower(filepath.Ext(path)), ".")
	figs, err := MapPages(l, paper)
	if err != nil {
		return nil, err
	}
	write := func(p string, b []byte) error {
		return atomicfile.Write(p, force, func(w io.Writer) error { _, err := w.Write(b); return err })
	}
	if format == "pdf" || len(figs) == 1 {
		b, err := renderPages(figs, format)
		if err != nil {
			return nil, err
		}
		return []string{path}, write(path, b)
	}
	base := strings.TrimSuffix(path, filepath.Ext(path))
	var written []string
	for i, f := range figs {
		b, err := renderPages([]Figure{f}, format)
		if err != nil {
			return written, err
		}
		p := fmt.Sprintf("%s-%d%s", base, i+1, filepath.Ext(path))
		if err := write(p, b); err != nil {
			return written, err
		}
		written = append(written, p)
	}
	return written, nil
}
