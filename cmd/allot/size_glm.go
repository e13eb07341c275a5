package main

import (
	"context"
	"fmt"
	"math"
	"os"
	"os/signal"
	"strconv"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

// glmSizeFlags are allot size's inputs for a count or proportion response.
type glmSizeFlags struct {
	proportions    string
	counts         string
	trials         int
	overdispersion float64
}

func (g *glmSizeFlags) add(c *cobra.Command) {
	f := c.Flags()
	f.StringVar(&g.proportions, "proportions", "", "plan a proportion response: the expected proportion in each group `P1,P2,...` (with --trials)")
	f.StringVar(&g.counts, "counts", "", "plan a count response: the expected mean count per unit in each group `M1,M2,...`")
	f.IntVar(&g.trials, "trials", 0, "proportions: the trials per unit `N` (seeds per pot, animals per cage)")
	f.Float64Var(&g.overdispersion, "overdispersion", 0, "with --simulate: variation between units beyond the model, `X` (proportions: the intra-unit correlation; counts: φ of a negative binomial, variance μ + φμ²)")
}

func (g *glmSizeFlags) on() bool { return g.proportions != "" || g.counts != "" }

// glmPlan builds the power.GLMPlan from the flags; other effect flags are
// refused with it.
func (o *sizeOptions) glmPlan(c *cobra.Command) (power.GLMPlan, error) {
	g := o.glm
	if g.proportions != "" && g.counts != "" {
		return power.GLMPlan{}, usagef("--proportions and --counts: give one (a response is a proportion or a count)")
	}
	for _, name := range []string{"f", "eta2", "d", "diff", "means", "sd", "factor", "design", "compare", "ratios", "resource", "pilot-n", "covariate-r", "sds", "subsamples", "subsample-sd", "posthoc"} {
		if c.Flags().Changed(name) {
			return power.GLMPlan{}, usagef("--%s goes with a measured response; for counts and proportions give --proportions or --counts with --groups (a one-way completely randomised comparison)", name)
		}
	}
	p := power.GLMPlan{Alpha: o.req.Alpha, Trials: g.trials}
	var err error
	if g.proportions != "" {
		p.Family = power.FamilyBinomial
		if p.Means, err = options.FloatList("proportions", g.proportions); err != nil {
			return p, usagef("%s", err)
		}
		if g.trials < 1 {
			return p, usagef("--trials %d: give the trials per unit, for example --trials 50 for 50 seeds per pot", g.trials)
		}
	} else {
		p.Family = power.FamilyPoisson
		if p.Means, err = options.FloatList("counts", g.counts); err != nil {
			return p, usagef("%s", err)
		}
		if c.Flags().Changed("trials") {
			return p, usagef("--trials goes with --proportions")
		}
	}
	if c.Flags().Changed("groups") && o.req.Groups != len(p.Means) {
		return p, usagef("--groups %d: %d groups were given", o.req.Groups, len(p.Means))
	}
	if !(o.req.Alpha > 0 && o.req.Alpha < 1) {
		return p, usagef("--alpha %g: must be between 0 and 1 (for example 0.05)", o.req.Alpha)
	}
	if !(o.req.Power > 0 && o.req.Power < 1) {
		return p, usagef("--power %g: must be between 0 and 1 (for example 0.8)", o.req.Power)
	}
	if !(o.req.Dropout >= 0 && o.req.Dropout < 1) {
		return p, usagef("--dropout %g: must be from 0 up to (not including) 1", o.req.Dropout)
	}
	if (c.Flags().Changed("blocks") || c.Flags().Changed("block-sd") || c.Flags().Changed("overdispersion")) && !o.sim.on {
		return p, usagef("--blocks, --block-sd and --overdispersion with --proportions or --counts need --simulate (the exact power is for a completely randomised layout without extra variation)")
	}
	if c.Flags().Changed("n") && o.req.N < 2 {
		return p, usagef("--n %d: at least 2 units per group", o.req.N)
	}
	if err := p.Validate(); err != nil {
		return p, usagef("--%s: %s", map[string]string{power.FamilyBinomial: "proportions", power.FamilyPoisson: "counts"}[p.Family], err)
	}
	return p, nil
}

// glmSizeRun answers a count or proportion planning question.
func glmSizeRun(s *streams, o *sizeOptions, p power.GLMPlan) error {
	if o.sim.on {
		return glmSimulateRun(s, o, p)
	}
	var r power.GLMResult
	mode := "sample size"
	if o.req.N > 0 {
		r, mode = p.Evaluate(o.req.N), "power"
	} else {
		var err error
		if r, err = p.Solve(o.req.Power); err != nil {
			return inputErr(err)
		}
	}
	sz := report.GLMSize{Plan: p, Result: r, Mode: mode, Target: o.req.Power, Dropout: o.req.Dropout, Study: o.study,
		Levels: o.levels, Command: o.command, Version: version.String()}
	if o.req.Dropout > 0 {
		sz.NDropout = int(math.Ceil(float64(r.N)/(1-o.req.Dropout) - 1e-9))
	}
	if o.json {
		return report.GLMSizeJSON(s.Out, sz)
	}
	_, err := fmt.Fprint(s.Out, report.GLMSizeText(sz))
	return err
}

// glmSimulateRun estimates the power of the GLM analysis by simulation
// (power/sim.RunGLM) at --n units per group, or --blocks blocks.
func glmSimulateRun(s *streams, o *sizeOptions, p power.GLMPlan) error {
	n, blocked := o.req.N, false
	if o.blocks > 0 {
		n, blocked = o.blocks, true
	}
	if n < 2 {
		return usagef("--simulate with --proportions or --counts: give --n N (units per group) or --blocks B")
	}
	levels := sim.Levels(len(p.Means))
	if o.levels != "" {
		levels = nil
		for _, l := range strings.Split(o.levels, ",") {
			levels = append(levels, strings.TrimSpace(l))
		}
		if len(levels) != len(p.Means) {
			return usagef("--levels %s: %d names for %d groups", o.levels, len(levels), len(p.Means))
		}
	}
	plan, err := sim.PlanFor([]string{"group"}, [][]string{levels}, blocked, n, nil)
	if err != nil {
		return usagef("%s", err)
	}
	lay, err := randomize.Assign(plan)
	if err != nil {
		return err
	}
	seed := uint64(1)
	if o.sim.seed != "" {
		v, err := design.ParseSeed(o.sim.seed)
		if err != nil {
			return usagef("--seed %s: must be an unsigned whole number", o.sim.seed)
		}
		seed = v
	}
	spec := sim.GLMSpec{Layout: lay, Family: p.Family, Means: p.Means, Trials: p.Trials, BlockSD: o.sim.blockSD,
		Overdispersion: o.glm.overdispersion, Dropout: o.req.Dropout, Alpha: p.Alpha, Sims: o.sim.sims, Seed: seed}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	res, err := sim.RunGLM(ctx, spec)
	if err != nil {
		return usagef("%s", err)
	}
	design := fmt.Sprintf("completely randomised, %d groups of %d", len(p.Means), n)
	if blocked {
		design = fmt.Sprintf("%d blocks of %d (one unit of each group per block; block SD %s on the link scale)", n, len(p.Means), strconv.FormatFloat(o.sim.blockSD, 'g', -1, 64))
	}
	rep := report.GLMSimulation{Plan: p, Design: design, Result: res, Overdispersion: o.glm.overdispersion, Dropout: o.req.Dropout,
		Seed: seed, Command: o.command, Version: version.String()}
	if o.json {
		return report.GLMSimulationJSON(s.Out, rep)
	}
	_, err = fmt.Fprint(s.Out, report.GLMSimulationText(rep))
	return err
}
