// Package demo runs allot's whole job on an embedded, invented scenario: a
// growth-room trial of peat-free substrate blends for seedlings, with the
// growth-room benches as blocks. It plans the number of benches, lays the
// trial out, writes the data-entry workbook, fills a copy with SIMULATED
// measurements (the stand-in for the technician), reads it back, analyses
// it and writes the reports. The scenario is made up for the demo; its
// numbers come from no study.
package demo

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"
)

// Scenario is the embedded trial.
type Scenario struct {
	Title    string
	Factor   string
	Levels   []string
	Control  string
	Response design.Response
	// PlanMeans are the expected means used for planning; PlanSD the
	// within-bench SD assumed (from the invented pilot).
	PlanMeans []float64
	PlanSD    float64
	Alpha     float64
	Power     float64
	Dropout   float64
	BlockName string
	Seed      uint64
	// TrueMeans, TrueSD and BlockSD generate the simulated data.
	TrueMeans []float64
	TrueSD    float64
	BlockSD   float64
}

func f64(v float64) *float64 { return &v }

// Default is the demo scenario.
func Default() Scenario {
	return Scenario{
		Title:     "Peat-free substrate blends for basil seedlings (invented demo scenario)",
		Factor:    "substrate",
		Levels:    []string{"peat", "coir", "bark", "woodfibre"},
		Control:   "peat",
		Response:  design.Response{Name: "shoot_dry_mg", Min: f64(0), Max: f64(500)},
		PlanMeans: []float64{140, 128, 120, 132},
		PlanSD:    11,
		Alpha:     0.05,
		Power:     0.90,
		Dropout:   0.10,
		BlockName: "bench",
		Seed:      20261201,
		TrueMeans: []float64{141, 127, 118, 134},
		TrueSD:    11,
		BlockSD:   9,
	}
}

// Options controls a demo run.
type Options struct {
	Out     string
	Force   bool
	Version string
	Now     func() time.Time
	Stdout  io.Writer
	Stderr  io.Writer
}

// ErrOut matches (errors.Is) every error about an output folder that cannot
// be used: not a folder, not writable, or not empty without Force.
var ErrOut = errors.New("unusable output folder")

// ErrOutExists matches an output folder that is not empty without Force.
var ErrOutExists = errors.New("output folder is not empty")

// outError is a message about the output folder that matches ErrOut (and
// ErrOutExists when the folder was not empty) and wraps its cause.
type outError struct {
	msg      string
	nonEmpty bool
	err      error
}

func (e *outError) Error() string { return e.msg }
func (e *outError) Unwrap() error { return e.err }
func (e *outError) Is(target error) bool {
	return target == ErrOut || (e.nonEmpty && target == ErrOutExists)
}

func outErr(err error, format string, args ...any) error {
	return &outError{msg: fmt.Sprintf(format, args...), err: err}
}

// Result is what a run produced, for tests.
type Result struct {
	Size      power.Answer
	Layout    design.Layout
	Table     *analyze.Table
	PostHoc   *analyze.PostHoc
	Problems  []workbook.Problem
	Files     []string
	Simulated sim.Estimate // Monte-Carlo power of the laid-out trial with losses
}

// Files written into the output folder.
const (
	FileWorkbook      = "trial.xlsx"
	FileFilled        = "trial-filled-SIMULATED.xlsx"
	FileJustification = "sample-size.txt"
	FileLayout        = "layout.json"
	FileReport        = "report-SIMULATED.md"
	FileAnalysis      = "analysis-SIMULATED.json"
	FileHTML          = "report-SIMULATED.html"
	FileMap           = "bench-map.svg"
	FileCurve         = "power-curve.svg"
	DirFigures        = "figures"
)

// SimulatedLabel marks every simulated value.
const SimulatedLabel = "SIMULATED by allot demo: not measurements"

// Run executes the demo.
func Run(s Scenario, o Options) (*Result, error) {
	if o.Now == nil {
		o.Now = time.Now
	}
	if err := prepareOut(o.Out, o.Force); err != nil {
		return nil, err
	}
	r := &runner{s: s, o: o, out: o.Stdout, res: &Result{}}
	fmt.Fprintf(r.out, "allot demo: %s\n", s.Title)
	fmt.Fprintf(r.out, "Every measurement below is SIMULATED; the scenario is invented.\n")
	steps := []struct {
		title   string
		do      func() error
		partial bool // on failure, return what was done (the problems found)
	}{
		{"1. Sample size", r.sampleSize, false},
		{"2. Randomised layout", r.layOut, false},
		{"3. Data-entry workbook", r.workbook, false},
		{"4. Read-back check", r.readBack, true},
		{"5. Analysis (SIMULATED data)", r.analyse, false},
	}
	for _, st := range steps {
		fmt.Fprintf(r.out, "\n== %s ==\n\n", st.title)
		if err := st.do(); err != nil {
			if st.partial {
				return r.res, err
			}
			return nil, err
		}
	}
	fmt.Fprintf(r.out, "\n== Files ==\n\n")
	for _, p := range r.res.Files {
		fmt.Fprintln(r.out, "  "+p)
	}
	fmt.Fprintln(o.Stderr, "allot demo: done")
	return r.res, nil
}

// runner carries one demo run from step to step.
type runner struct {
	s   Scenario
	o   Options
	out io.Writer
	res *Result

	nDrop  int              // benches laid out, attrition allowed for
	lay    design.Layout    // the randomised trial
	filled string           // the simulated copy of the workbook
	fl     *workbook.Filled // the copy read back
}

func (r *runner) sizeRequest() power.Request {
	s := r.s
	return power.Request{
		Factors: []power.Factor{{Name: s.Factor, Levels: len(s.Levels)}},
		Blocked: true,
		Means:   s.PlanMeans,
		SD:      s.PlanSD,
		Alpha:   s.Alpha,
		Power:   s.Power,
	}
}

// sampleSize: how many benches? The exact solve, its justification and
// power curve, and a Monte-Carlo check of the attrition allowance.
func (r *runner) sampleSize() error {
	s, out := r.s, r.out
	req := r.sizeRequest()
	req.Dropout = s.Dropout
	ans, err := power.Compute(req)
	if err != nil {
		return err
	}
	r.res.Size = ans
	ans.NUnit = design.Plural(s.BlockName)
	ans.SDText = fmt.Sprintf("%s mg within a %s (from an invented pilot)", trim(s.PlanSD, 3), s.BlockName)
	r.nDrop = ans.NDropout
	rep := report.Size{Answer: ans, Command: "allot demo", Version: r.o.Version}
	if err := report.SizeText(out, rep); err != nil {
		return err
	}
	if err := r.writeFile(FileJustification, report.Justification(rep)+"\n"); err != nil {
		return err
	}
	curve, err := power.CurvePoints(r.sizeRequest(), ans)
	if err != nil {
		return err
	}
	if err := report.PowerCurve(filepath.Join(r.o.Out, FileCurve), curve, ans, true); err != nil {
		return err
	}
	r.res.Files = append(r.res.Files, filepath.Join(r.o.Out, FileCurve))
	fmt.Fprintf(out, "\nThe demo lays out %d %s, the allowance for attrition (%s%%) applied: losses in a growth room are seedlings that fail.\n", r.nDrop, design.Plural(s.BlockName), trim(100*s.Dropout, 3))
	return r.checkAllowance()
}

// checkAllowance checks the attrition allowance by simulation: the real
// analysis on data sets that lose each pot with the expected probability.
func (r *runner) checkAllowance() error {
	s := r.s
	simPlan, err := sim.PlanFor([]string{s.Factor}, [][]string{s.Levels}, true, r.nDrop, nil)
	if err != nil {
		return err
	}
	simLayout, err := randomize.Assign(simPlan)
	if err != nil {
		return err
	}
	mc, err := sim.Run(context.Background(), sim.Spec{Layout: simLayout, Means: s.PlanMeans, SDs: []float64{s.PlanSD}, BlockSD: s.BlockSD,
		Dropout: s.Dropout, Alpha: s.Alpha, SSType: 3, Sims: 2000, Seed: s.Seed})
	if err != nil {
		return err
	}
	for _, t := range mc.Terms {
		if t.Name == s.Factor {
			r.res.Simulated = t
			fmt.Fprintf(r.out, "Monte-Carlo check: with %d %s and each pot lost with probability %s, the F test of %s rejects in %s of 2000 simulated trials (MC SE %s, 95%% interval %s–%s).\n",
				r.nDrop, design.Plural(s.BlockName), trim(s.Dropout, 3), s.Factor, trim(t.P, 3), trim(t.SE, 2), trim(t.Lower, 3), trim(t.Upper, 3))
		}
	}
	return nil
}

// layOut: which pot gets which substrate? The layout, its JSON and map.
func (r *runner) layOut() error {
	s := r.s
	plan := design.Plan{
		Title:     s.Title,
		Design:    design.RCBD,
		Factors:   []design.Factor{{Name: s.Factor, Levels: s.Levels}},
		Control:   s.Control,
		Reps:      ones(len(s.Levels)),
		Blocks:    r.nDrop,
		BlockName: s.BlockName,
		Responses: []design.Response{s.Response},
		Seed:      s.Seed,
		Generator: randomize.Generator,
		Order:     true,
		// Each bench is a 2 × 2 tray of pots, numbered back and forth.
		Grid: &design.Grid{Rows: 2, Cols: 2, Numbering: design.Serpentine},
	}
	lay, err := randomize.Assign(plan)
	if err != nil {
		return err
	}
	r.lay, r.res.Layout = lay, lay
	if err := report.LayoutText(r.out, lay); err != nil {
		return err
	}
	var lj strings.Builder
	if err := report.LayoutJSON(&lj, lay); err != nil {
		return err
	}
	if err := r.writeFile(FileLayout, lj.String()); err != nil {
		return err
	}
	mapSVG, err := report.MapFigure(lay).Render("svg")
	if err != nil {
		return err
	}
	return r.writeFile(FileMap, string(mapSVG))
}

// workbook writes the data-entry workbook and its simulated filling.
func (r *runner) workbook() error {
	s, o := r.s, r.o
	wbPath := filepath.Join(o.Out, FileWorkbook)
	if err := workbook.Write(wbPath, r.lay, workbook.Meta{Version: o.Version, Created: o.Now()}, o.Force); err != nil {
		return err
	}
	r.res.Files = append(r.res.Files, wbPath)
	fmt.Fprintf(r.out, "Wrote %s (sheets %s, %s, %s).\n", wbPath, workbook.SheetStudy, workbook.SheetEntry, workbook.SheetMap)
	if err := r.writePaper(r.lay, r.o.Now()); err != nil {
		return err
	}
	ys, err := sim.Responses(r.lay, sim.Model{Means: s.TrueMeans, SD: s.TrueSD, BlockSD: s.BlockSD, Decimals: 1}, s.Seed)
	if err != nil {
		return err
	}
	r.filled = filepath.Join(o.Out, FileFilled)
	if err := workbook.Fill(wbPath, r.filled, [][]float64{ys}, SimulatedLabel, o.Force); err != nil {
		return err
	}
	r.res.Files = append(r.res.Files, r.filled)
	fmt.Fprintf(r.out, "Wrote %s: a copy filled with SIMULATED values (seed %d) standing in for the technician.\n", r.filled, s.Seed)
	return nil
}

// readBack reads the filled copy and checks it cell by cell.
func (r *runner) readBack() error {
	fl, err := workbook.Read(r.filled, workbook.ReadOptions{})
	if err != nil {
		return err
	}
	r.fl = fl
	r.res.Problems = fl.Problems
	if len(fl.Problems) == 0 {
		fmt.Fprintf(r.out, "%s: plan fingerprint verified; %d units, every row and cell as planned.\n", r.filled, len(fl.Layout.Units))
	}
	for _, p := range fl.Problems {
		fmt.Fprintln(r.out, p)
	}
	if fl.Errors() > 0 {
		return fmt.Errorf("the filled workbook has %d error(s)", fl.Errors())
	}
	return nil
}

// analyse runs the randomised-block ANOVA with Tukey HSD, then Dunnett
// against the control, and writes the reports and figures.
func (r *runner) analyse() error {
	s, out := r.s, r.out
	obs := r.fl.Observations(0)
	data := analyze.Data{
		Response: s.Response.Name,
		Values:   obs.Values,
		Factors:  []analyze.Column{{Name: s.Factor, Levels: s.Levels, Values: obs.Levels[0]}},
		Block:    &analyze.Column{Name: s.BlockName, Values: obs.Blocks},
		Units:    obs.Units,
		Where:    obs.Cells,
	}
	ar, err := analyze.Run(data, analyze.RunOptions{Options: analyze.Options{Alpha: s.Alpha}})
	if err != nil {
		return err
	}
	r.res.Table = ar.Table
	if len(ar.PostHoc) > 0 {
		r.res.PostHoc = ar.PostHoc[0]
	}
	an := report.Analysis{Result: ar, Unit: "pot", BlockName: s.BlockName, Simulated: true, Missing: len(r.lay.Units) - obs.Values.Len()}
	if err := report.AnalysisText(out, an); err != nil {
		return err
	}
	// The plan names a control: compare each blend with it as well.
	dr, err := analyze.Run(data, analyze.RunOptions{Options: analyze.Options{Alpha: s.Alpha}, PostHoc: analyze.MethodDunnett, Control: s.Control})
	if err != nil {
		return err
	}
	for _, ph := range dr.PostHoc {
		fmt.Fprintf(out, "\nEach blend against the %s control (Dunnett):\n", s.Control)
		if err := report.PostHocText(out, ph); err != nil {
			return err
		}
	}
	return r.reports(an)
}

// reports writes the Markdown, JSON and HTML reports and the figures.
func (r *runner) reports(an report.Analysis) error {
	s := r.s
	var md, js strings.Builder
	fmt.Fprintf(&md, "# %s\n\n**SIMULATED DATA** — produced by `allot demo`; the scenario is invented.\n\n", s.Title)
	if err := report.AnalysisMarkdown(&md, an); err != nil {
		return err
	}
	if err := r.writeFile(FileReport, md.String()); err != nil {
		return err
	}
	if err := report.AnalysisJSON(&js, an); err != nil {
		return err
	}
	if err := r.writeFile(FileAnalysis, js.String()); err != nil {
		return err
	}
	var page strings.Builder
	plan := r.lay.Plan
	check := []string{fmt.Sprintf("%s: the plan fingerprint matched and every row and design cell was as planned; all values are SIMULATED", FileFilled)}
	if err := report.HTML(&page, report.HTMLReport{Analyses: []report.Analysis{an}, Plan: &plan, Check: check,
		Command: "allot analyze " + FileFilled + " --report " + FileHTML + " --unit mg", Version: r.o.Version, Unit: "mg"}); err != nil {
		return err
	}
	if err := r.writeFile(FileHTML, page.String()); err != nil {
		return err
	}
	figs, err := report.AnalysisFigures(an, "mg")
	if err != nil {
		return err
	}
	written, err := report.WriteFigures(filepath.Join(r.o.Out, DirFigures), figs, true)
	if err != nil {
		return err
	}
	r.res.Files = append(r.res.Files, written...)
	return nil
}

// prepareOut makes sure the output folder exists, is empty unless force,
// and takes new files. Every error it returns wraps ErrOut.
func prepareOut(dir string, force bool) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
		if err := os.MkdirAll(dir, 0o777); err != nil {
			return outErr(err, "--out %s: cannot create the folder: %v", dir, err)
		}
	case err != nil:
		if st, serr := os.Stat(dir); serr == nil && !st.IsDir() {
			return outErr(err, "--out %s is a file; give a folder for the demo's files", dir)
		}
		return outErr(err, "--out %s: %v", dir, err)
	case len(entries) > 0 && !force:
		return &outError{msg: fmt.Sprintf("--out %s already holds %d file(s); choose another folder or add --force to overwrite the demo's files", dir, len(entries)), nonEmpty: true}
	}
	if err := atomicfile.Check(filepath.Join(dir, FileWorkbook), true); err != nil {
		return outErr(err, "--out %v", err)
	}
	return nil
}

func (r *runner) writeFile(name, content string) error {
	return writeFile(r.o.Out, name, content, r.res)
}

// writeFile writes content to dir/name (replacing it: the demo folder was
// checked before the run) and records the file in res.
func writeFile(dir, name, content string, res *Result) error {
	p := filepath.Join(dir, name)
	if err := atomicfile.Write(p, true, func(w io.Writer) error {
		_, err := io.WriteString(w, content)
		return err
	}); err != nil {
		return err
	}
	res.Files = append(res.Files, p)
	return nil
}

func ones(k int) []int {
	r := make([]int, k)
	for i := range r {
		r[i] = 1
	}
	return r
}

func trim(x float64, sig int) string { return fmt.Sprintf("%.*g", sig, x) }
