package main

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/report/paper"

	"github.com/spf13/cobra"
)

type labelsOptions struct {
	file       string
	out        string
	force      bool
	order      string
	subsamples bool
	page       string
	preset     string
	sheet      string
	label      string
	margins    string
	gap        string
	roll       string
	start      int
	cutMarks   bool
	now        func() time.Time
}

func newLabelsCmd(s *streams, runF func(*labelsOptions) error) *cobra.Command {
	o := &labelsOptions{now: time.Now}
	var presets strings.Builder
	for _, p := range paper.Presets() {
		sh := p.Sheet
		fmt.Fprintf(&presets, "  %-12s %s, %d × %d labels of %s × %s mm, gaps %s, %s mm\n", p.Name, sh.Page.Name, sh.Cols, sh.Rows,
			num(sh.W), num(sh.H), num(sh.GapH), num(sh.GapV))
	}
	cmd := &cobra.Command{
		Use:   "labels FILE -o labels.pdf",
		Short: "Print a label with a QR code for every unit (or subsample)",
		Long: `Print labels for the pots, plots or cage cards of a laid-out trial from its
workbook or layout .json: one label per unit (or per subsample with
--subsamples), in measurement order (when the plan has one) or unit order
(--order). Each label shows the unit ID in large type, its block and
position, the treatment (for a blind plan only its code), the plan title
and the first 12 digits of the plan fingerprint, and a QR code of the text

  allot:<fingerprint12>:<unit ID>        (subsample labels: …:<unit ID>/<k>)

so that a scan names the plan and the unit (allot check --scans reads
them back); characters of a unit ID outside printable ASCII, "%" and "/"
are written %XX. The codes use error-correction level H (about 30% of the code
may be lost to water or scratches) and a quiet zone of 4 modules.

Sheets of labels: --page a4|letter with a named --preset, or the grid
given as --sheet COLSxROWS --label WxH --margins TOP,LEFT --gap H,V (mm;
without --margins the grid is centred, without --label the labels fill the
page). --start N skips the first N labels of a partly used sheet;
--cut-marks marks the label edges in the margins for cutting plain paper.
--roll WxH prints single labels of that size, one per page, for a label
printer. The default is --preset a4-3x7 (letter-3x10 with --page letter).

Presets (each grid centred on the page):
` + presets.String() + "\nThe file is never replaced without --force.\n" + exitHelp,
		Example: `  allot labels trial.xlsx -o labels.pdf
  allot labels layout.json --page letter --preset letter-3x10 --start 4 -o labels.pdf
  allot labels trial.xlsx --sheet 2x8 --label 99x34 --margins 12.9,4.6 --gap 2.5,0 -o labels.pdf
  allot labels mice.xlsx --roll 50x25 --subsamples -o cage-labels.pdf`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("labels takes one FILE (a workbook .xlsx or a layout .json), got %d", len(args))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.file = args[0]
			if err := o.validate(c); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return labelsRun(s, o, c)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&o.out, "out", "o", "", "write the labels to `FILE.pdf`")
	f.BoolVar(&o.force, "force", false, "replace an existing output file")
	f.StringVar(&o.order, "order", "", "`measurement` (the plan's measurement order; the default when it has one) or unit (block and position)")
	f.BoolVar(&o.subsamples, "subsamples", false, "one label per subsample instead of one per unit")
	f.StringVar(&o.page, "page", "", "paper: `a4` (default) or letter")
	f.StringVar(&o.preset, "preset", "", "a named label sheet `NAME` (see the list above)")
	f.StringVar(&o.sheet, "sheet", "", "labels on a sheet: `COLSxROWS`")
	f.StringVar(&o.label, "label", "", "label size `WxH` in mm")
	f.StringVar(&o.margins, "margins", "", "top and left margin `T,L` in mm")
	f.StringVar(&o.gap, "gap", "", "gap between labels across and down `H,V` in mm")
	f.StringVar(&o.roll, "roll", "", "single labels of `WxH` mm on a roll, one per page")
	f.IntVar(&o.start, "start", 0, "skip the first `N` labels of the first sheet")
	f.BoolVar(&o.cutMarks, "cut-marks", false, "mark the label edges in the page margins")
	return cmd
}

func num(x float64) string { return strconv.FormatFloat(x, 'f', -1, 64) }

func (o *labelsOptions) validate(c *cobra.Command) error {
	if err := checkInputExt(o.file); err != nil {
		return err
	}
	if err := checkPDFOut(o.out); err != nil {
		return err
	}
	if err := checkOrder(o.order); err != nil {
		return err
	}
	if o.roll != "" {
		for _, name := range []string{"page", "preset", "sheet", "label", "margins", "gap", "start", "cut-marks"} {
			if c.Flags().Changed(name) {
				return usagef("--roll %s: --%s is for sheets of labels; leave it out", o.roll, name)
			}
		}
	}
	if o.start < 0 {
		return usagef("--start %d: give the number of labels already used on the sheet (0 or more)", o.start)
	}
	return nil
}

func checkInputExt(file string) error {
	switch strings.ToLower(filepath.Ext(file)) {
	case ".xlsx", ".json":
		return nil
	}
	return usagef("%s: give the workbook (.xlsx) or the layout (.json) written by allot layout -o", file)
}

func checkPDFOut(out string) error {
	if out == "" {
		return usagef("-o: name the PDF file to write, for example -o labels.pdf")
	}
	if strings.ToLower(filepath.Ext(out)) != ".pdf" {
		return usagef("-o %s: the file name must end in .pdf", out)
	}
	return nil
}

func checkOrder(order string) error {
	switch order {
	case "", "measurement", "unit":
		return nil
	}
	return usagef("--order %s: must be measurement or unit", order)
}

// readView reads what may be printed from a workbook or layout file.
func readView(file string) (design.View, error) {
	if strings.ToLower(filepath.Ext(file)) == ".xlsx" {
		v, err := workbook.ReadView(file)
		if err != nil {
			return design.View{}, inputErr(err)
		}
		return v, nil
	}
	b, err := os.ReadFile(file)
	if err != nil {
		return design.View{}, inputErr(err)
	}
	l, err := design.ParseLayout(b)
	if err != nil {
		return design.View{}, inputErr(fmt.Errorf("%s: %w", file, err))
	}
	return l.View(), nil
}

// byMeasurement resolves --order for view v.
func byMeasurement(order string, v design.View) bool {
	switch order {
	case "measurement":
		return true
	case "unit":
		return false
	}
	return v.Layout.Plan.Order
}

// pairOf parses "AxB" (sep "x") or "A,B" (sep ",") into two numbers; an
// optional "mm" suffix is allowed.
func pairOf(flag, s, sep, example string) (float64, float64, error) {
	t := strings.TrimSuffix(strings.ToLower(strings.TrimSpace(s)), "mm")
	a, b, ok := strings.Cut(t, sep)
	x, err1 := strconv.ParseFloat(strings.TrimSpace(a), 64)
	y, err2 := strconv.ParseFloat(strings.TrimSpace(b), 64)
	if !ok || err1 != nil || err2 != nil {
		return 0, 0, usagef("--%s %s: give two numbers in mm as %s", flag, s, example)
	}
	return x, y, nil
}

// geometry resolves the sheet or roll flags.
func (o *labelsOptions) geometry() (*paper.Sheet, *paper.Roll, error) {
	if o.roll != "" {
		w, h, err := pairOf("roll", o.roll, "x", "WxH, for example 50x25")
		if err != nil {
			return nil, nil, err
		}
		return nil, &paper.Roll{W: w, H: h}, nil
	}
	page := paper.A4
	if o.page != "" {
		p, ok := paper.PageNamed(o.page)
		if !ok {
			return nil, nil, usagef("--page %s: must be a4 or letter", o.page)
		}
		page = p
	}
	var s paper.Sheet
	switch {
	case o.preset != "":
		p, ok := paper.PresetNamed(o.preset)
		if !ok {
			var names []string
			for _, p := range paper.Presets() {
				names = append(names, p.Name)
			}
			return nil, nil, usagef("--preset %s: not a preset; choose one of %s, or give --sheet, --label, --margins and --gap", o.preset, strings.Join(names, ", "))
		}
		if o.page != "" && p.Page != page {
			return nil, nil, usagef("--preset %s is a %s sheet, not %s; leave out --page or choose a %s preset", o.preset, p.Page.Name, page.Name, page.Name)
		}
		s = p
	case o.sheet == "" && o.label == "":
		name := "a4-3x7"
		if page == paper.Letter {
			name = "letter-3x10"
		}
		s, _ = paper.PresetNamed(name)
	case o.sheet == "":
		return nil, nil, usagef("--label %s: give the grid as well, --sheet COLSxROWS (or a --preset)", o.label)
	default:
		s = paper.Sheet{Page: page}
	}
	if o.sheet != "" {
		a, b, ok := strings.Cut(strings.ToLower(o.sheet), "x")
		c, err1 := strconv.Atoi(strings.TrimSpace(a))
		r, err2 := strconv.Atoi(strings.TrimSpace(b))
		if !ok || err1 != nil || err2 != nil || c < 1 || r < 1 {
			return nil, nil, usagef("--sheet %s: give the columns and rows of labels as COLSxROWS, for example 3x7", o.sheet)
		}
		s.Cols, s.Rows = c, r
	}
	if o.gap != "" {
		h, v, err := pairOf("gap", o.gap, ",", "H,V, for example 2.5,0")
		if err != nil {
			return nil, nil, err
		}
		s.GapH, s.GapV = h, v
	}
	margin := [2]float64{10, 10}
	if o.margins != "" {
		t, l, err := pairOf("margins", o.margins, ",", "TOP,LEFT, for example 15.1,7.2")
		if err != nil {
			return nil, nil, err
		}
		margin = [2]float64{t, l}
	}
	switch {
	case o.label != "":
		w, h, err := pairOf("label", o.label, "x", "WxH, for example 63.5x38.1")
		if err != nil {
			return nil, nil, err
		}
		s.W, s.H = w, h
	case o.preset == "" && o.sheet != "":
		// Labels fill the page inside the margins (the same on both sides).
		s.W = (page.W - 2*margin[1] - float64(s.Cols-1)*s.GapH) / float64(s.Cols)
		s.H = (page.H - 2*margin[0] - float64(s.Rows-1)*s.GapV) / float64(s.Rows)
	}
	switch {
	case o.margins != "":
		s.Top, s.Left = margin[0], margin[1]
	case o.sheet != "" || o.label != "" || o.gap != "":
		c := paper.Centred(s.Page, s.Cols, s.Rows, s.W, s.H, s.GapH, s.GapV)
		s.Top, s.Left = max(c.Top, 0), max(c.Left, 0)
	}
	return &s, nil, nil
}

// geometryFlag names the flag a paper.GeometryError concerns.
func (o *labelsOptions) geometryFlag(field string) string {
	val := func(name, v string) string { return "--" + name + " " + v }
	switch field {
	case "label":
		switch {
		case o.roll != "":
			return val("roll", o.roll)
		case o.label != "":
			return val("label", o.label)
		case o.sheet != "":
			return val("sheet", o.sheet)
		case o.preset != "":
			return val("preset", o.preset)
		}
		return "the default sheet"
	case "sheet":
		return val("sheet", o.sheet)
	case "margins":
		return val("margins", o.margins)
	case "gap":
		return val("gap", o.gap)
	case "roll":
		return val("roll", o.roll)
	case "start":
		return val("start", strconv.Itoa(o.start))
	case "subsamples":
		return "--subsamples"
	case "order":
		return val("order", o.order)
	}
	return o.file
}

func labelsRun(s *streams, o *labelsOptions, c *cobra.Command) error {
	sheet, roll, err := o.geometry()
	if err != nil {
		return err
	}
	v, err := readView(o.file)
	if err != nil {
		return err
	}
	opt := paper.LabelOptions{Sheet: sheet, Roll: roll, Start: o.start, CutMarks: o.cutMarks, Subsamples: o.subsamples,
		ByMeasurement: byMeasurement(o.order, v), Created: o.now()}
	labels, err := paper.LabelsOf(v, opt.Subsamples, opt.ByMeasurement)
	// Render first, so that a geometry that cannot be printed is reported
	// before any file is touched.
	var pdf bytes.Buffer
	if err == nil {
		err = paper.Labels(&pdf, v, opt)
	}
	var ge *paper.GeometryError
	if errors.As(err, &ge) {
		return inputErr(fmt.Errorf("%s: %s", o.geometryFlag(ge.Field), ge.Msg))
	}
	if err != nil {
		return err
	}
	if err := atomicfile.Write(o.out, o.force, func(w io.Writer) error { _, err := w.Write(pdf.Bytes()); return err }); err != nil {
		return inputErr(err)
	}
	where := ""
	if sheet != nil {
		per := sheet.PerSheet()
		where = fmt.Sprintf(" on %d %s sheet(s) of %d × %d", (o.start+len(labels)+per-1)/per, sheet.Page.Name, sheet.Cols, sheet.Rows)
	} else {
		where = fmt.Sprintf(" as %s × %s mm roll labels", num(roll.W), num(roll.H))
	}
	what := "unit"
	if o.subsamples {
		what = "subsample"
	}
	order := "unit order"
	if opt.ByMeasurement {
		order = "measurement order"
	}
	fmt.Fprintf(s.Err, "allot labels: wrote %d %s labels%s, in %s, to %s (plan %s; QR codes at error-correction level H)\n",
		len(labels), what, where, order, o.out, v.Short())
	if v.Layout.Plan.Blind {
		fmt.Fprintf(s.Err, "allot labels: the plan is blind: the labels show codes only\n")
	}
	return nil
}
