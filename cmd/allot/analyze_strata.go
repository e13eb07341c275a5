package main

import (
	"fmt"
	"strings"

	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/report"
)

// strataWorkbook is returned by analyzeOptions.jobs for a filled workbook
// of a split plot or a Latin square, which analyzeStrata analyses.
type strataWorkbook struct{ fl *workbook.Filled }

func (e *strataWorkbook) Error() string {
	return "a split-plot or Latin-square workbook (analysed by analyzeStrata)"
}

// analyzeStrata analyses every response (or --response) of a split-plot or
// Latin-square workbook with the analysis its strata call for.
func analyzeStrata(s *streams, o *analyzeOptions, fl *workbook.Filled) error {
	p := fl.Layout.Plan
	var all []report.StrataAnalysis
	found := false
	for k, r := range fl.Responses {
		if o.response != "" && r != o.response {
			continue
		}
		found = true
		obs := fl.StrataObservations(k)
		if obs.Values.Len() == 0 {
			return inputErr(fmt.Errorf("%s: response %q has no values yet; fill it in first", o.read.file, r))
		}
		a, err := report.RunStrata(p, r, obs, o.alpha)
		if err != nil {
			return &failedError{err: fmt.Errorf("%s: response %q: %w", o.read.file, r, err)}
		}
		a.Alpha, a.Simulated = o.alpha, fl.Simulated()
		all = append(all, a)
		if k > 0 && o.format != "json" && o.response == "" {
			fmt.Fprintln(s.Out)
		}
		switch o.format {
		case "json":
			// One document for the run, below.
		case "markdown":
			err = report.StrataMarkdown(s.Out, a)
		default:
			err = report.StrataText(s.Out, a)
		}
		if err != nil {
			return err
		}
	}
	if !found {
		return usagef("--response %s: the plan has no such response (responses: %s)", o.response, strings.Join(fl.Responses, ", "))
	}
	if o.format == "json" {
		if err := report.StrataAnalysesJSON(s.Out, version.String(), all); err != nil {
			return err
		}
	}
	var check []string
	for _, pr := range fl.Problems {
		fmt.Fprintf(s.Err, "allot analyze: %s\n", pr)
		check = append(check, fmt.Sprint(pr))
	}
	for _, a := range all {
		if err := o.writeFigures(s, func() ([]report.Figure, error) { return report.StrataFigures(a, o.unit) }); err != nil {
			return err
		}
	}
	return o.writeReport(s, report.HTMLReport{Strata: all, Plan: &p, Check: check})
}
