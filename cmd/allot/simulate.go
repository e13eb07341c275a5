package main

import (
	"context"
	"errors"
	"fmt"
	"github.com/allotproject/allot/design"
	"os"
	"os/signal"

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
	c.StringVar(&s.posthoc, "posthoc", "", "simulate: also the planned comparisons, `tukey` or dunnett (against the control)")
	c.IntVar(&s.workers, "workers", 0, "simulate: parallel workers `W` (default: all cores; the result does not depend on it)")
	c.BoolVar(&s.quiet, "quiet", false, "no progress bar")
}

// simulateRun answers allot size --simulate: it parses the simulation
// flags, draws a seed if none was given, and hands the question to
// power/sim, which decides everything statistical.
func simulateRun(s *streams, o *sizeOptions) error {
	so := o.sim
	q := sim.Question{Request: o.req, BlockSD: so.blockSD, Subsamples: so.subsamples, SubsampleSD: so.subsampleSD,
		PostHoc: so.posthoc, Sims: so.sims, Workers: so.workers}
	if so.sds != "" {
		v, err := floatList("sds", so.sds)
		if err != nil {
			return err
		}
		q.SDs = v
	}
	if so.seed == "" {
		v, err := randomize.NewSeed()
		if err != nil {
			return err
		}
		q.Seed = v
		fmt.Fprintf(s.Err, "allot size: no --seed given; drew seed %d (give --seed %d to repeat this simulation)\n", v, v)
	} else {
		v, err := design.ParseSeed(so.seed)
		if err != nil {
			return usagef("--seed %s: must be an unsigned whole number", so.seed)
		}
		q.Seed = v
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	var bar *progressbar.ProgressBar
	if f, ok := s.Err.(*os.File); ok && !so.quiet && term.IsTerminal(int(f.Fd())) {
		bar = progressbar.NewOptions(so.sims, progressbar.OptionSetWriter(f), progressbar.OptionSetDescription("simulating"),
			progressbar.OptionShowCount(), progressbar.OptionClearOnFinish(), progressbar.OptionThrottle(100_000_000))
		q.Progress = func(done int) { bar.Set(done) }
	}
	a, err := sim.Ask(ctx, q)
	var fe *power.FieldError
	if errors.As(err, &fe) {
		return &usageError{err: err}
	}
	if err != nil {
		return inputErr(err)
	}
	if bar != nil {
		bar.Finish()
	}
	rep := report.Simulation{Design: a.Design, Model: a.Model, Analysis: a.Analysis, PostHocRule: a.PostHocRule, Term: a.Term, N: a.N, NUnit: a.NUnit,
		Units: a.Units, Target: a.Target, Result: a.Result, Tried: a.Tried, Exact: a.Exact, Seed: q.Seed, Command: o.command, Version: version.String()}
	if o.json {
		return report.SimulationJSON(s.Out, rep)
	}
	if err := report.SimulationText(s.Out, rep); err != nil {
		return err
	}
	if a.Result.Cancelled {
		return &failedError{err: errors.New("simulation interrupted; the estimates above use the data sets done so far")}
	}
	return nil
}
