package paper

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"

	"codeberg.org/go-pdf/fpdf"

	"github.com/allotproject/allot/design"
)

// Page is a paper size in millimetres, portrait.
type Page struct {
	Name string
	W, H float64
}

// The paper sizes labels and sheets are printed on: ISO 216 A4 and US
// Letter (8.5 × 11 in).
var (
	A4     = Page{Name: "A4", W: 210, H: 297}
	Letter = Page{Name: "Letter", W: 215.9, H: 279.4}
)

// PageNamed returns the page called name ("a4" or "letter", any case).
func PageNamed(name string) (Page, bool) {
	switch name {
	case "a4", "A4":
		return A4, true
	case "letter", "Letter", "LETTER":
		return Letter, true
	}
	return Page{}, false
}

// Sheet is a sheet of labels: Cols × Rows labels of W × H on Page, the top
// left label's corner at (Left, Top), columns GapH and rows GapV apart.
type Sheet struct {
	Page       Page
	Cols, Rows int
	W, H       float64
	Top, Left  float64
	GapH, GapV float64
}

// Box is a rectangle on the page: its top left corner and size, in mm.
type Box struct{ X, Y, W, H float64 }

// PerSheet returns the number of labels on one sheet.
func (s Sheet) PerSheet() int { return s.Cols * s.Rows }

// Box returns label k (0-based, row by row from the top left) of a sheet.
func (s Sheet) Box(k int) Box {
	r, c := k/s.Cols, k%s.Cols
	return Box{X: s.Left + float64(c)*(s.W+s.GapH), Y: s.Top + float64(r)*(s.H+s.GapV), W: s.W, H: s.H}
}

// GeometryError is a label geometry that cannot be printed. Field names
// what is wrong: "sheet", "label", "margins", "gap", "roll" or "start".
type GeometryError struct {
	Field string
	Msg   string
}

func (e *GeometryError) Error() string { return e.Msg }

func geomErr(field, format string, args ...any) error {
	return &GeometryError{Field: field, Msg: fmt.Sprintf(format, args...)}
}

// mm formats a length for messages.
func mm(x float64) string { return strconv.FormatFloat(math.Round(x*100)/100, 'f', -1, 64) }

// Validate checks that the labels lie on the page.
func (s Sheet) Validate() error {
	switch {
	case s.Cols < 1 || s.Rows < 1:
		return geomErr("sheet", "a sheet needs at least 1 column and 1 row of labels, got %dx%d", s.Cols, s.Rows)
	case s.W <= 0 || s.H <= 0:
		return geomErr("label", "labels must have a positive width and height, got %sx%s mm", mm(s.W), mm(s.H))
	case s.Top < 0 || s.Left < 0:
		return geomErr("margins", "margins cannot be negative, got %s,%s mm", mm(s.Top), mm(s.Left))
	case s.GapH < 0 || s.GapV < 0:
		return geomErr("gap", "gaps cannot be negative, got %s,%s mm", mm(s.GapH), mm(s.GapV))
	}
	const tol = 0.005 // mm: rounding in a sheet's stated dimensions
	if right := s.Left + float64(s.Cols)*s.W + float64(s.Cols-1)*s.GapH; right > s.Page.W+tol {
		return geomErr("label", "%d labels of %s mm across, %s mm apart, from %s mm end at %s mm, beyond the %s page's width of %s mm; check the label width, gap and left margin",
			s.Cols, mm(s.W), mm(s.GapH), mm(s.Left), mm(right), s.Page.Name, mm(s.Page.W))
	}
	if bottom := s.Top + float64(s.Rows)*s.H + float64(s.Rows-1)*s.GapV; bottom > s.Page.H+tol {
		return geomErr("label", "%d rows of %s mm labels, %s mm apart, from %s mm end at %s mm, beyond the %s page's height of %s mm; check the label height, gap and top margin",
			s.Rows, mm(s.H), mm(s.GapV), mm(s.Top), mm(bottom), s.Page.Name, mm(s.Page.H))
	}
	return nil
}

// Centred returns a sheet of cols × rows labels of w × h on page, gaps
// apart, centred on the page.
func Centred(page Page, cols, rows int, w, h, gapH, gapV float64) Sheet {
	s := Sheet{Page: page, Cols: cols, Rows: rows, W: w, H: h, GapH: gapH, GapV: gapV}
	s.Left = (page.W - float64(cols)*w - float64(cols-1)*gapH) / 2
	s.Top = (page.H - float64(rows)*h - float64(rows-1)*gapV) / 2
	return s
}

// Preset is a named, common label-sheet geometry.
type Preset struct {
	Name  string
	Sheet Sheet
}

// Presets returns the named sheet geometries, each a grid of labels
// centred on the page; the name says the paper and the grid, the sheet the
// label size and gaps.
func Presets() []Preset {
	return []Preset{
		{"a4-2x7", Centred(A4, 2, 7, 99.1, 38.1, 2.5, 0)},
		{"a4-3x7", Centred(A4, 3, 7, 63.5, 38.1, 2.5, 0)},
		{"a4-3x8", Centred(A4, 3, 8, 63.5, 33.9, 2.5, 0)},
		{"a4-4x10", Centred(A4, 4, 10, 48.5, 25.4, 0, 0)},
		{"a4-5x13", Centred(A4, 5, 13, 38.1, 21.2, 2.5, 0)},
		{"letter-2x5", Centred(Letter, 2, 5, 101.6, 50.8, 4.7625, 0)},
		{"letter-3x10", Centred(Letter, 3, 10, 66.675, 25.4, 3.175, 0)},
	}
}

// PresetNamed returns the preset called name.
func PresetNamed(name string) (Sheet, bool) {
	for _, p := range Presets() {
		if p.Name == name {
			return p.Sheet, true
		}
	}
	return Sheet{}, false
}

// Roll is a roll of single labels of W × H mm; each is printed as a page of
// that size.
type Roll struct{ W, H float64 }

// LabelOptions says how labels are printed.
type LabelOptions struct {
	// Sheet is the label sheet; nil prints on Roll.
	Sheet *Sheet
	Roll  *Roll
	// Start skips the first Start labels of the first sheet (a partly used
	// sheet).
	Start int
	// CutMarks draws short marks in the page margins on the lines between
	// labels, for cutting plain paper.
	CutMarks bool
	// Subsamples prints one label per subsample instead of one per unit.
	Subsamples bool
	// ByMeasurement orders labels by the planned measurement order within
	// each block; otherwise by block and position.
	ByMeasurement bool
	// Created fixes the document's dates.
	Created time.Time
}

// Label is the content of one label.
type Label struct {
	UnitID    string
	Place     string // block and position, and the measurement rank, joined by " · "
	Treatment string // the treatment, or "code K3" for a blind plan
	Title     string
	Plan      string // "plan <fingerprint12>"
	Code      string // the text of the QR code
}

// LabelsOf returns the labels of view v in the order asked.
func LabelsOf(v design.View, subsamples, byMeasurement bool) ([]Label, error) {
	p := v.Layout.Plan
	if subsamples && p.Subsamples < 2 {
		return nil, geomErr("subsamples", "the plan records one measurement per unit, not subsamples; print one label per unit")
	}
	seq, err := v.Sequence(byMeasurement)
	if err != nil {
		return nil, &GeometryError{Field: "order", Msg: err.Error() + "; print in unit order"}
	}
	var out []Label
	subs := 1
	if subsamples {
		subs = p.Subsamples
	}
	for _, i := range seq {
		u := v.Layout.Units[i]
		place := "position " + strconv.Itoa(u.Position)
		if p.Design == design.RCBD {
			place = p.BlockName + " " + p.BlockLabel(u.Block) + sep + place
		}
		if p.Grid != nil && u.Row > 0 {
			place += fmt.Sprintf("%srow %d, col %d", sep, u.Row, u.Col)
		}
		if u.Order > 0 {
			place += sep + "measure " + ordinal(u.Order)
		}
		tr := v.Shown[i]
		if p.Blind {
			tr = "code " + tr
		}
		for k := 1; k <= subs; k++ {
			l := Label{UnitID: u.ID, Place: place, Treatment: tr, Title: p.Title, Plan: "plan " + v.Short(), Code: design.UnitCode(v.Fingerprint, u.ID, 0)}
			if subsamples {
				l.UnitID = u.ID + "/" + strconv.Itoa(k)
				l.Place = place + sep + "subsample " + strconv.Itoa(k) + " of " + strconv.Itoa(subs)
				l.Code = design.UnitCode(v.Fingerprint, u.ID, k)
			}
			out = append(out, l)
		}
	}
	return out, nil
}

// sep joins the phrases of a label's place line; a long line is broken at
// one of them.
const sep = " · "

func ordinal(n int) string {
	suf := "th"
	switch {
	case n%100 >= 11 && n%100 <= 13:
	case n%10 == 1:
		suf = "st"
	case n%10 == 2:
		suf = "nd"
	case n%10 == 3:
		suf = "rd"
	}
	return strconv.Itoa(n) + suf
}

// Labels writes the labels of view v as a PDF document to w.
func Labels(w io.Writer, v design.View, o LabelOptions) error {
	labels, err := LabelsOf(v, o.Subsamples, o.ByMeasurement)
	if err != nil {
		return err
	}
	var boxes []Box
	var page Page
	switch {
	case o.Sheet != nil:
		if err := o.Sheet.Validate(); err != nil {
			return err
		}
		if o.Start < 0 || o.Start >= o.Sheet.PerSheet() {
			return geomErr("start", "must be from 0 to %d, the labels on a sheet less one", o.Sheet.PerSheet()-1)
		}
		page = o.Sheet.Page
		for k := 0; k < o.Sheet.PerSheet(); k++ {
			boxes = append(boxes, o.Sheet.Box(k))
		}
	case o.Roll != nil:
		if o.Roll.W <= 0 || o.Roll.H <= 0 {
			return geomErr("roll", "roll labels must have a positive width and height, got %sx%s mm", mm(o.Roll.W), mm(o.Roll.H))
		}
		if o.Start != 0 {
			return geomErr("start", "skips the used labels of a partly used sheet; a roll has none to skip")
		}
		if o.CutMarks {
			return geomErr("roll", "cut marks are for sheets; roll labels are cut already")
		}
		page = Page{Name: "roll label", W: o.Roll.W, H: o.Roll.H}
		boxes = []Box{{W: o.Roll.W, H: o.Roll.H}}
	default:
		panic("paper: Labels without a sheet or a roll")
	}
	d := newDoc(o.Created, "Labels: "+v.Layout.Plan.Title)
	// One size for the unit IDs of the whole document: the largest at which
	// the longest fits.
	idSize := 0.0
	if len(labels) > 0 {
		sym, err := encode(labels[0].Code)
		if err != nil {
			return err
		}
		ll, err := layoutLabel(boxes[0], sym, labels[0].Code)
		if err != nil {
			return err
		}
		idSize = baseSize(ll) * idWeight
		d.SetFont(family, "B", idSize)
		for _, l := range labels {
			if w := d.GetStringWidth(l.UnitID); w > ll.Text.W {
				idSize = min(idSize, idSize*ll.Text.W/w)
				d.SetFont(family, "B", idSize)
			}
		}
		if idSize < minIDSize {
			return geomErr("label", "the unit IDs do not fit beside the code on labels %s mm wide even in %s pt type; use wider labels", mm(boxes[0].W), mm(minIDSize))
		}
	}
	slot := o.Start
	for i, l := range labels {
		if i == 0 || slot == len(boxes) {
			if i > 0 {
				slot = 0
			}
			d.AddPageFormat("P", fpdf.SizeType{Wd: page.W, Ht: page.H})
			if o.CutMarks {
				cutMarks(d, *o.Sheet)
			}
		}
		if err := drawLabel(d, boxes[slot], l, idSize); err != nil {
			return err
		}
		slot++
	}
	if len(labels) == 0 {
		d.AddPageFormat("P", fpdf.SizeType{Wd: page.W, Ht: page.H})
	}
	if err := d.Output(w); err != nil {
		return fmt.Errorf("paper: writing the labels: %w", err)
	}
	return nil
}

// minTextW is the least width beside the code for the text, in mm.
const minTextW = 15

// labelPad is the blank edge kept inside a label for the printer's
// registration, in mm.
const labelPad = 1.0

// LabelLayout is where a label's parts go inside its box.
type LabelLayout struct {
	QR     Box // the symbol with its quiet zone
	Module float64
	Text   Box
}

// layoutLabel places the code and the text inside box b, or says why they
// do not fit.
func layoutLabel(b Box, sym symbol, code string) (LabelLayout, error) {
	side := min(b.H-2*labelPad, b.W*0.45)
	m := side / float64(sym.modules())
	if m < MinModule {
		need := float64(sym.modules())*MinModule + 2*labelPad
		return LabelLayout{}, geomErr("label", "labels of %sx%s mm are too small for the code %q: its %d modules with the quiet zone need a square of %s mm (modules of %s mm); use labels at least %s mm high and %s mm wide",
			mm(b.W), mm(b.H), code, sym.modules(), mm(need-2*labelPad), mm(MinModule), mm(need), mm(need/0.45))
	}
	// The symbol sits at the left edge; its own quiet zone separates it
	// from the text.
	qr := Box{X: b.X + labelPad, Y: b.Y + (b.H-side)/2, W: side, H: side}
	text := Box{X: qr.X + side, Y: b.Y + labelPad, W: b.X + b.W - labelPad - (qr.X + side), H: b.H - 2*labelPad}
	if text.W < minTextW {
		return LabelLayout{}, geomErr("label", "labels of %sx%s mm leave %s mm beside the code for the unit ID and its details; use labels at least %s mm wide",
			mm(b.W), mm(b.H), mm(text.W), mm(b.W+minTextW-text.W))
	}
	return LabelLayout{QR: qr, Module: m, Text: text}, nil
}

// Label text: the unit ID's size relative to the other lines, the line
// spacing, and the smallest unit ID printed (pt).
const (
	idWeight  = 2.4
	leading   = 1.18
	minIDSize = 4.5
)

// lineWeights are the sizes of the lines below the unit ID (place,
// treatment, title, plan) relative to the base size.
var lineWeights = [4]float64{1, 1.15, 0.9, 0.9}

// baseSize returns the base type size (pt) that fills the text box's
// height with the five lines, at most 9 pt.
func baseSize(ll LabelLayout) float64 {
	total := idWeight
	for _, w := range lineWeights {
		total += w
	}
	return min(9, ll.Text.H/(total*leading*ptMM))
}

// drawLabel draws one label in box b, its unit ID in idSize pt.
func drawLabel(d *fpdf.Fpdf, b Box, l Label, idSize float64) error {
	sym, err := encode(l.Code)
	if err != nil {
		return err
	}
	ll, err := layoutLabel(b, sym, l.Code)
	if err != nil {
		return err
	}
	sym.draw(d, ll.QR.X, ll.QR.Y, ll.QR.W)
	// The unit ID large, then place, treatment, title and plan. The unit
	// ID's line is the same on every label; a place too long for its line
	// is broken in two, and the lines below share what is left.
	type line struct {
		text   string
		style  string
		weight float64
	}
	base := baseSize(ll)
	idH := base * idWeight * leading * ptMM
	rest := []line{{l.Place, "", lineWeights[0]}, {l.Treatment, "B", lineWeights[1]}, {l.Title, "", lineWeights[2]}, {l.Plan, "", lineWeights[3]}}
	d.SetFont(family, "", base*lineWeights[0])
	if d.GetStringWidth(l.Place) > ll.Text.W/0.8 {
		// Wrap at the phrases, into at most three lines of 0.9 the size.
		d.SetFont(family, "", base*0.9)
		var wrapped []line
		cur := ""
		for _, ph := range strings.Split(l.Place, sep) {
			switch {
			case cur == "":
				cur = ph
			case d.GetStringWidth(cur+sep+ph) <= ll.Text.W || len(wrapped) == 2:
				cur += sep + ph
			default:
				wrapped = append(wrapped, line{cur, "", 0.9})
				cur = ph
			}
		}
		wrapped = append(wrapped, line{cur, "", 0.9})
		rest = append(wrapped, rest[1:]...)
	}
	total := 0.0
	for _, ln := range rest {
		total += ln.weight
	}
	small := min(base, (ll.Text.H-idH)/(total*leading*ptMM))
	d.SetTextColor(0, 0, 0)
	// Baseline: the line's box less half the extra leading and the
	// descent (about 0.21 em).
	baseline := func(top, h, size float64) float64 { return top + h - (leading-1)/2*size*ptMM - 0.21*size*ptMM }
	d.SetFont(family, "B", idSize)
	d.Text(ll.Text.X, baseline(ll.Text.Y, idH, base*idWeight)+0.21*(base*idWeight-idSize)*ptMM, l.UnitID)
	y := ll.Text.Y + idH
	for _, ln := range rest {
		size := small * ln.weight
		text, got := fitText(d, ln.style, ln.text, size, min(size, 4), ll.Text.W)
		h := size * leading * ptMM
		d.SetFont(family, ln.style, got)
		d.Text(ll.Text.X, baseline(y, h, size)+0.21*(size-got)*ptMM, text)
		y += h
	}
	return nil
}

// cutMarks draws marks in the page margins where the label edges meet
// them, each 1 mm clear of the labels and at most 5 mm long.
func cutMarks(d *fpdf.Fpdf, s Sheet) {
	d.SetDrawColor(0, 0, 0)
	d.SetLineWidth(0.15)
	right := s.Left + float64(s.Cols)*s.W + float64(s.Cols-1)*s.GapH
	bottom := s.Top + float64(s.Rows)*s.H + float64(s.Rows-1)*s.GapV
	mark := func(space float64) float64 { return min(5, space-1.5) }
	var xs, ys []float64
	for c := 0; c < s.Cols; c++ {
		x := s.Left + float64(c)*(s.W+s.GapH)
		xs = append(xs, x, x+s.W)
	}
	for r := 0; r < s.Rows; r++ {
		y := s.Top + float64(r)*(s.H+s.GapV)
		ys = append(ys, y, y+s.H)
	}
	if l := mark(s.Top); l >= 1 {
		for _, x := range xs {
			d.Line(x, s.Top-1-l, x, s.Top-1)
		}
	}
	if l := mark(s.Page.H - bottom); l >= 1 {
		for _, x := range xs {
			d.Line(x, bottom+1, x, bottom+1+l)
		}
	}
	if l := mark(s.Left); l >= 1 {
		for _, y := range ys {
			d.Line(s.Left-1-l, y, s.Left-1, y)
		}
	}
	if l := mark(s.Page.W - right); l >= 1 {
		for _, y := range ys {
			d.Line(right+1, y, right+1+l, y)
		}
	}
}
