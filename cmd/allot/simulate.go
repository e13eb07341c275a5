package main

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"os/signal"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// simOptions are the flags of allot size --simulate.
type simOptions struct {
	on          bool
	sims        int
	seed        string
	sds         string
	blockSD     float64
	subsamples  int
	subsampleSD float64
	posthoc     string
	workers     int
	quiet       bool
	levels      [][]string // level names per --factor
}

func (o *sizeOptions) addSimFlags(c interface {
	BoolVar(*bool, string, bool, string)
	IntVar(*int, string, int, string)
	StringVar(*string, string, string, string)
	Float64Var(*float64, string, float64, string)
}) {
	s := &o.sim
	c.BoolVar(&s.on, "simulate", false, "estimate power by simulating data sets and running the analysis on each")
	c.IntVar(&s.sims, "sims", 2000, "simulate: number of data sets `N`")
	c.StringVar(&s.seed, "seed", "", "simulate: random seed `S` (drawn and printed when not given)")
	c.StringVar(&s.sds, "sds", "", "simulate: one SD per group `S1,S2,...` instead of --sd")
	c.Float64Var(&s.blockSD, "block-sd", 0, "simulate: SD `B` of the block effects")
	c.IntVar(&s.subsamples, "subsamples", 0, "simulate: `N` measurements per unit, averaged to the unit")
	c.Float64Var(&s.subsampleSD, "subsample-sd", 0, "simulate: SD `S` between measurements of one unit")
	c.StringVar(&s.posthoc, "posthoc", "", "simulate: also the planned comparisons, `tukey` or dunnett (against group 1)")
	c.IntVar(&s.workers, "workers", 0, "simulate: parallel workers `W` (default: all cores; the result does not depend on it)")
	c.BoolVar(&s.quiet, "quiet", false, "no progress bar")
}

// simulateRun answers allot size --simulate.
func simulateRun(s *streams, o *sizeOptions) error {
	r := o.req
	so := o.sim
	if len(r.Means) == 0 {
		return usagef("--simulate: give the expected --means (one per group or treatment cell) and --sd or --sds")
	}
	if so.sims < 1 {
		return usagef("--sims %d: give at least 1", so.sims)
	}
	sds := []float64{r.SD}
	if so.sds != "" {
		v, err := floatList("sds", so.sds)
		if err != nil {
			return err
		}
		sds = v
	} else if r.SD <= 0 {
		return usagef("--simulate: give --sd (or one SD per group with --sds)")
	}
	for _, v := range sds {
		if !(v > 0) {
			return usagef("--sds %s: every SD must be greater than 0", so.sds)
		}
	}
	if so.blockSD > 0 && !r.Blocked {
		return usagef("--block-sd %g: block effects need --design rcbd", so.blockSD)
	}
	if so.posthoc != "" && so.posthoc != "tukey" && so.posthoc != "dunnett" {
		return usagef("--posthoc %s: simulate tukey or dunnett", so.posthoc)
	}
	var seed uint64
	if so.seed == "" {
		v, err := randomize.NewSeed()
		if err != nil {
			return err
		}
		seed = v
		fmt.Fprintf(s.Err, "allot size: no --seed given; drew seed %d (give --seed %d to repeat this simulation)\n", seed, seed)
	} else {
		v, err := design.ParseSeed(so.seed)
		if err != nil {
			return usagef("--seed %s: must be an unsigned whole number", so.seed)
		}
		seed = v
	}
	// The layout's factors and level names.
	var names []string
	var levels [][]string
	if len(r.Factors) > 0 {
		for i, f := range r.Factors {
			names = append(names, f.Name)
			levels = append(levels, so.levels[i])
		}
	} else {
		k := r.Groups
		if k == 0 {
			k = len(r.Means)
		}
		names, levels = []string{"group"}, [][]string{sim.Levels(k)}
	}
	termName := names[0]
	if len(r.Term) > 0 {
		var ordered []string
		for _, n := range names {
			for _, t := range r.Term {
				if t == n {
					ordered = append(ordered, n)
				}
			}
		}
		termName = strings.Join(ordered, " × ")
	}
	planAt := func(n int) (design.Plan, error) { return sim.PlanFor(names, levels, r.Blocked, n, r.Ratios) }
	spec := sim.Spec{Means: r.Means, SDs: sds, BlockSD: so.blockSD, Dropout: r.Dropout, Subsamples: so.subsamples, SubsampleSD: so.subsampleSD,
		Alpha: r.Alpha, SSType: 3, PostHoc: so.posthoc, Sims: so.sims, Seed: seed, Workers: so.workers}
	if r.Alpha == 0 {
		spec.Alpha = 0.05
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	var bar *progressbar.ProgressBar
	if f, ok := s.Err.(*os.File); ok && !so.quiet && term.IsTerminal(int(f.Fd())) {
		bar = progressbar.NewOptions(so.sims, progressbar.OptionSetWriter(f), progressbar.OptionSetDescription("simulating"),
			progressbar.OptionShowCount(), progressbar.OptionClearOnFinish(), progressbar.OptionThrottle(100_000_000))
		spec.Progress = func(done int) { bar.Set(done) }
	}
	// The exact answer without losses, where the formula applies.
	exactReq := r
	exactReq.Dropout, exactReq.N, exactReq.Detect = 0, 0, false
	exact, exactErr := power.Compute(exactReq)
	rep := report.Simulation{Term: termName, Seed: seed, Command: o.command, Version: version.String(), Target: r.Power}
	var res sim.Result
	var n int
	if r.N > 0 {
		n = r.N
		p, err := planAt(n)
		if err != nil {
			return inputErr(err)
		}
		l, err := randomize.Assign(p)
		if err != nil {
			return inputErr(err)
		}
		spec.Layout = l
		if res, err = sim.Run(ctx, spec); err != nil {
			return inputErr(err)
		}
		rep.Target = 0
	} else {
		start := 2
		if exactErr == nil {
			start = int(math.Ceil(float64(exact.N) / (1 - r.Dropout)))
		}
		sol, err := sim.Solve(ctx, spec, planAt, termName, r.Power, start, 4*start+50)
		if err != nil {
			return inputErr(err)
		}
		n, res, rep.Tried = sol.N, sol.Result, sol.Tried
	}
	if bar != nil {
		bar.Finish()
	}
	if exactErr == nil && r.Dropout == 0 && len(sds) == 1 && so.subsamples <= 1 && so.subsampleSD == 0 {
		req := exactReq
		req.N = n
		if a, err := power.Compute(req); err == nil {
			rep.Exact = a.Power
		}
	}
	p, _ := planAt(n)
	rep.N, rep.Units, rep.Result = n, p.NumUnits(), res
	rep.NUnit = "units per group"
	rep.Design = fmt.Sprintf("completely randomised, %d treatments", len(p.Treatments()))
	if r.Blocked {
		rep.NUnit = "blocks"
		rep.Design = fmt.Sprintf("randomised complete blocks, %d treatments", len(p.Treatments()))
	}
	rep.Model = fmt.Sprintf("means %s, SD %s", o.means, joinSDs(sds))
	if so.blockSD > 0 {
		rep.Model += fmt.Sprintf(", block SD %g", so.blockSD)
	}
	if r.Dropout > 0 {
		rep.Model += fmt.Sprintf(", each unit lost with probability %g", r.Dropout)
	}
	if so.subsamples > 1 {
		rep.Model += fmt.Sprintf(", %d subsamples per unit with SD %g", so.subsamples, so.subsampleSD)
	}
	rep.Analysis = "ANOVA F tests (Type III) at alpha " + strconv.FormatFloat(spec.Alpha, 'g', -1, 64)
	if so.posthoc != "" {
		rep.Analysis += " with " + so.posthoc + " comparisons"
	}
	if o.json {
		return report.SimulationJSON(s.Out, rep)
	}
	if err := report.SimulationText(s.Out, rep); err != nil {
		return err
	}
	if res.Cancelled {
		return &failedError{err: errors.New("simulation interrupted; the estimates above use the data sets done so far")}
	}
	return nil
}

func joinSDs(v []float64) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = strconv.FormatFloat(x, 'g', -1, 64)
	}
	return strings.Join(s, ", ")
}
