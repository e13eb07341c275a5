package main

import (
	"fmt"

	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
)

// latinSize holds the plan of allot size --design latin.
type latinSize struct {
	plan    power.LatinPlan
	squares int
}

// resolveLatin reads --means (one per treatment) and --sd, and --squares S
// to evaluate S squares (else the fewest squares for --power).
func (o *sizeOptions) resolveLatin(c *cobra.Command) error {
	for _, name := range []string{"factor", "f", "eta2", "diff", "d", "compare", "ratios", "curve", "pilot-n", "sds", "block-sd", "subsamples", "blocks", "n", "simulate", "justify", "resource", "covariate-r"} {
		if c.Flags().Changed(name) {
			return usagef("--%s is not available with --design latin: give --means (one per treatment), --sd and, to evaluate, --squares S", name)
		}
	}
	means, err := options.FloatList("means", o.means)
	if err != nil {
		return usagef("%s", err)
	}
	p := power.LatinPlan{Means: means, SD: o.req.SD, Alpha: o.req.Alpha}
	if c.Flags().Changed("groups") && o.req.Groups != len(means) {
		return usagef("--groups %d: %d means were given", o.req.Groups, len(means))
	}
	if err := p.Validate(); err != nil {
		return usagef("--design latin: %v", err)
	}
	o.latin = &latinSize{plan: p, squares: o.squares}
	if c.Flags().Changed("squares") && o.squares < 1 {
		return usagef("--squares %d: give 1 or more", o.squares)
	}
	return nil
}

// latinSizeRun answers the Latin-square question.
func latinSizeRun(s *streams, o *sizeOptions) error {
	l := o.latin
	var r power.LatinTest
	if l.squares > 0 {
		r = l.plan.Evaluate(l.squares)
	} else {
		var err error
		if r, err = l.plan.Solve(o.req.Power); err != nil {
			return inputErr(err)
		}
	}
	rep := report.LatinSize{Plan: l.plan, Test: r, Target: o.req.Power, Evaluate: l.squares > 0, Command: o.command}
	if o.json {
		return report.LatinSizeJSON(s.Out, rep)
	}
	_, err := fmt.Fprint(s.Out, report.LatinSizeText(rep))
	return err
}
