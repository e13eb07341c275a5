package paper

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"time"

	"codeberg.org/go-pdf/fpdf"

	"github.com/allotproject/allot/design"
)

// RecordOptions says how a recording sheet is printed.
type RecordOptions struct {
	Page Page
	// ByMeasurement lists units in the planned measurement order within
	// each block; otherwise by block and position.
	ByMeasurement bool
	// Responses names the responses that get boxes, in the order given;
	// nil means all the plan's (one sheet per measurement round, say).
	Responses []string
	// Created fixes the document's dates.
	Created time.Time
}

// Recording-sheet dimensions, mm.
const (
	sheetMargin  = 12
	rowHeight    = 8
	headRowH     = 11
	responseW    = 26
	minResponseW = 16
	minNotesW    = 30
	headerH      = 27 // title block above the table
	footerH      = 8
)

// column is one column of the recording sheet.
type column struct {
	head  string
	sub   string // second header line (a response's range)
	w     float64
	cells func(r sheetRow) string
	box   bool // an empty box to write in
}

// sheetRow is one printed row: a unit, or one subsample of it.
type sheetRow struct {
	n     int // 1-based rank in the sheet
	unit  int // index into Layout.Units
	sub   int // 1-based subsample, 0 without
	first bool
	block bool // first row of a new block
}

// Record writes a recording sheet of view v as a PDF document to w: one row
// per unit (or per subsample) in the order asked, with empty boxes for each
// response and room for notes; every page carries the plan title, its
// fingerprint and the page number.
func Record(w io.Writer, v design.View, o RecordOptions) error {
	p := v.Layout.Plan
	seq, err := v.Sequence(o.ByMeasurement)
	if err != nil {
		return &GeometryError{Field: "order", Msg: err.Error() + "; list the units in unit order"}
	}
	resp, err := pickResponses(p, o.Responses)
	if err != nil {
		return err
	}
	d := newDoc(o.Created, "Recording sheet: "+p.Title)
	cols, landscape, err := sheetColumns(d, v, o.Page, resp)
	if err != nil {
		return err
	}
	pw, ph := o.Page.W, o.Page.H
	orient := "P"
	if landscape {
		pw, ph, orient = ph, pw, "L"
	}
	// Rows, grouped by unit so that a unit's subsamples share a page.
	var groups [][]sheetRow
	n, prevBlock := 0, -1
	subs := max(p.Subsamples, 1)
	for _, i := range seq {
		u := v.Layout.Units[i]
		var g []sheetRow
		for k := 1; k <= subs; k++ {
			n++
			r := sheetRow{n: n, unit: i, first: k == 1, block: k == 1 && u.Block != prevBlock && prevBlock != -1}
			if p.Subsamples > 1 {
				r.sub = k
			}
			g = append(g, r)
		}
		prevBlock = u.Block
		groups = append(groups, g)
	}
	perPage := int((ph - 2*sheetMargin - headerH - headRowH - footerH) / rowHeight)
	if perPage < subs {
		return geomErr("page", "a page holds %d rows, fewer than the %d subsamples of a unit", perPage, subs)
	}
	var pages [][]sheetRow
	var cur []sheetRow
	for _, g := range groups {
		if len(cur)+len(g) > perPage {
			pages = append(pages, cur)
			cur = nil
		}
		cur = append(cur, g...)
	}
	if len(cur) > 0 || len(pages) == 0 {
		pages = append(pages, cur)
	}
	for pi, rows := range pages {
		d.AddPageFormat(orient, fpdf.SizeType{Wd: o.Page.W, Ht: o.Page.H})
		sheetHeader(d, v, pw, len(seq), o.ByMeasurement)
		y := float64(sheetMargin + headerH)
		sheetTableHead(d, cols, y)
		y += headRowH
		for _, r := range rows {
			sheetTableRow(d, cols, r, y)
			y += rowHeight
		}
		d.SetFont(family, "", 7)
		d.SetTextColor(60, 60, 60)
		foot := fmt.Sprintf("allot sheet · %s · plan %s", truncRunes(p.Title, 80), v.Short())
		d.Text(sheetMargin, ph-sheetMargin+2, foot)
		pn := fmt.Sprintf("page %d of %d", pi+1, len(pages))
		d.SetFont(family, "B", 8)
		d.Text(pw-sheetMargin-d.GetStringWidth(pn), ph-sheetMargin+2, pn)
		d.SetTextColor(0, 0, 0)
	}
	if err := d.Output(w); err != nil {
		return fmt.Errorf("paper: writing the recording sheet: %w", err)
	}
	return nil
}

func truncRunes(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

// sheetColumns lays out the columns for page, turning it to landscape when
// the responses do not fit upright.
func sheetColumns(d *fpdf.Fpdf, v design.View, page Page, resp []design.Response) ([]column, bool, error) {
	p := v.Layout.Plan
	us := v.Layout.Units
	width := func(style string, size float64, texts ...string) float64 {
		d.SetFont(family, style, size)
		m := 0.0
		for _, t := range texts {
			m = max(m, d.GetStringWidth(t))
		}
		return m + 3
	}
	ids := make([]string, len(us))
	for i, u := range us {
		ids[i] = u.ID
	}
	cols := []column{{head: "#", w: max(9, width("", 9, strconv.Itoa(len(us)*max(p.Subsamples, 1)))), cells: func(r sheetRow) string { return strconv.Itoa(r.n) }}}
	cols = append(cols, column{head: "Unit", w: min(40, max(14, width("B", 10, ids...))), cells: func(r sheetRow) string {
		if !r.first {
			return ""
		}
		return us[r.unit].ID
	}})
	if p.Design == design.RCBD {
		head := p.BlockName
		if head == "" {
			head = "block"
		}
		head = strings.ToUpper(head[:1]) + head[1:]
		labels := []string{head}
		for b := 1; b <= p.Blocks; b++ {
			labels = append(labels, p.BlockLabel(b))
		}
		cols = append(cols, column{head: head, w: min(30, max(12, width("B", 8, labels...))), cells: func(r sheetRow) string {
			if !r.first {
				return ""
			}
			return p.BlockLabel(us[r.unit].Block)
		}})
	}
	cols = append(cols, column{head: "Position", w: width("B", 8, "Position"), cells: func(r sheetRow) string {
		if !r.first {
			return ""
		}
		return strconv.Itoa(us[r.unit].Position)
	}})
	trHead := "Treatment"
	if p.Blind {
		trHead = "Code"
	}
	cols = append(cols, column{head: trHead, w: min(45, max(14, width("", 9, append([]string{trHead}, v.Shown...)...))), cells: func(r sheetRow) string {
		if !r.first {
			return ""
		}
		return v.Shown[r.unit]
	}})
	if p.Subsamples > 1 {
		cols = append(cols, column{head: "Subsample", w: width("B", 8, "Subsample"), cells: func(r sheetRow) string { return strconv.Itoa(r.sub) }})
	}
	fixed := 0.0
	for _, c := range cols {
		fixed += c.w
	}
	nr := len(resp)
	fits := func(pageW, rw float64) bool { return fixed+float64(nr)*rw+minNotesW <= pageW-2*sheetMargin }
	landscape := false
	rw := float64(responseW)
	switch {
	case fits(page.W, rw):
	case fits(page.H, rw):
		landscape = true
	default:
		landscape = true
		rw = (page.H - 2*sheetMargin - fixed - minNotesW) / float64(max(nr, 1))
		if rw < minResponseW {
			return nil, false, geomErr("page", "%d responses do not fit across a %s page even turned sideways (%s mm each, at least %s mm needed); print a sheet for some of them at a time (--responses)",
				nr, page.Name, mm(rw), mm(minResponseW))
		}
	}
	for _, r := range resp {
		sub := ""
		if r.Min != nil || r.Max != nil {
			lo, hi := "", ""
			if r.Min != nil {
				lo = strconv.FormatFloat(*r.Min, 'g', -1, 64)
			}
			if r.Max != nil {
				hi = strconv.FormatFloat(*r.Max, 'g', -1, 64)
			}
			sub = lo + " – " + hi
		}
		cols = append(cols, column{head: r.Name, sub: sub, w: rw, box: true})
	}
	pageW := page.W
	if landscape {
		pageW = page.H
	}
	used := 0.0
	for _, c := range cols {
		used += c.w
	}
	cols = append(cols, column{head: "Notes", w: pageW - 2*sheetMargin - used, box: true})
	return cols, landscape, nil
}

// sheetHeader prints the title block at the top of a page.
func sheetHeader(d *fpdf.Fpdf, v design.View, pw float64, units int, byMeasurement bool) {
	p := v.Layout.Plan
	x, w := float64(sheetMargin), pw-2*sheetMargin
	title, size := fitText(d, "B", p.Title, 13, 8, w)
	d.SetFont(family, "B", size)
	d.Text(x, sheetMargin+4.5, title)
	what := fmt.Sprintf("Recording sheet: %d units", units)
	if p.Subsamples > 1 {
		what += fmt.Sprintf(", %d subsamples each", p.Subsamples)
	}
	if p.Design == design.RCBD {
		what += fmt.Sprintf(" in %d %s", p.Blocks, design.Plural(p.BlockName))
	}
	if byMeasurement {
		what += "; measure in the order listed"
	} else {
		what += "; listed by position"
	}
	line, size := fitText(d, "", what, 9, 6, w)
	d.SetFont(family, "", size)
	d.Text(x, sheetMargin+10, line)
	fp, size := fitText(d, "", "plan fingerprint "+v.Fingerprint, 8, 5, w)
	d.SetFont(family, "", size)
	d.Text(x, sheetMargin+14.5, fp)
	if p.Blind {
		d.SetFont(family, "B", 8)
		d.Text(x, sheetMargin+18.5, "Blind plan: codes only. Do not look up which treatment a code stands for.")
	}
	d.SetFont(family, "", 9)
	d.Text(x, sheetMargin+24, "Date: ______________    Recorded by: ________________________    Started at: ________")
}

// sheetTableHead prints the column headings at y.
func sheetTableHead(d *fpdf.Fpdf, cols []column, y float64) {
	x := float64(sheetMargin)
	d.SetFillColor(225, 232, 240)
	d.SetDrawColor(0, 0, 0)
	d.SetLineWidth(0.3)
	for _, c := range cols {
		d.Rect(x, y, c.w, headRowH, "FD")
		head, size := fitText(d, "B", c.head, 8, 5, c.w-2)
		d.SetFont(family, "B", size)
		if c.sub == "" {
			d.Text(x+1, y+headRowH/2+1.2, head)
		} else {
			d.Text(x+1, y+4.3, head)
			sub, size := fitText(d, "", c.sub, 7, 5, c.w-2)
			d.SetFont(family, "", size)
			d.Text(x+1, y+8.6, sub)
		}
		x += c.w
	}
}

// sheetTableRow prints one row at y: the unit's cells and the empty boxes.
func sheetTableRow(d *fpdf.Fpdf, cols []column, r sheetRow, y float64) {
	x := float64(sheetMargin)
	d.SetDrawColor(0, 0, 0)
	for _, c := range cols {
		d.SetLineWidth(0.2)
		d.Rect(x, y, c.w, rowHeight, "D")
		if c.box {
			// A lighter inner box marks where to write.
			d.SetDrawColor(150, 150, 150)
			d.SetLineWidth(0.15)
			d.Rect(x+1, y+1, c.w-2, rowHeight-2, "D")
			d.SetDrawColor(0, 0, 0)
		} else if c.cells != nil {
			style, size := "", 9.0
			if c.head == "Unit" {
				style, size = "B", 10
			}
			t, got := fitText(d, style, c.cells(r), size, 5, c.w-2)
			d.SetFont(family, style, got)
			d.Text(x+1, y+rowHeight/2+1.3, t)
		}
		x += c.w
	}
	if r.block {
		d.SetLineWidth(0.7)
		d.Line(sheetMargin, y, x, y)
	}
}

// pickResponses returns the plan's responses named in names (all for nil).
func pickResponses(p design.Plan, names []string) ([]design.Response, error) {
	if names == nil {
		return p.Responses, nil
	}
	var out []design.Response
	var all []string
	for _, r := range p.Responses {
		all = append(all, r.Name)
	}
	seen := map[string]bool{}
	for _, n := range names {
		found := false
		for _, r := range p.Responses {
			if r.Name == n && !seen[n] {
				out = append(out, r)
				seen[n], found = true, true
			}
		}
		if !found {
			return nil, geomErr("responses", "response %q is not in the plan, or named twice (responses: %s)", n, strings.Join(all, ", "))
		}
	}
	return out, nil
}
