package main

import "github.com/allotproject/allot/design/workbook"

// workbookFill writes one response's values into a copy of a workbook.
func workbookFill(src, dst string, vals []float64) error {
	return workbook.Fill(src, dst, [][]float64{vals}, "test values", false)
}
