package main

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

type checkOptions struct {
	file         string
	plan         string
	key          string
	decimalComma bool
	ranges       []string
	convert      bool
	json         bool
	scans        string
}

// addReadFlags defines the flags that say how a filled file is read; check
// and analyze share them.
func (o *checkOptions) addReadFlags(c *cobra.Command) {
	c.Flags().StringVar(&o.plan, "plan", "", "the layout `FILE.json` (allot layout -o) that a CSV file, or a workbook that lost its hidden plan sheet, was made from")
	c.Flags().StringVar(&o.key, "key", "", "the unblinding key `FILE` of a blind layout")
	c.Flags().BoolVar(&o.decimalComma, "decimal-comma", false, "accept a decimal comma (12,5) in response cells")
	c.Flags().StringArrayVar(&o.ranges, "range", nil, "check response `NAME=MIN..MAX` against this range instead of the plan's (either side may be empty); repeat for several")
	c.Flags().BoolVar(&o.convert, "convert", false, "read an .ods or .xls file through an .xlsx copy made by LibreOffice (when installed)")
}

func newCheckCmd(s *streams, runF func(*checkOptions) error) *cobra.Command {
	o := &checkOptions{}
	cmd := &cobra.Command{
		Use:   "check FILE",
		Short: "Check a filled workbook (or CSV) cell by cell before analysis",
		Long: `Read a filled data-entry workbook, verify its embedded plan against its
fingerprint, match rows by unit ID (sorting and filtering are harmless) and
report, by sheet and cell: missing, duplicated or unknown units, edited design
cells, text in a response cell (NaN, Inf, hexadecimal numbers, TRUE/FALSE),
cells formatted as dates, formulas without a saved result, numbers stored as
text, decimal commas, values outside the declared range, blank responses, and
the Status column (measured, lost or excluded; lost and excluded need a
Reason). The file is only read.

A CSV export needs the layout it came from: --plan layout.json; so does a
workbook whose hidden plan sheet was lost (data pasted into a new workbook).
CSV files may be comma-, semicolon- or tab-separated, with or without a
byte-order mark. A blind workbook is checked without its key; give --key to
unblind it. A value outside a response's declared range is an error; when
the range itself was wrong, --range NAME=MIN..MAX checks against a new one
(say so in the study's records). An .ods or .xls file is refused with how
to re-save it, or read through a converted copy with --convert.

--scans FILE.csv also reads scanned label codes (allot labels) with values
(columns: code, response, value) and matches them by the code's plan
fingerprint and unit ID, reporting by line codes of another plan, unknown
units and values that differ from the workbook's.

Errors exit 1; warnings alone exit 0.` + "\n" + exitHelp,
		Example: `  allot check trial-filled.xlsx
  allot check data.csv --plan layout.json --decimal-comma
  allot check pasted.xlsx --plan layout.json
  allot check trial-filled.xlsx --range height_cm=0..300`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("check takes one FILE (.xlsx, or .csv with --plan), got %d", len(args))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.file = args[0]
			if err := o.validate(); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return checkRun(s, o)
		},
	}
	o.addReadFlags(cmd)
	cmd.Flags().BoolVar(&o.json, "json", false, "print the result as JSON")
	o.addScansFlag(cmd)
	return cmd
}

func (o *checkOptions) validate() error {
	if st, err := os.Stat(o.file); err == nil && st.IsDir() {
		return inputErr(fmt.Errorf("%s: is a directory, not a workbook; give the .xlsx (or .csv) file itself", o.file))
	}
	for _, r := range o.ranges {
		if _, _, err := workbook.ParseRange(r); err != nil {
			return usagef("--range %v", err)
		}
	}
	switch strings.ToLower(filepath.Ext(o.file)) {
	case ".xlsx", ".ods", ".xls":
	case ".csv":
		if o.plan == "" {
			return usagef("%s: a CSV file needs the layout it was made from: --plan layout.json (written by allot layout -o layout.json)", o.file)
		}
	default:
		if workbook.Format(o.file) == "" {
			return usagef("%s: give a workbook (.xlsx) or a CSV file (.csv)", o.file)
		}
	}
	return nil
}

// readFilled reads and checks the file named by o.
func readFilled(o *checkOptions) (*workbook.Filled, error) {
	key, err := readKey(o.key)
	if err != nil {
		return nil, err
	}
	opt := workbook.ReadOptions{DecimalComma: o.decimalComma, Key: key, Ranges: map[string]workbook.Range{}}
	for _, r := range o.ranges {
		name, rg, _ := workbook.ParseRange(r) // checked in validate
		opt.Ranges[name] = rg
	}
	var lay *design.Layout
	if o.plan != "" {
		if lay, err = readPlan(o, key); err != nil {
			return nil, err
		}
		opt.Layout = lay
	}
	if strings.ToLower(filepath.Ext(o.file)) == ".csv" {
		return readCSV(o, *lay, opt)
	}
	path := o.file
	converted := false
	if workbook.Format(path) != "" && o.convert {
		dir, err := os.MkdirTemp("", "allot-convert")
		if err != nil {
			return nil, err
		}
		defer os.RemoveAll(dir)
		if path, err = workbook.Convert(o.file, dir); err != nil {
			return nil, inputErr(err)
		}
		converted = true
	}
	fl, err := workbook.Read(path, opt)
	if err != nil {
		var fe *workbook.FileError
		if errors.As(err, &fe) {
			fe.Path = o.file
			return nil, inputErr(err)
		}
		return nil, err
	}
	if converted {
		fl.Problems = append([]workbook.Problem{{Severity: workbook.Warning, Level: "warning", Sheet: workbook.SheetEntry,
			Msg: "read through an .xlsx copy converted by LibreOffice; the cells named are those of the original's sheet"}}, fl.Problems...)
	}
	return fl, nil
}

// readPlan reads the --plan layout file.
func readPlan(o *checkOptions, key *design.Key) (*design.Layout, error) {
	b, err := os.ReadFile(o.plan)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--plan %s: %w", o.plan, err))
	}
	lay, err := design.ParseLayout(b)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--plan %s: %w", o.plan, err))
	}
	switch {
	case lay.Plan.Blind && key == nil:
		return nil, usagef("--plan %s: the layout is blind; give its --key", o.plan)
	case !lay.Plan.Blind && key != nil:
		return nil, inputErr(fmt.Errorf("--key %s: the layout %s is not blind, so it has no key; leave --key out", o.key, o.plan))
	case lay.Plan.Blind:
		if lay, err = randomize.Unblind(lay, *key); err != nil {
			return nil, inputErr(fmt.Errorf("--key %s: %w", o.key, err))
		}
	}
	return &lay, nil
}

func readCSV(o *checkOptions, lay design.Layout, opt workbook.ReadOptions) (*workbook.Filled, error) {
	f, err := os.Open(o.file)
	if err != nil {
		return nil, inputErr(err)
	}
	defer f.Close()
	if st, err := f.Stat(); err == nil && st.IsDir() {
		return nil, inputErr(fmt.Errorf("%s: is a directory, not a CSV file", o.file))
	}
	fl, err := workbook.ReadCSV(f, o.file, lay, opt)
	if err != nil {
		return nil, inputErr(err)
	}
	return fl, nil
}

func checkRun(s *streams, o *checkOptions) error {
	fl, err := readFilled(o)
	if err != nil {
		return err
	}
	if o.scans != "" {
		return checkScansRun(s, o, fl)
	}
	if o.json {
		err = report.CheckJSON(s.Out, o.file, fl)
	} else {
		err = report.CheckText(s.Out, o.file, fl)
	}
	if err != nil {
		return err
	}
	if n := fl.Errors(); n > 0 {
		return &failedError{err: fmt.Errorf("%s: %d error(s) found", o.file, n)}
	}
	return nil
}
