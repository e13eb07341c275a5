package workbook

import (
	"github.com/allotproject/allot/design"

	"github.com/xuri/excelize/v2"
)

// ReadView returns what may be printed from a workbook for the people who
// handle the units: the stored layout, what each unit shows as its
// treatment and the full plan's fingerprint. A blind workbook needs no key
// and gives only codes (its plan sealed, treatments −1). The stored plan is
// checked as Read checks it; the Entry sheet is not read.
func ReadView(path string) (design.View, error) {
	if err := checkKind(path); err != nil {
		return design.View{}, err
	}
	ds, err := readPlanSheet(path, ReadOptions{})
	if err != nil {
		return design.View{}, err
	}
	l := ds.layout
	if !l.Plan.Blind {
		return l.View(), nil
	}
	f, err := open(path, 0)
	if err != nil {
		return design.View{}, err
	}
	defer f.Close()
	fp, _ := f.GetCellValue(SheetData, "B1", excelize.Options{RawCellValue: true})
	return design.View{Layout: l, Shown: ds.labels, Fingerprint: fp}, nil
}
