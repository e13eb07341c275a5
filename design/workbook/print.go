package workbook

import (
	"fmt"
	"strings"

	"github.com/allotproject/allot/design"

	"github.com/xuri/excelize/v2"
)

// Paper sizes a workbook is set up to print on.
const (
	PaperA4     = "a4"
	PaperLetter = "letter"
)

// page is a paper size: its OOXML code (ECMA-376 Part 1, §18.3.1.64,
// paperSize: 1 Letter, 9 A4) and its printable area with the margins
// setupPrint sets: widths in column-width units (one unit is one digit of
// the default 11-point font, about 13.5 to the inch), heights in points.
type page struct {
	code                  int
	portrait, landscape   float64 // printable width, column units
	portraitH, landscapeH float64 // printable height, points
}

func pageOf(paper string) (page, error) {
	const perInch = 13.5
	mk := func(code int, w, h float64) page { // paper width and height in inches
		return page{code: code, portrait: (w - 1) * perInch, landscape: (h - 1) * perInch,
			portraitH: (h - 2.2) * 72, landscapeH: (w - 2.2) * 72}
	}
	switch strings.ToLower(paper) {
	case "", PaperA4:
		return mk(9, 8.27, 11.69), nil // 210 × 297 mm
	case PaperLetter:
		return mk(1, 8.5, 11), nil
	}
	return page{}, fmt.Errorf("paper %q: must be %s or %s", paper, PaperA4, PaperLetter)
}

// ValidPaper reports whether paper names a paper size Write knows.
func ValidPaper(paper string) bool {
	_, err := pageOf(paper)
	return err == nil
}

// setupPrint sets a sheet's page: the paper size, portrait or landscape,
// scaled to one page width (as many pages down as needed), margins, and a
// header with the plan's title and fingerprint and a footer with the sheet
// name and page numbers (&P of &N) on every page.
func setupPrint(f *excelize.File, sheet string, l design.Layout, meta Meta, pg page, landscape bool) error {
	orient := "portrait"
	if landscape {
		orient = "landscape"
	}
	one, zero, fit := 1, 0, true
	if err := f.SetSheetProps(sheet, &excelize.SheetPropsOptions{FitToPage: &fit}); err != nil {
		return err
	}
	if err := f.SetPageLayout(sheet, &excelize.PageLayoutOptions{Size: &pg.code, Orientation: &orient, FitToWidth: &one, FitToHeight: &zero}); err != nil {
		return err
	}
	side, top, hf := 0.5, 0.8, 0.3
	if err := f.SetPageMargins(sheet, &excelize.PageLayoutMarginsOptions{Left: &side, Right: &side, Top: &top, Bottom: &top, Header: &hf, Footer: &hf}); err != nil {
		return err
	}
	title := []rune(l.Plan.Title)
	if len(title) > 80 {
		title = append(title[:79], '…')
	}
	// In header text & starts a code: a literal & is written &&.
	esc := func(s string) string { return strings.ReplaceAll(s, "&", "&&") }
	fp := l.Plan.Fingerprint()
	return f.SetHeaderFooter(sheet, &excelize.HeaderFooterOptions{
		OddHeader: `&L&"-,Bold"` + esc(string(title)) + "&RPlan " + fp[:12],
		OddFooter: "&L" + esc(sheet) + " sheet&CPage &P of &N&Rallot " + esc(meta.Version),
	})
}
