// Package paper renders what is printed for the people who handle the
// units: labels with a 2-D code for every pot, plot or cage card, and
// recording sheets for the person walking the benches. Both are PDF
// (ISO 32000) documents written with codeberg.org/go-pdf/fpdf, with the
// Liberation Sans TrueType font embedded (a subset, Unicode text), so they
// print the same on any printer and need no fonts on the printing machine.
//
// # Codes
//
// Each label carries a QR code (ISO/IEC 18004) of the unit code text,
// design.UnitCode: allot:<fingerprint12>:<unit ID>, with "/<subsample>"
// appended on subsample labels. The text is printable ASCII (the unit ID
// percent-encoded where it is not), so keyboard-emulating scanners pass it
// on unchanged and no reader has to guess a character set. It is encoded
// in byte mode at error-correction level H, which restores up to about 30%
// of the codewords: labels on pots and cage cards get wet, muddy and
// scratched. The larger symbol this costs still fits small labels: version
// 3 (29 × 29 modules, 24 bytes at level H) holds the code of a default
// unit ID such as 101, versions 4 and 5 (33 and 37 modules) IDs of up to
// about 20 characters; on the smallest preset (38.1 × 21.2 mm) a version-3
// module is 0.46 mm. Every dark module is drawn as a filled vector
// rectangle (a run of modules in a row as one rectangle, so that no
// hairline seams appear between them), not as a bitmap, and the symbol
// keeps the quiet zone of 4 modules on every side that ISO/IEC 18004
// requires. A label too small for modules of MinModule mm is refused.
//
// The symbols are built with github.com/boombuler/barcode/qr; this package
// only draws the module grid it returns.
//
// # Geometry
//
// All lengths are millimetres, measured from the top left corner of the
// page. A sheet of labels is a grid of Cols × Rows labels of W × H, the
// first at (Left, Top), neighbours Gap apart; a roll prints one label per
// page of the label's size.
package paper

import (
	"fmt"
	"image/color"
	"time"

	"codeberg.org/go-fonts/liberation/liberationsansbold"
	"codeberg.org/go-fonts/liberation/liberationsansregular"
	"codeberg.org/go-pdf/fpdf"
	"github.com/boombuler/barcode/qr"
)

// QuietZone is the light margin around a QR symbol, in modules (ISO/IEC
// 18004 asks for at least 4).
const QuietZone = 4

// MinModule is the smallest QR module printed, in millimetres: below about
// a third of a millimetre phone cameras and common scanners at arm's
// length stop reading a symbol reliably (common practice, not a standard).
const MinModule = 0.33

// ptMM is one typographic point in millimetres.
const ptMM = 25.4 / 72

// family is the embedded font's name in the document.
const family = "LiberationSans"

// newDoc returns a PDF document in millimetres with the fonts embedded and
// the dates fixed to created (so that the same input gives the same bytes).
func newDoc(created time.Time, title string) *fpdf.Fpdf {
	d := fpdf.NewCustom(&fpdf.InitType{UnitStr: "mm", Size: fpdf.SizeType{Wd: 210, Ht: 297}})
	d.SetCompression(true)
	d.SetCatalogSort(true)
	d.SetCreationDate(created)
	d.SetModificationDate(created)
	d.SetTitle(title, true)
	d.SetCreator("allot", true)
	d.SetAutoPageBreak(false, 0)
	d.SetMargins(0, 0, 0)
	d.AddUTF8FontFromBytes(family, "", liberationsansregular.TTF)
	d.AddUTF8FontFromBytes(family, "B", liberationsansbold.TTF)
	return d
}

// symbol is a QR code's module grid, without the quiet zone.
type symbol struct {
	n    int
	dark [][]bool
}

// encode builds the QR symbol of text at error-correction level H.
func encode(text string) (symbol, error) {
	bc, err := qr.Encode(text, qr.H, qr.Unicode)
	if err != nil {
		return symbol{}, fmt.Errorf("paper: QR code of %q: %w", text, err)
	}
	b := bc.Bounds()
	n := b.Dx()
	s := symbol{n: n, dark: make([][]bool, n)}
	for y := 0; y < n; y++ {
		s.dark[y] = make([]bool, n)
		for x := 0; x < n; x++ {
			g := color.GrayModel.Convert(bc.At(b.Min.X+x, b.Min.Y+y)).(color.Gray)
			s.dark[y][x] = g.Y < 128
		}
	}
	return s, nil
}

// modules returns the symbol's width with its quiet zone, in modules.
func (s symbol) modules() int { return s.n + 2*QuietZone }

// draw draws the symbol with its quiet zone in the square of side side at
// (x, y): dark modules as black rectangles, one per horizontal run.
func (s symbol) draw(d *fpdf.Fpdf, x, y, side float64) {
	m := side / float64(s.modules())
	x0, y0 := x+QuietZone*m, y+QuietZone*m
	d.SetFillColor(0, 0, 0)
	for r := 0; r < s.n; r++ {
		for c := 0; c < s.n; {
			if !s.dark[r][c] {
				c++
				continue
			}
			start := c
			for c < s.n && s.dark[r][c] {
				c++
			}
			d.Rect(x0+float64(start)*m, y0+float64(r)*m, float64(c-start)*m, m, "F")
		}
	}
}

// fitText sets the font so that s fits in width w: size pt at most, shrunk
// down to min pt; a text still too wide is cut and ends in "…". It returns
// the text to print.
func fitText(d *fpdf.Fpdf, style string, s string, size, min, w float64) (string, float64) {
	d.SetFont(family, style, size)
	if sw := d.GetStringWidth(s); sw > w {
		size = max(min, size*w/sw)
		d.SetFont(family, style, size)
	}
	if d.GetStringWidth(s) <= w {
		return s, size
	}
	r := []rune(s)
	for len(r) > 0 && d.GetStringWidth(string(r)+"…") > w {
		r = r[:len(r)-1]
	}
	return string(r) + "…", size
}
