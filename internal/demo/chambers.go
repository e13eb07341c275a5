package demo

import (
	"bytes"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"
)

// Chambers is the second demo scenario, a split plot: two light regimes,
// each set per growth chamber (the main plot), with three lettuce varieties
// in pots within every chamber (the sub-plots). Invented for the demo; its
// numbers come from no study.
type Chambers struct {
	Title              string
	Light, Variety     design.Factor
	Response           design.Response
	PlanMeans          []float64 // light × variety cells, light slowest
	PlanSDMain, PlanSD float64
	Alpha, Power       float64
	Seed               uint64
	// TrueMeans, TrueSDMain and TrueSD generate the simulated data.
	TrueMeans          []float64
	TrueSDMain, TrueSD float64
}

// DefaultChambers is the split-plot demo scenario.
func DefaultChambers() Chambers {
	return Chambers{
		Title:      "Light regimes in growth chambers, three lettuce varieties per chamber (invented demo scenario)",
		Light:      design.Factor{Name: "light", Levels: []string{"12h", "16h"}},
		Variety:    design.Factor{Name: "variety", Levels: []string{"Butterhead", "Oakleaf", "Romaine"}},
		Response:   design.Response{Name: "fresh_g", Min: f64(0), Max: f64(200)},
		PlanMeans:  []float64{20, 22, 21, 23.5, 25.5, 24},
		PlanSDMain: 1,
		PlanSD:     1.2,
		Alpha:      0.05,
		Power:      0.80,
		Seed:       20261202,
		TrueMeans:  []float64{20.4, 22.1, 20.8, 23.9, 25.2, 24.6},
		TrueSDMain: 1.1,
		TrueSD:     1.2,
	}
}

// Files of the chambers scenario.
const (
	FileChambersWorkbook = "chambers.xlsx"
	FileChambersFilled   = "chambers-filled-SIMULATED.xlsx"
	FileChambersLayout   = "chambers-layout.json"
	FileChambersReport   = "chambers-report-SIMULATED.md"
)

// ChambersResult is what RunChambers produced, for tests.
type ChambersResult struct {
	R        int
	Layout   design.Layout
	Analysis report.StrataAnalysis
	Files    []string
}

// RunChambers runs the split-plot scenario end to end: the number of
// chambers per light regime (exact noncentral F for the whole-plot test),
// the seeded layout, the workbook, a copy filled with SIMULATED values
// (chamber effects and pot-to-pot variation), the read-back check and the
// two-stratum analysis.
func RunChambers(s Chambers, o Options) (*ChambersResult, error) {
	if o.Now == nil {
		o.Now = time.Now
	}
	if err := prepareOut(o.Out, o.Force); err != nil {
		return nil, err
	}
	out := o.Stdout
	res := &ChambersResult{}
	files := &Result{}
	section := func(t string) { fmt.Fprintf(out, "\n== %s ==\n\n", t) }
	fmt.Fprintf(out, "allot demo --scenario chambers: %s\n", s.Title)
	fmt.Fprintf(out, "Every measurement below is SIMULATED; the scenario is invented.\n")

	section("1. How many chambers? (allot size --design split-plot)")
	plan := power.SplitPlotPlan{A: len(s.Light.Levels), B: len(s.Variety.Levels), Means: s.PlanMeans, SDMain: s.PlanSDMain, SDSub: s.PlanSD,
		Alpha: s.Alpha, WholeName: s.Light.Name, SubName: s.Variety.Name}
	r, tests, err := plan.Solve(0, s.Power)
	if err != nil {
		return nil, err
	}
	res.R = r
	term := 0
	if err := report.SplitPlotSizeText(out, report.SplitPlotSize{Plan: plan, R: r, Target: s.Power, Term: &term, Tests: tests, MainFor: "chamber"}); err != nil {
		return nil, err
	}

	section("2. Layout (allot layout --design split-plot)")
	seed := design.SeedText(s.Seed)
	spec := design.Spec{Title: s.Title, Design: string(design.SplitPlot), Seed: &seed, WholePlotName: "chamber", Reps: fmt.Sprint(r),
		WholePlot: []string{s.Light.Name + "=" + strings.Join(s.Light.Levels, ",")},
		SubPlot:   []string{s.Variety.Name + "=" + strings.Join(s.Variety.Levels, ",")},
		Response:  []string{fmt.Sprintf("%s:%g..%g", s.Response.Name, *s.Response.Min, *s.Response.Max)}}
	p, err := spec.Resolve(nil)
	if err != nil {
		return nil, err
	}
	lay, err := randomize.Assign(p)
	if err != nil {
		return nil, err
	}
	res.Layout = lay
	if err := report.LayoutText(out, lay); err != nil {
		return nil, err
	}
	var lj bytes.Buffer
	report.LayoutJSON(&lj, lay)
	if err := writeFile(o.Out, FileChambersLayout, lj.String(), files); err != nil {
		return nil, err
	}
	wb := filepath.Join(o.Out, FileChambersWorkbook)
	if err := workbook.Write(wb, lay, workbook.Meta{Version: o.Version, Created: o.Now()}, o.Force); err != nil {
		return nil, err
	}
	files.Files = append(files.Files, wb)

	section("3. SIMULATED measurements (the stand-in for the technician)")
	rng := rand.New(randomize.Stream(s.Seed, 1<<38))
	chamber := map[int]float64{}
	ys := make([]float64, len(lay.Units))
	for i, u := range lay.Units {
		if _, ok := chamber[u.MainPlot]; !ok {
			chamber[u.MainPlot] = s.TrueSDMain * rng.NormFloat64()
		}
		ys[i] = math.Round((s.TrueMeans[u.Treatment]+chamber[u.MainPlot]+s.TrueSD*rng.NormFloat64())*10) / 10
	}
	filled := filepath.Join(o.Out, FileChambersFilled)
	if err := workbook.Fill(wb, filled, [][]float64{ys}, SimulatedLabel, o.Force); err != nil {
		return nil, err
	}
	files.Files = append(files.Files, filled)
	fmt.Fprintf(out, "Wrote %s: each chamber's effect drawn once (SD %g), each pot's own variation on top (SD %g).\n", filled, s.TrueSDMain, s.TrueSD)

	section("4. Check and analysis (allot analyze)")
	fl, err := workbook.Read(filled, workbook.ReadOptions{})
	if err != nil {
		return nil, err
	}
	if n := fl.Errors(); n > 0 {
		return nil, fmt.Errorf("the filled demo workbook has %d error(s)", n)
	}
	a, err := report.RunStrata(p, s.Response.Name, fl.StrataObservations(0), s.Alpha)
	if err != nil {
		return nil, err
	}
	a.Alpha, a.Simulated = s.Alpha, true
	res.Analysis = a
	if err := report.StrataText(out, a); err != nil {
		return nil, err
	}
	var md bytes.Buffer
	fmt.Fprintf(&md, "# %s\n\n**SIMULATED DATA** — produced by `allot demo --scenario chambers`; the scenario is invented.\n\n", s.Title)
	if err := report.StrataMarkdown(&md, a); err != nil {
		return nil, err
	}
	if err := writeFile(o.Out, FileChambersReport, md.String(), files); err != nil {
		return nil, err
	}
	res.Files = files.Files
	fmt.Fprintf(out, "\nFiles: %s\n", strings.Join(res.Files, ", "))
	return res, nil
}
