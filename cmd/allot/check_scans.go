package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

// addScansFlag defines check's --scans flag.
func (o *checkOptions) addScansFlag(c *cobra.Command) {
	c.Flags().StringVar(&o.scans, "scans", "", "also check a CSV `FILE` of scanned label codes with values (columns: code, response, value)")
}

// checkScansRun checks the filled file fl (read from o.file) and then the
// scans file against the same plan, printing both results. Errors in
// either exit 1.
func checkScansRun(s *streams, o *checkOptions, fl *workbook.Filled) error {
	// A workbook's own plan sheet gives the view (for a blind workbook
	// read without its key, the full plan's fingerprint); a CSV file, a
	// converted copy or a workbook read with --plan use the layout read.
	var v design.View
	if strings.ToLower(filepath.Ext(o.file)) == ".xlsx" && o.plan == "" {
		var err error
		if v, err = workbook.ReadView(o.file); err != nil {
			return inputErr(err)
		}
	} else {
		v = fl.Layout.View()
	}
	f, err := os.Open(o.scans)
	if err != nil {
		return inputErr(fmt.Errorf("--scans %s: %w", o.scans, err))
	}
	defer f.Close()
	scans, err := workbook.ReadScans(f, o.scans)
	if err != nil {
		var fe *workbook.FileError
		if errors.As(err, &fe) {
			return inputErr(fmt.Errorf("--scans %w", err))
		}
		return err
	}
	res := workbook.CheckScans(o.scans, scans, v, fl, workbook.ReadOptions{DecimalComma: o.decimalComma})
	if o.json {
		err = report.CheckScansJSON(s.Out, o.file, fl, res)
	} else {
		if err = report.CheckText(s.Out, o.file, fl); err == nil {
			err = report.ScansText(s.Out, v.Fingerprint, res)
		}
	}
	if err != nil {
		return err
	}
	if n, m := fl.Errors(), res.Errors(); n+m > 0 {
		return &failedError{err: fmt.Errorf("%s: %d error(s) found; %s: %d error(s) found", o.file, n, o.scans, m)}
	}
	return nil
}
