package options

import (
	"fmt"
	"strings"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
)

// Analysis holds the settings of allot analyze that apply to every input.
type Analysis struct {
	SS      int     // --ss 1, 2 or 3
	Alpha   float64 // --alpha
	PostHoc string  // --posthoc tukey|dunnett|holm|none
	Control string  // --control LEVEL (default: the plan's control)
	Sides   int     // --sides 1 or 2
}

// Validate checks the settings; errors are *Error naming the flag.
func (a Analysis) Validate() error {
	if a.SS < 1 || a.SS > 3 {
		return errorf("ss", "--ss %d: must be 1, 2 or 3 (Type I sequential, II, or III)", a.SS)
	}
	if !(a.Alpha > 0 && a.Alpha < 1) {
		return errorf("alpha", "--alpha %g: must be between 0 and 1 (for example 0.05)", a.Alpha)
	}
	switch a.PostHoc {
	case analyze.MethodTukey, analyze.MethodDunnett, analyze.MethodHolm, analyze.MethodNone:
	default:
		return errorf("posthoc", "--posthoc %s: must be tukey, dunnett, holm or none", a.PostHoc)
	}
	if a.Sides != 1 && a.Sides != 2 {
		return errorf("sides", "--sides %d: must be 1 or 2", a.Sides)
	}
	return nil
}

// Job is one response to analyse.
type Job struct {
	Data      analyze.Data
	Missing   int
	Control   string
	Unit      string
	BlockName string
	Simulated bool
}

// Run analyses the job with the settings a; the plan's control is the
// default for Dunnett.
func (j Job) Run(a Analysis) (*analyze.Result, error) {
	control := a.Control
	if control == "" {
		control = j.Control
	}
	if a.PostHoc == analyze.MethodDunnett && control == "" {
		return nil, errorf("posthoc", "--posthoc dunnett: give --control LEVEL (the plan names no control)")
	}
	return analyze.Run(j.Data, analyze.RunOptions{
		Options: analyze.Options{SSType: a.SS, Alpha: a.Alpha},
		PostHoc: a.PostHoc, Control: control, Sides: a.Sides,
	})
}

// CheckFailedError says that the check of a filled file found errors, which
// must be corrected before analysis.
type CheckFailedError struct{ Msg string }

func (e *CheckFailedError) Error() string { return e.Msg }

// WorkbookJobs returns one job per response of the checked workbook fl (only
// response, when given), the plan and the check's findings as lines. file
// names the workbook in messages. A check with errors gives a
// *CheckFailedError, an unknown response an *Error for --response.
func WorkbookJobs(fl *workbook.Filled, file, response string) ([]Job, *design.Plan, []string, error) {
	if n := fl.Errors(); n > 0 {
		var b strings.Builder
		for _, p := range fl.Problems {
			if p.Severity == workbook.Error {
				b.WriteString("\n  " + p.String())
			}
		}
		return nil, nil, nil, &CheckFailedError{Msg: fmt.Sprintf("%s: %d error(s) must be corrected before analysis (allot check lists them):%s", file, n, b.String())}
	}
	if fl.Sealed {
		return nil, nil, nil, fmt.Errorf("%s: the workbook is blind; give its --key to unblind it for analysis", file)
	}
	p := fl.Layout.Plan
	var out []Job
	for k, r := range fl.Responses {
		if response != "" && r != response {
			continue
		}
		obs := fl.Observations(k)
		if len(obs.Values) == 0 && len(obs.Subsamples) == 0 {
			return nil, nil, nil, fmt.Errorf("%s: response %q has no values yet; fill it in first", file, r)
		}
		var names [][]string
		var fnames []string
		for _, f := range p.Factors {
			fnames = append(fnames, f.Name)
			names = append(names, f.Levels)
		}
		block := ""
		if p.Design == design.RCBD {
			block = p.BlockName
		}
		d := DataOf(r, obs, fnames, names, block)
		d.BlockInteraction = p.Generalised()
		out = append(out, Job{Data: d, Missing: len(fl.Layout.Units) - len(obs.Units), Control: p.Control, Unit: "unit", BlockName: p.BlockName, Simulated: fl.Simulated()})
	}
	if len(out) == 0 {
		return nil, nil, nil, errorf("response", "--response %s: the plan has no such response (responses: %s)", response, strings.Join(fl.Responses, ", "))
	}
	var check []string
	for _, pr := range fl.Problems {
		check = append(check, pr.String())
	}
	return out, &p, check, nil
}

// DataOf turns observations into analysis data.
func DataOf(response string, obs workbook.Observations, factors []string, levels [][]string, block string) analyze.Data {
	d := analyze.Data{Response: response, Values: obs.Values, Subsamples: obs.Subsamples, Units: obs.Units, Where: obs.Cells}
	for i, f := range factors {
		c := analyze.Column{Name: f, Values: obs.Levels[i]}
		if levels != nil {
			c.Levels = levels[i]
		}
		d.Factors = append(d.Factors, c)
	}
	if block != "" && obs.Blocks != nil {
		d.Block = &analyze.Column{Name: block, Values: obs.Blocks}
	}
	return d
}
