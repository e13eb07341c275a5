package options

import (
	"errors"
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
	// Direction is --direction higher|lower (one-sided Dunnett), Trend the
	// --trend factors, RandomBlocks --blocks random.
	Direction    string
	Trend        []string
	RandomBlocks bool
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
	// ModelNote says why the model differs from the obvious one.
	ModelNote string
	// Covariate holds a baseline covariate's value per observation and
	// Trials the trials of a binomial response, when the analysis uses
	// them.
	Covariate []string
	Trials    []float64
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
		PostHoc: a.PostHoc, Control: control, Sides: a.Sides, Direction: a.Direction,
		Trend: a.Trend, RandomBlocks: a.RandomBlocks,
	})
}

// CheckFailedError says that the check of a filled file found errors, which
// must be corrected before analysis.
type CheckFailedError struct{ Msg string }

func (e *CheckFailedError) Error() string { return e.Msg }

// ErrStrata is WorkbookJobs's error for a split-plot or Latin-square plan,
// whose analysis has strata of its own (report.RunStrata).
var ErrStrata = errors.New("a split-plot or Latin-square workbook is analysed stratum by stratum (report.RunStrata), not as separate jobs")

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
	if p.Strata() {
		// As separate jobs the whole-plot factor (or the rows and columns)
		// would be tested against the wrong error.
		return nil, nil, nil, fmt.Errorf("%s: %w", file, ErrStrata)
	}
	var out []Job
	trialsCols := map[string]bool{}
	for _, r := range p.Responses {
		if r.TrialsColumn != "" {
			trialsCols[r.TrialsColumn] = true
		}
	}
	for k, r := range fl.Responses {
		if response != "" && r != response {
			continue
		}
		if response == "" && k < len(p.Responses) && (p.Responses[k].Covariate || trialsCols[r]) {
			continue // a baseline covariate or a trials column is not an outcome
		}
		obs := fl.Observations(k)
		if obs.Values.Len() == 0 && len(obs.Subsamples) == 0 {
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
		d.Lost = LostUnits(fl, k, obs)
		note := ""
		if matchedBlocks(p) {
			note = fmt.Sprintf("The %s were formed by matching units on a covariate measured before allocation (weight-matched blocks), so the %s term already adjusts for it; a baseline covariate given with --covariate is adjusted for within the blocks as well.", design.Plural(p.BlockName), p.BlockName)
		}
		out = append(out, Job{ModelNote: note, Data: d, Missing: len(fl.Layout.Units) - obs.Units.Len(), Control: p.Control, Unit: "unit", BlockName: p.BlockName, Simulated: fl.Simulated()})
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

// matchedBlocks reports whether the plan's blocks were formed by matching on
// a covariate (layout --match-on): its units carry the covariate's values.
func matchedBlocks(p design.Plan) bool {
	for _, u := range p.Units {
		if u.Covariate != nil {
			return true
		}
	}
	return false
}

// PlainJob is the job of a plain CSV table with the roles of its columns:
// with blocks in which every treatment appears twice or more, the block ×
// treatment term is in the model, as it would be for the same data read
// through its plan, and the job says so.
func PlainJob(response string, obs workbook.Observations, factors []string, block string, missing int) Job {
	d := DataOf(response, obs, factors, nil, block)
	j := Job{Data: d, Missing: missing, Unit: "unit", BlockName: block}
	if d.Block != nil && analyze.Replicated(d) {
		j.Data.BlockInteraction = true
		j.ModelNote = fmt.Sprintf("Every treatment appears at least twice in every %s, so the %s × treatment interaction is in the model (a generalised block design), as it would be for the same data read through its plan.", block, block)
	}
	return j
}

// LostUnits lists the units of the layout that are not analysed for
// response r: those marked lost or excluded in the Status column (with
// their reason), then those with no value. Data plumbing only: analyze
// builds the loss table from it.
func LostUnits(fl *workbook.Filled, r int, obs workbook.Observations) []analyze.LostUnit {
	tr := fl.Layout.Plan.Treatments()
	seen := map[string]bool{}
	var out []analyze.LostUnit
	for _, l := range obs.Losses {
		seen[l.Unit] = true
		out = append(out, analyze.LostUnit{Unit: l.Unit, Levels: l.Levels, Status: l.Status, Reason: l.Reason})
	}
	for i, u := range fl.Layout.Units {
		if !fl.Values[r][i].Missing || seen[u.ID] || u.Treatment < 0 {
			continue
		}
		out = append(out, analyze.LostUnit{Unit: u.ID, Levels: tr[u.Treatment].Levels, Status: "lost", Reason: "no value recorded"})
	}
	return out
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
	if block != "" && obs.Blocks.Len() > 0 {
		d.Block = &analyze.Column{Name: block, Values: obs.Blocks}
	}
	return d
}
