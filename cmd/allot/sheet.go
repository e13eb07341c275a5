package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"strings"
	"time"

	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/report/paper"

	"github.com/spf13/cobra"
)

type sheetOptions struct {
	file      string
	out       string
	force     bool
	order     string
	page      string
	responses []string
	now       func() time.Time
}

func newSheetCmd(s *streams, runF func(*sheetOptions) error) *cobra.Command {
	o := &sheetOptions{now: time.Now}
	cmd := &cobra.Command{
		Use:   "sheet FILE -o sheet.pdf",
		Short: "Print a recording sheet to fill in by hand while measuring",
		Long: `Print a recording sheet for the person walking the benches, from a trial's
workbook or layout .json: one row per unit (one per subsample when the plan
has subsamples) in measurement order (when the plan has one; --order unit
lists by block and position), with the unit ID, block and position, the
treatment (for a blind plan only its code), an empty box for each response
and room for notes (--responses NAME,... for some of them, say one sheet per
measurement round). Every page carries the plan title, its fingerprint and
"page i of n". --page a4 (default) or letter; the page turns sideways when
the responses need the width.

The file is never replaced without --force.` + "\n" + exitHelp,
		Example: `  allot sheet trial.xlsx -o sheet.pdf
  allot sheet layout.json --page letter --order unit -o sheet.pdf`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("sheet takes one FILE (a workbook .xlsx or a layout .json), got %d", len(args))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.file = args[0]
			if err := checkInputExt(o.file); err != nil {
				return err
			}
			if err := checkPDFOut(o.out); err != nil {
				return err
			}
			if err := checkOrder(o.order); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return sheetRun(s, o)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&o.out, "out", "o", "", "write the sheet to `FILE.pdf`")
	f.BoolVar(&o.force, "force", false, "replace an existing output file")
	f.StringVar(&o.order, "order", "", "`measurement` (the plan's measurement order; the default when it has one) or unit (block and position)")
	f.StringVar(&o.page, "page", "", "paper: `a4` (default) or letter")
	f.StringSliceVar(&o.responses, "responses", nil, "boxes for these responses only, in this order (`NAME,NAME`; default all)")
	return cmd
}

func sheetRun(s *streams, o *sheetOptions) error {
	page := paper.A4
	if o.page != "" {
		p, ok := paper.PageNamed(o.page)
		if !ok {
			return usagef("--page %s: must be a4 or letter", o.page)
		}
		page = p
	}
	v, err := readView(o.file)
	if err != nil {
		return err
	}
	opt := paper.RecordOptions{Page: page, ByMeasurement: byMeasurement(o.order, v), Responses: o.responses, Created: o.now()}
	var pdf bytes.Buffer
	err = paper.Record(&pdf, v, opt)
	var ge *paper.GeometryError
	switch {
	case errors.As(err, &ge) && ge.Field == "order":
		return inputErr(fmt.Errorf("--order %s: %s", o.order, ge.Msg))
	case errors.As(err, &ge) && ge.Field == "responses":
		return inputErr(fmt.Errorf("--responses %s: %s", strings.Join(o.responses, ","), ge.Msg))
	case errors.As(err, &ge):
		return inputErr(fmt.Errorf("%s: %s", o.file, ge.Msg))
	case err != nil:
		return err
	}
	if err := atomicfile.Write(o.out, o.force, func(w io.Writer) error { _, err := w.Write(pdf.Bytes()); return err }); err != nil {
		return inputErr(err)
	}
	order := "unit order"
	if opt.ByMeasurement {
		order = "measurement order"
	}
	fmt.Fprintf(s.Err, "allot sheet: wrote the recording sheet of %d units (%s, %s) to %s (plan %s)\n", len(v.Layout.Units), page.Name, order, o.out, v.Short())
	return nil
}
