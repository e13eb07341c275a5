package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

type analyzeOptions struct {
	read      checkOptions
	response  string
	factors   []string
	block     string
	unitCol   string
	ss        int
	posthoc   string
	control   string
	sides     int
	direction string
	blocks    string
	trend     []string
	alpha     float64
	format    string
	json      bool
	html      string
	plots     string
	unit      string
	force     bool
	command   string
	methods   options.Methods
}

func newAnalyzeCmd(s *streams, runF func(*analyzeOptions) error) *cobra.Command {
	o := &analyzeOptions{}
	cmd := &cobra.Command{
		Use:   "analyze FILE",
		Short: "Run the ANOVA that matches the design, with comparisons and checks",
		Long: `Read a filled workbook (checked exactly as allot check does; data with errors
are refused and the errors listed), or a CSV file with --plan layout.json, or a
plain CSV table with the roles of its columns given by --response, --factor
(repeatable) and --block. Fit the model the design implies by least squares:
one-way, factorial with all interactions, randomised complete blocks, or a
factorial in blocks, with Type I, II or III sums of squares (--ss, default 3).

Every treatment factor is followed by the requested comparisons, whatever
its F test says (the output states the family, the error rate controlled,
and notes a non-significant F): --posthoc tukey (Tukey–Kramer, default),
dunnett (each level against --control, the plan's control by default;
--sides 1 with --direction higher or lower for one side), holm (Holm-adjusted
t tests, Bonferroni intervals) or none, with a compact letter display; a
significant interaction puts simple effects first. --trend FACTOR adds
orthogonal polynomial contrasts of a numeric factor. Blocks are fixed unless
--blocks random (generalised block designs: treatments tested against the
block × treatment term). The means table, the loss table and the residual
checks (Shapiro–Wilk and an equal-variance test valid for the design, SD
ratio, studentized residuals beyond ±3 listed by unit and cell) follow.

When the residual variation is exactly zero (decided in exact arithmetic),
F is undefined: the output says so, runs no comparison or check, and the
exit status is 1.

Each experimental unit is one observation: the unit that was randomised is the
unit of analysis.` + "\n" + methodsHelp + "\n" + exitHelp,
		Example: `  allot analyze trial-filled.xlsx
  allot analyze trial-filled.xlsx --response height_cm --posthoc dunnett --json
  allot analyze yields.csv --response yield --factor variety --block field --format markdown`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("analyze takes one FILE, got %d", len(args))
			}
			return nil
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.read.file = args[0]
			o.command = commandLine(c) + " " + shellQuote(o.read.file)
			if err := o.validate(); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return analyzeRun(s, o)
		},
	}
	o.read.addReadFlags(cmd)
	cmd.Flags().StringVar(&o.html, "report", "", "also write a self-contained HTML report to `FILE.html`")
	cmd.Flags().StringVar(&o.plots, "plots", "", "also write the figures as SVG and PNG into `DIR`")
	cmd.Flags().StringVar(&o.unit, "unit", "", "the response's unit for axis labels, for example `mg`")
	cmd.Flags().BoolVar(&o.force, "force", false, "replace an existing --report file or --plots figures")
	f := cmd.Flags()
	f.StringVar(&o.response, "response", "", "analyse only the response `NAME` (default: every response; required for a plain CSV)")
	f.StringArrayVar(&o.factors, "factor", nil, "plain CSV: a treatment factor `COLUMN`; repeat for a factorial")
	f.StringVar(&o.block, "block", "", "plain CSV: the block `COLUMN`")
	f.StringVar(&o.unitCol, "unit-column", "", "plain CSV: the unit-ID `COLUMN`, for listing unusual residuals")
	f.IntVar(&o.ss, "ss", 3, "sum-of-squares type `1`, 2 or 3")
	f.StringVar(&o.posthoc, "posthoc", "tukey", "follow-up comparisons: `tukey`, dunnett, holm or none")
	f.StringVar(&o.control, "control", "", "the control `LEVEL` for dunnett (default: the plan's control)")
	f.IntVar(&o.sides, "sides", 2, "dunnett: `2` sides, or 1 (one-sided; see --direction)")
	f.StringVar(&o.direction, "direction", "", "one-sided dunnett: `higher` (treatment > control, the default) or lower")
	f.StringVar(&o.blocks, "blocks", "fixed", "blocks as `fixed` effects, or random (generalised block designs: treatments tested against block × treatment)")
	f.StringArrayVar(&o.trend, "trend", nil, "orthogonal polynomial trend contrasts of the numeric `FACTOR` (doses, rates); repeatable")
	f.Float64Var(&o.alpha, "alpha", 0.05, "significance level `A`")
	f.StringVar(&o.format, "format", "text", "output: `text`, markdown or json")
	f.BoolVar(&o.json, "json", false, "print JSON (same as --format json)")
	o.addMethodFlags(f)
	return cmd
}

func (o *analyzeOptions) plainCSV() bool {
	return strings.ToLower(filepath.Ext(o.read.file)) == ".csv" && o.read.plan == ""
}

func (o *analyzeOptions) validate() error {
	if err := o.settings().Validate(); err != nil {
		return usagef("%s", err)
	}
	switch o.direction {
	case "":
	case "higher", "lower":
		if o.sides != 1 {
			return usagef("--direction %s: is for a one-sided test; add --sides 1", o.direction)
		}
	default:
		return usagef("--direction %s: must be higher (treatment > control) or lower (treatment < control)", o.direction)
	}
	if err := o.methods.Validate(); err != nil {
		return usagef("%s", err)
	}
	if (o.methods.Method != "" && o.methods.Method != analyze.MethodANOVA || o.methods.Family != "" || o.methods.Covariate != "") && o.html != "" {
		return usagef("--report draws the ANOVA's report; for --method, --family and --covariate use --format markdown")
	}
	if o.blocks != "fixed" && o.blocks != "random" {
		return usagef("--blocks %s: must be fixed or random", o.blocks)
	}
	if o.json {
		if o.format != "text" && o.format != "json" {
			return usagef("--json and --format %s ask for two formats: give one of them", o.format)
		}
		o.format = "json"
	}
	if o.html != "" && !strings.HasSuffix(strings.ToLower(o.html), ".html") {
		return usagef("--report %s: the file name must end in .html", o.html)
	}
	switch o.format {
	case "text", "markdown", "json":
	default:
		return usagef("--format %s: must be text, markdown or json", o.format)
	}
	if o.plainCSV() {
		if o.response == "" || len(o.factors) == 0 {
			return usagef("%s: a plain CSV table needs --response COLUMN and --factor COLUMN (or --plan layout.json for a CSV written by allot layout)", o.read.file)
		}
		return nil
	}
	if len(o.factors) > 0 || o.block != "" || o.unitCol != "" {
		return usagef("--factor, --block and --unit-column are for plain CSV tables; a workbook or --plan says the design")
	}
	return o.read.validate()
}

// job is one response to analyse.
type job = options.Job

// settings are the analysis flags as package options takes them.
func (o *analyzeOptions) settings() options.Analysis {
	return options.Analysis{SS: o.ss, Alpha: o.alpha, PostHoc: o.posthoc, Control: o.control, Sides: o.sides,
		Direction: o.direction, Trend: o.trend, RandomBlocks: o.blocks == "random"}
}

// writeFigures writes one analysis's figures into --plots, if set.
func (o *analyzeOptions) writeFigures(s *streams, figures func() ([]report.Figure, error)) error {
	if o.plots == "" {
		return nil
	}
	figs, err := figures()
	if err != nil {
		return err
	}
	written, err := report.WriteFigures(o.plots, figs, o.force)
	if err != nil {
		return inputErr(err)
	}
	fmt.Fprintf(s.Err, "allot analyze: wrote %d figure files into %s\n", len(written), o.plots)
	return nil
}

// writeReport writes the HTML report to --report, if set, with the
// command, version and unit filled in.
func (o *analyzeOptions) writeReport(s *streams, rep report.HTMLReport) error {
	if o.html == "" {
		return nil
	}
	rep.Command, rep.Version, rep.Unit = o.command, version.String(), o.unit
	if err := atomicfile.Write(o.html, o.force, func(w io.Writer) error { return report.HTML(w, rep) }); err != nil {
		return inputErr(err)
	}
	fmt.Fprintf(s.Err, "allot analyze: wrote %s\n", o.html)
	return nil
}

func analyzeRun(s *streams, o *analyzeOptions) error {
	jobs, plan, check, err := o.jobs()
	if sw, ok := err.(*strataWorkbook); ok {
		return analyzeStrata(s, o, sw.fl) // split plots and Latin squares: analyze_strata.go
	}
	if rw, ok := err.(*repeatedWorkbook); ok {
		return analyzeRepeated(s, o, rw.fl)
	}
	if err != nil {
		return err
	}
	var all []report.Analysis
	var undefined []string
	var others []report.MethodDoc
	for i, j := range jobs {
		if i > 0 && o.format != "json" {
			fmt.Fprintln(s.Out)
		}
		doc, handled, err := o.methodRun(s.Out, &j, plan)
		if err != nil {
			return err
		}
		if handled {
			others = append(others, *doc)
			continue
		}
		if o.methods.Transform != "" {
			if j.Data, err = analyze.Transform(j.Data, o.methods.Transform); err != nil {
				return inputErr(fmt.Errorf("%s: --transform %s: %w", o.read.file, o.methods.Transform, err))
			}
		}
		res, err := j.Run(o.settings())
		var oe *options.Error
		if errors.As(err, &oe) {
			return usagef("%s", err)
		}
		if err != nil {
			return inputErr(fmt.Errorf("%s: %s: %w", o.read.file, j.Data.Response, err))
		}
		if j.ModelNote != "" {
			res.Notes = append(res.Notes, j.ModelNote)
		}
		if note := options.TransformNote(o.methods.Transform, res); note != "" {
			res.Notes = append(res.Notes, note)
		}
		if res.Undefined {
			undefined = append(undefined, j.Data.Response)
		}
		a := report.Analysis{Result: res, Missing: j.Missing, Unit: j.Unit, BlockName: j.BlockName, Simulated: j.Simulated}
		all = append(all, a)
		if o.format == "json" {
			continue
		}
		switch o.format {
		case "markdown":
			err = report.AnalysisMarkdown(s.Out, a)
		default:
			err = report.AnalysisText(s.Out, a)
		}
		if err != nil {
			return err
		}
	}
	if o.format == "json" {
		if err := report.AnalysesWithMethodsJSON(s.Out, version.String(), all, others); err != nil {
			return err
		}
	}
	for _, a := range all {
		if err := o.writeFigures(s, func() ([]report.Figure, error) { return report.AnalysisFigures(a, o.unit) }); err != nil {
			return err
		}
	}
	if err := o.writeReport(s, report.HTMLReport{Analyses: all, Plan: plan, Check: check}); err != nil {
		return err
	}
	if len(undefined) > 0 {
		return &failedError{err: fmt.Errorf("%s: %s: the residual variation is exactly zero, so no F test is defined (see the note in the output)", o.read.file, strings.Join(undefined, ", "))}
	}
	return nil
}

// jobs reads the input and returns one job per response analysed, the plan
// (nil for a plain CSV table) and the data check's findings.
func (o *analyzeOptions) jobs() ([]job, *design.Plan, []string, error) {
	if o.plainCSV() {
		f, err := os.Open(o.read.file)
		if err != nil {
			return nil, nil, nil, inputErr(err)
		}
		defer f.Close()
		obs, missing, err := workbook.ReadRoles(f, o.read.file, workbook.Roles{Response: o.response, Factors: o.factors, Block: o.block, Unit: o.unitCol}, o.read.decimalComma)
		if err != nil {
			return nil, nil, nil, inputErr(err)
		}
		var check []string
		if missing > 0 {
			check = append(check, fmt.Sprintf("%s: %d row(s) have no %s and were left out", o.read.file, missing, o.response))
		}
		j := options.PlainJob(o.response, obs, o.factors, o.block, missing)
		if err := o.attachPlainExtras(&j, obs); err != nil {
			return nil, nil, nil, err
		}
		return []job{j}, nil, check, nil
	}
	fl, err := readFilled(&o.read)
	if err != nil {
		return nil, nil, nil, err
	}
	if fl.Layout.Plan.Strata() {
		// Split plots and Latin squares have analyses of their own
		// (analyze_strata.go).
		return nil, nil, nil, &strataWorkbook{fl: fl}
	}
	for _, r := range fl.Layout.Plan.Responses {
		if r.Of != "" {
			// Measured at several times: analyze_methods.go.
			return nil, nil, nil, &repeatedWorkbook{fl: fl}
		}
	}
	out, plan, check, err := options.WorkbookJobs(fl, o.read.file, o.response)
	var cf *options.CheckFailedError
	var oe *options.Error
	switch {
	case errors.As(err, &cf):
		return nil, nil, nil, &failedError{err: err}
	case errors.As(err, &oe):
		return nil, nil, nil, usagef("%s", err)
	case err != nil:
		return nil, nil, nil, inputErr(err)
	}
	if err := o.attachExtras(out, fl); err != nil {
		return nil, nil, nil, err
	}
	return out, plan, check, nil
}
