package demo

import (
	"bytes"
	"fmt"
	"path/filepath"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/report/paper"
)

// Printed matter the demo writes beside the workbook.
const (
	FileLabels = "labels.pdf"
	FileSheet  = "sheet.pdf"
)

// writePaper writes the pot labels (A4 sheets of 3 × 7, in measurement
// order) and the recording sheet of layout l into dir, as
// `allot labels trial.xlsx -o labels.pdf` and `allot sheet trial.xlsx -o
// sheet.pdf` would.
func (r *runner) writePaper(l design.Layout, created time.Time) error {
	out, dir := r.out, r.o.Out
	v := l.View()
	sheet, _ := paper.PresetNamed("a4-3x7")
	var lb, sb bytes.Buffer
	if err := paper.Labels(&lb, v, paper.LabelOptions{Sheet: &sheet, ByMeasurement: l.Plan.Order, Created: created}); err != nil {
		return err
	}
	if err := r.writeFile(FileLabels, lb.String()); err != nil {
		return err
	}
	if err := paper.Record(&sb, v, paper.RecordOptions{Page: paper.A4, ByMeasurement: l.Plan.Order, Created: created}); err != nil {
		return err
	}
	if err := r.writeFile(FileSheet, sb.String()); err != nil {
		return err
	}
	fmt.Fprintf(out, "Wrote %s (a label with a QR code for each of the %d pots, in measurement order) and %s (the recording sheet).\n", filepath.Join(dir, FileLabels), len(l.Units), filepath.Join(dir, FileSheet))
	return nil
}
