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
	f, err := excelize.OpenFile(path, excelize.Options{RawCellValue: true, UnzipSizeLimit: UnzipSizeLimit, UnzipXMLSizeLimit: UnzipXMLSizeLimit})
	if err != nil {
		return design.View{}, &FileError{Path: path, Msg: "cannot be read as an .xlsx workbook (" + err.Error() + "); give the file written by `allot layout`"}
	}
	defer f.Close()
	l, labels, err := readData(f, path, nil)
	if err != nil {
		return design.View{}, err
	}
	if !l.Plan.Blind {
		return l.View(), nil
	}
	fp, _ := f.GetCellValue(SheetData, "B1", excelize.Options{RawCellValue: true})
	return design.View{Layout: l, Shown: labels, Fingerprint: fp}, nil
}
