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
	json         bool
	scans        string
}

// addReadFlags defines the flags that say how a filled file is read; check
// and analyze share them.
func (o *checkOptions) addReadFlags(c *cobra.Command) {
	c.Flags().StringVar(&o.plan, "plan", "", "the layout `FILE.json` (allot layout -o) that a CSV file was made from")
	c.Flags().StringVar(&o.key, "key", "", "the unblinding key `FILE` of a blind layout")
	c.Flags().BoolVar(&o.decimalComma, "decimal-comma", false, "accept a decimal comma (12,5) in response cells")
}

func newCheckCmd(s *streams, runF func(*checkOptions) error) *cobra.Command {
	o := &checkOptions{}
	cmd := &cobra.Command{
		Use:   "check FILE",
		Short: "Check a filled workbook (or CSV) cell by cell before analysis",
		Long: `Read a filled data-entry workbook, verify its embedded plan against its
fingerprint, match rows by unit ID (sorting and filtering are harmless) and
report, by sheet and cell: missing, duplicated or unknown units, edited design
cells, text in a response cell, numbers stored as text, decimal commas,
values outside the declared range and blank responses. The file is only read.

A CSV export needs the layout it came from: --plan layout.json. A blind
workbook is checked without its key; give --key to unblind it.

--scans FILE.csv also reads scanned label codes (allot labels) with values
(columns: code, response, value) and matches them by the code's plan
fingerprint and unit ID, reporting by line codes of another plan, unknown
units and values that differ from the workbook's.

Errors exit 1; warnings alone exit 0.` + "\n" + exitHelp,
		Example: `  allot check trial-filled.xlsx
  allot check data.csv --plan layout.json --decimal-comma`,
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
	switch strings.ToLower(filepath.Ext(o.file)) {
	case ".xlsx":
		if o.plan != "" {
			return usagef("--plan %s: a workbook carries its plan; --plan is for CSV files", o.plan)
		}
	case ".csv":
		if o.plan == "" {
			return usagef("%s: a CSV file needs the layout it was made from: --plan layout.json (written by allot layout -o layout.json)", o.file)
		}
	default:
		return usagef("%s: give a workbook (.xlsx) or a CSV file (.csv)", o.file)
	}
	return nil
}

// readFilled reads and checks the file named by o.
func readFilled(o *checkOptions) (*workbook.Filled, error) {
	key, err := readKey(o.key)
	if err != nil {
		return nil, err
	}
	opt := workbook.ReadOptions{DecimalComma: o.decimalComma, Key: key}
	if strings.ToLower(filepath.Ext(o.file)) == ".xlsx" {
		fl, err := workbook.Read(o.file, opt)
		if err != nil {
			var fe *workbook.FileError
			if errors.As(err, &fe) {
				return nil, inputErr(err)
			}
			return nil, err
		}
		return fl, nil
	}
	b, err := os.ReadFile(o.plan)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--plan %s: %w", o.plan, err))
	}
	lay, err := design.ParseLayout(b)
	if err != nil {
		return nil, inputErr(fmt.Errorf("--plan %s: %w", o.plan, err))
	}
	if lay.Plan.Blind {
		if key == nil {
			return nil, usagef("--plan %s: the layout is blind; give its --key", o.plan)
		}
		if lay, err = randomize.Unblind(lay, *key); err != nil {
			return nil, inputErr(fmt.Errorf("--key %s: %w", o.key, err))
		}
	}
	f, err := os.Open(o.file)
	if err != nil {
		return nil, inputErr(err)
	}
	defer f.Close()
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
