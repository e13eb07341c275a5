package main

import (
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/report"

	"github.com/spf13/pflag"
)

const methodsHelp = `
Beyond the ANOVA: --method welch (Welch's ANOVA and Games–Howell, for
unequal variances; one factor) or rank (Kruskal–Wallis without blocks,
Friedman with them, with Dunn's or Conover's comparisons); --family binomial
(successes out of --trials N or --trials COLUMN) or poisson (counts) fits a
GLM with likelihood-ratio tests and back-transformed means; --transform
log|sqrt|logit analyses a transformed response. A workbook's declared
response kind chooses by itself (counts: Poisson, proportions: binomial,
scores: rank). --covariate NAME adjusts for a baseline measurement
(analysis of covariance). Responses measured at several times (layout
--times) are analysed as a split plot in time with sphericity corrections,
or by one summary per unit with --summary slope|auc|final.`

// addMethodFlags defines the flags of the other analyses.
func (o *analyzeOptions) addMethodFlags(f *pflag.FlagSet) {
	m := &o.methods
	f.StringVar(&m.Method, "method", "", "`anova` (default), welch (unequal variances) or rank (Kruskal–Wallis; Friedman with blocks)")
	f.StringVar(&m.Family, "family", "", "a GLM for counts (`poisson`) or successes out of trials (binomial)")
	f.StringVar(&m.Trials, "trials", "", "binomial: the trials per unit, a number `N` or the COLUMN that holds them")
	f.StringVar(&m.Transform, "transform", "", "analyse a transformed response: `log`, sqrt or logit")
	f.StringVar(&m.Covariate, "covariate", "", "adjust for the baseline covariate `NAME` (a column, or the plan's --covariate)")
	f.StringVar(&m.Summary, "summary", "", "repeated measurements: one number per unit, `slope`, auc or final, then the ANOVA")
}

// methodRun analyses job j by its method when it is not the plain ANOVA,
// writing text or Markdown to w; it returns the JSON entry, or handled false
// for the ANOVA path.
func (o *analyzeOptions) methodRun(w io.Writer, j *job, plan *design.Plan) (*report.MethodDoc, bool, error) {
	kind := ""
	if r, ok := options.ResponseKind(plan, j.Data.Response); ok {
		kind = r.Kind
	}
	method, family := o.methods.Choose(kind)
	md := o.format == "markdown"
	switch {
	case o.methods.Covariate != "":
		if j.Covariate == nil {
			return nil, true, usagef("--covariate %s: no such covariate in %s", o.methods.Covariate, o.read.file)
		}
		res, err := analyze.ANCOVA(j.Data, o.methods.Covariate, j.Covariate, analyze.Options{SSType: o.ss, Alpha: o.alpha})
		if err != nil {
			return nil, true, inputErr(fmt.Errorf("%s: %s: %w", o.read.file, j.Data.Response, err))
		}
		if j.ModelNote != "" {
			res.Notes = append(res.Notes, j.ModelNote)
		}
		c := report.Covariance{ANCOVAResult: res, Unit: o.unit}
		return &report.MethodDoc{Response: j.Data.Response, Method: "ancova", Result: res}, true, o.render(w, func() error {
			if md {
				return report.CovarianceMarkdown(w, c)
			}
			return report.CovarianceText(w, c)
		})
	case method == analyze.MethodANOVA:
		return nil, false, nil
	}
	opt := analyze.MethodOptions{Method: method, Family: family, Trials: j.Trials, Alpha: o.alpha, SSType: o.ss}
	if o.posthoc == analyze.MethodTukey || o.posthoc == analyze.MethodHolm || o.posthoc == analyze.MethodNone {
		opt.PostHoc = o.posthoc
	}
	if family == analyze.FamilyBinomial && j.Trials == nil {
		return nil, true, usagef("--trials: a binomial response needs the trials per unit (--trials N or --trials COLUMN)")
	}
	res, err := analyze.RunMethod(j.Data, opt)
	if err != nil {
		return nil, true, inputErr(fmt.Errorf("%s: %s: %w", o.read.file, j.Data.Response, err))
	}
	if res.GLM != nil && j.ModelNote != "" {
		res.GLM.Notes = append(res.GLM.Notes, j.ModelNote)
	}
	m := report.Method{MethodResult: res, Unit: j.Unit, Missing: j.Missing, Simulated: j.Simulated}
	return &report.MethodDoc{Response: j.Data.Response, Method: method, Result: res}, true, o.render(w, func() error {
		if md {
			return report.MethodMarkdown(w, m)
		}
		return report.MethodText(w, m)
	})
}

// render runs r unless the output is JSON (written once at the end).
func (o *analyzeOptions) render(w io.Writer, r func() error) error {
	if o.format == "json" {
		return nil
	}
	return r()
}

// attachExtras gives each workbook job its covariate values and trials.
func (o *analyzeOptions) attachExtras(jobs []job, fl *workbook.Filled) error {
	p := fl.Layout.Plan
	index := map[string]int{}
	for k, r := range fl.Responses {
		index[r] = k
	}
	for i := range jobs {
		j := &jobs[i]
		k := index[j.Data.Response]
		obs := fl.Observations(k)
		if name := o.methods.Covariate; name != "" {
			kc, ok := index[name]
			if !ok {
				return usagef("--covariate %s: the plan has no such measurement (record it with allot layout --covariate %s)", name, name)
			}
			keep, x := options.AlignTo(obs, fl.Observations(kc))
			if len(keep) < obs.Units.Len() {
				j.ModelNote = strings.TrimSpace(j.ModelNote + " " + fmt.Sprintf("%d unit(s) with no value of %s were left out of the analysis of covariance.", obs.Units.Len()-len(keep), name))
			}
			j.Data, j.Covariate = options.Subset(j.Data, keep), x
		}
		r := p.Responses[k]
		switch {
		case r.Kind == design.KindProportion && r.Trials > 0:
			j.Trials = make([]float64, j.Data.Values.Len())
			for t := range j.Trials {
				j.Trials[t] = float64(r.Trials)
			}
		case r.Kind == design.KindProportion && r.TrialsColumn != "":
			kt, ok := index[r.TrialsColumn]
			if !ok {
				return inputErr(fmt.Errorf("%s: the trials column %s of %s is missing", o.read.file, r.TrialsColumn, r.Name))
			}
			keep, tv := options.AlignTo(workbook.Observations{Units: j.Data.Units}, fl.Observations(kt))
			j.Data = options.Subset(j.Data, keep)
			if j.Covariate != nil {
				j.Covariate = pickStrings(j.Covariate, keep)
			}
			j.Trials = make([]float64, len(tv))
			for t, v := range tv {
				fmt.Sscan(v, &j.Trials[t])
			}
		case o.methods.Trials != "":
			if err := o.fixedTrials(j); err != nil {
				return err
			}
		}
	}
	return nil
}

func pickStrings(v []string, idx []int) []string {
	out := make([]string, len(idx))
	for k, i := range idx {
		out[k] = v[i]
	}
	return out
}

func (o *analyzeOptions) fixedTrials(j *job) error {
	n, ok := options.FixedTrials(o.methods.Trials)
	if !ok {
		return usagef("--trials %s: give the number of trials per unit (a column only with a plain CSV table)", o.methods.Trials)
	}
	if n < 1 {
		return usagef("--trials %d: must be 1 or more", n)
	}
	j.Trials = make([]float64, j.Data.Values.Len())
	for t := range j.Trials {
		j.Trials[t] = float64(n)
	}
	return nil
}

// attachPlainExtras reads a plain CSV table's covariate or trials column
// for the job, matched by line.
func (o *analyzeOptions) attachPlainExtras(j *job, obs workbook.Observations) error {
	read := func(col string) (workbook.Observations, error) {
		f, err := os.Open(o.read.file)
		if err != nil {
			return workbook.Observations{}, inputErr(err)
		}
		defer f.Close()
		x, _, err := workbook.ReadRoles(f, o.read.file, workbook.Roles{Response: col, Factors: o.factors, Block: o.block, Unit: o.unitCol}, o.read.decimalComma)
		if err != nil {
			return x, inputErr(err)
		}
		return x, nil
	}
	if name := o.methods.Covariate; name != "" {
		x, err := read(name)
		if err != nil {
			return err
		}
		keep, vals := options.AlignTo(obs, x)
		j.Data, j.Covariate = options.Subset(j.Data, keep), vals
		obs.Units = obs.Units.Pick(keep)
	}
	if t := o.methods.Trials; t != "" {
		if _, fixed := options.FixedTrials(t); fixed {
			return o.fixedTrials(j)
		}
		x, err := read(t)
		if err != nil {
			return err
		}
		keep, vals := options.AlignTo(obs, x)
		j.Data = options.Subset(j.Data, keep)
		if j.Covariate != nil {
			j.Covariate = pickStrings(j.Covariate, keep)
		}
		j.Trials = make([]float64, len(vals))
		for i, v := range vals {
			fmt.Sscan(v, &j.Trials[i])
		}
	}
	return nil
}

// repeatedWorkbook is returned by jobs for a workbook whose responses are
// measured at several times.
type repeatedWorkbook struct{ fl *workbook.Filled }

func (e *repeatedWorkbook) Error() string { return "repeated measurements" }

// analyzeRepeated analyses each response measured at several times: as a
// split plot in time, or with --summary by one number per unit and the
// ANOVA.
func analyzeRepeated(s *streams, o *analyzeOptions, fl *workbook.Filled) error {
	if fl.Errors() > 0 {
		var first string
		for _, p := range fl.Problems {
			if p.Severity == workbook.Error {
				first = p.String()
				break
			}
		}
		return &failedError{err: fmt.Errorf("%s: %d error(s) must be corrected before analysis (allot check lists them), first: %s", o.read.file, fl.Errors(), first)}
	}
	if fl.Sealed {
		return inputErr(fmt.Errorf("%s: the workbook is blind; give its --key to unblind it for analysis", o.read.file))
	}
	var docs []report.MethodDoc
	var anovas []report.Analysis
	groups := options.Repeated(fl)
	if o.html != "" && o.response == "" && len(groups) > 1 {
		return usagef("--report %s: %d responses are measured at several times; name one with --response", o.html, len(groups))
	}
	if o.html != "" && o.methods.Summary != "" {
		return usagef("--report with --summary: the summary's ANOVA has no page of its own yet; use --format markdown")
	}
	for i, rm := range groups {
		if o.response != "" && rm.Response != o.response {
			continue
		}
		if i > 0 && o.format != "json" {
			fmt.Fprintln(s.Out)
		}
		if o.methods.Summary != "" {
			d, dropped, err := analyze.Summarise(rm, o.methods.Summary)
			if err != nil {
				return inputErr(fmt.Errorf("%s: %s: %w", o.read.file, rm.Response, err))
			}
			res, err := analyze.Run(d, analyze.RunOptions{Options: analyze.Options{SSType: o.ss, Alpha: o.alpha}, PostHoc: o.posthoc, Control: fl.Layout.Plan.Control, Sides: o.sides})
			if err != nil {
				return inputErr(fmt.Errorf("%s: %s: %w", o.read.file, rm.Response, err))
			}
			if len(dropped) > 0 {
				res.Notes = append(res.Notes, fmt.Sprintf("Left out, lacking what the %s needs: %v.", o.methods.Summary, dropped))
			}
			a := report.Analysis{Result: res, Missing: len(dropped), Unit: "unit", Simulated: fl.Simulated()}
			anovas = append(anovas, a)
			if err := o.render(s.Out, func() error {
				if o.format == "markdown" {
					return report.AnalysisMarkdown(s.Out, a)
				}
				return report.AnalysisText(s.Out, a)
			}); err != nil {
				return err
			}
			continue
		}
		res, err := analyze.SplitPlotInTime(rm, o.alpha)
		if err != nil {
			return inputErr(fmt.Errorf("%s: %s: %w", o.read.file, rm.Response, err))
		}
		docs = append(docs, report.MethodDoc{Response: rm.Response, Method: "repeated", Result: res})
		pr := report.Profiles{RMResult: res, Unit: o.unit}
		if err := o.render(s.Out, func() error {
			if o.format == "markdown" {
				return report.ProfilesMarkdown(s.Out, pr)
			}
			return report.ProfilesText(s.Out, pr)
		}); err != nil {
			return err
		}
		if o.html != "" {
			if err := atomicfile.Write(o.html, o.force, func(w io.Writer) error { return report.ProfilesHTML(w, pr, o.command, version.String()) }); err != nil {
				return inputErr(err)
			}
			fmt.Fprintf(s.Err, "allot analyze: wrote %s\n", o.html)
		}
		if o.plots != "" {
			fig, err := report.ProfileFigure(pr)
			if err != nil {
				return err
			}
			fig.Name = rm.Response + "-profiles"
			written, err := report.WriteFigures(o.plots, []report.Figure{fig}, o.force)
			if err != nil {
				return inputErr(err)
			}
			fmt.Fprintf(s.Err, "allot analyze: wrote %d figure files into %s\n", len(written), o.plots)
		}
	}
	if len(docs) == 0 && len(anovas) == 0 {
		return usagef("--response %s: no response of the plan is measured at several times under that name", o.response)
	}
	if o.format == "json" {
		return report.AnalysesWithMethodsJSON(s.Out, version.String(), anovas, docs)
	}
	return nil
}
