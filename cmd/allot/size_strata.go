package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/signal"
	"strconv"
	"strings"

	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// splitPlotSize holds the flags of allot size --design split-plot.
type splitPlotSize struct {
	whole, sub   string
	sdMain       float64
	sdSub        float64
	inBlocks     bool
	mainPlotName string
	plan         power.SplitPlotPlan
	term         int
	r            int // 0: solve
}

// addSplitPlotSizeFlags defines the split-plot flags of allot size.
func addSplitPlotSizeFlags(f *pflag.FlagSet, o *sizeOptions) {
	o.split = &splitPlotSize{}
	f.StringVar(&o.split.whole, "whole-plot", "", "split-plot: the whole-plot factor `NAME=LEVELS` (a count or a comma list)")
	f.StringVar(&o.split.sub, "sub-plot", "", "split-plot: the sub-plot factor `NAME=LEVELS`")
	f.Float64Var(&o.split.sdMain, "sd-main", 0, "split-plot: SD `S` between main plots of one whole-plot level (0 or more)")
	f.Float64Var(&o.split.sdSub, "sd-sub", 0, "split-plot: SD `S` between sub-plots within a main plot")
	f.BoolVar(&o.split.inBlocks, "in-blocks", false, "split-plot: main plots in blocks (n counts blocks); --blocks B implies it")
	f.StringVar(&o.split.mainPlotName, "whole-plot-name", "", "split-plot: what a main plot is called, `NAME` (chamber, cage)")
}

// resolveSplitPlot checks the flags of allot size --design split-plot.
func (o *sizeOptions) resolveSplitPlot(c *cobra.Command) error {
	sp := o.split
	for _, name := range []string{"groups", "factor", "f", "eta2", "diff", "d", "compare", "ratios", "curve", "pilot-n", "sds", "block-sd", "subsamples", "subsample-sd", "posthoc", "block-share", "sd", "justify"} {
		if c.Flags().Changed(name) {
			return usagef("--%s is not available with --design split-plot: give --whole-plot, --sub-plot, --means (the whole-plot × sub-plot cell means), --sd-main and --sd-sub", name)
		}
	}
	wn, a, err := countLevels("whole-plot", sp.whole)
	if err != nil {
		return err
	}
	sn, b, err := countLevels("sub-plot", sp.sub)
	if err != nil {
		return err
	}
	means, err := floatList("means", o.means)
	if err != nil {
		return err
	}
	if len(means) != a*b {
		return usagef("--means: %d values for the %d × %d = %d cells of %s × %s; give one mean per cell, %s slowest (%s1 with each %s, then %s2 …)", len(means), a, b, a*b, wn, sn, wn, wn, sn, wn)
	}
	if !c.Flags().Changed("sd-sub") {
		return usagef("--sd-sub: give the SD between sub-plots within a main plot (and --sd-main, the SD between main plots)")
	}
	sp.plan = power.SplitPlotPlan{A: a, B: b, Means: means, SDMain: sp.sdMain, SDSub: sp.sdSub, Blocked: sp.inBlocks, Alpha: o.req.Alpha, WholeName: wn, SubName: sn}
	if c.Flags().Changed("blocks") {
		if c.Flags().Changed("n") {
			return usagef("--blocks %d: give either --blocks or --n, not both", o.blocks)
		}
		sp.plan.Blocked, sp.r = true, o.blocks
	}
	if c.Flags().Changed("n") {
		sp.r = o.req.N
	}
	if c.Flags().Changed("blocks") || c.Flags().Changed("n") {
		if sp.r < 2 {
			return usagef("--n %d: give at least 2 (blocks, or main plots per %s level)", sp.r, wn)
		}
	}
	switch strings.TrimSpace(o.term) {
	case "", wn:
		sp.term = 0
	case sn:
		sp.term = 1
	case wn + "," + sn, sn + "," + wn:
		sp.term = 2
	default:
		return usagef("--term %s: give %s (the whole-plot test, the default), %s or %s,%s (the interaction)", o.term, wn, sn, wn, sn)
	}
	if err := sp.plan.Validate(); err != nil {
		return usagef("--design split-plot: %v", err)
	}
	if o.sim.on && o.sim.sims < 1 {
		return usagef("--sims %d: give at least 1", o.sim.sims)
	}
	if !(o.req.Dropout >= 0 && o.req.Dropout < 1) {
		return usagef("--dropout %g: give a fraction from 0 to below 1", o.req.Dropout)
	}
	return nil
}

// countLevels parses NAME=LEVELS (a count or a comma list).
func countLevels(flag, spec string) (string, int, error) {
	name, levels, ok := strings.Cut(spec, "=")
	name = strings.TrimSpace(name)
	if !ok || name == "" || levels == "" {
		return "", 0, usagef("--%s %q: write NAME=LEVELS, for example light=2 or light=low,high", flag, spec)
	}
	k, err := strconv.Atoi(strings.TrimSpace(levels))
	if err != nil {
		k = len(strings.Split(levels, ","))
	}
	if k < 2 {
		return "", 0, usagef("--%s %s: needs at least 2 levels", flag, spec)
	}
	return name, k, nil
}

// splitPlotSizeRun solves for the replication, or evaluates the power at
// --n or --blocks, and prints the result.
func splitPlotSizeRun(s *streams, o *sizeOptions) error {
	sp := o.split
	rep := report.SplitPlotSize{Plan: sp.plan, MainFor: sp.mainPlotName, Command: o.command}
	if sp.r > 0 {
		rep.R, rep.Tests = sp.r, sp.plan.Evaluate(sp.r)
	} else {
		r, tests, err := sp.plan.Solve(sp.term, o.req.Power)
		if err != nil {
			if errors.Is(err, power.ErrTooLarge) {
				return &failedError{err: err}
			}
			return usagef("--design split-plot: %v", err)
		}
		term := sp.term
		rep.R, rep.Tests, rep.Term, rep.Target = r, tests, &term, o.req.Power
	}
	if o.sim.on {
		seed, err := simSeed(s, o.sim.seed)
		if err != nil {
			return err
		}
		ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
		defer stop()
		res, err := sim.RunSplitPlot(ctx, sim.SplitPlotSpec{Plan: sp.plan, R: rep.R, Dropout: o.req.Dropout, Sims: o.sim.sims, Seed: seed})
		if err != nil {
			return usagef("--simulate: %v", err)
		}
		rep.Simulated, rep.SimDropout, rep.SimSeed = &res, o.req.Dropout, seed
	}
	if o.json {
		return report.SplitPlotSizeJSON(s.Out, rep)
	}
	return report.SplitPlotSizeText(s.Out, rep)
}

// simSeed parses --seed, or draws one and says so.
func simSeed(s *streams, text string) (uint64, error) {
	if text == "" {
		v, err := randomize.NewSeed()
		if err != nil {
			return 0, err
		}
		fmt.Fprintf(s.Err, "allot size: no --seed given; drew seed %d (give --seed %d to repeat this simulation)\n", v, v)
		return v, nil
	}
	v, err := strconv.ParseUint(strings.TrimSpace(text), 10, 64)
	if err != nil {
		return 0, usagef("--seed %s: must be an unsigned whole number", text)
	}
	return v, nil
}
