package main

import (
	"fmt"
	"io"
	"strings"

	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
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
	if o.plots != "" {
		for _, a := range all {
			figs, err := report.StrataFigures(a, o.unit)
			if err != nil {
				return err
			}
			written, err := report.WriteFigures(o.plots, figs, o.force)
			if err != nil {
				return inputErr(err)
			}
			fmt.Fprintf(s.Err, "allot analyze: wrote %d figure files into %s\n", len(written), o.plots)
		}
	}
	if o.html != "" {
		rep := report.HTMLReport{Strata: all, Plan: &p, Check: check, Command: o.command, Version: version.String(), Unit: o.unit}
		if err := atomicfile.Write(o.html, o.force, func(w io.Writer) error { return report.HTML(w, rep) }); err != nil {
			return inputErr(err)
		}
		fmt.Fprintf(s.Err, "allot analyze: wrote %s\n", o.html)
	}
	return nil
}
