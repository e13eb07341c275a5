package main

import (
	"errors"
	"fmt"
	"strconv"
	"strings"

	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/power/sim"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

type sizeOptions struct {
	req     power.Request
	factors []string
	term    string
	design  string
	blocks  int
	means   string
	ratios  string
	compare string
	json    bool
	justify bool
	curve   string
	force   bool
	command string
	sim     simOptions
	split   *splitPlotSize // --design split-plot (size_strata.go)
}

func newSizeCmd(s *streams, runF func(*sizeOptions) error) *cobra.Command {
	o := &sizeOptions{}
	cmd := &cobra.Command{
		Use:   "size [flags]",
		Short: "Sample size, power or detectable effect, with a written justification",
		Long: `Solve for the units per group (or blocks) that give the target power, report
the power at a given n (--n), or the smallest detectable effect at n
(--n N --detect). Every value is exact: the noncentral F distribution for F
tests, the noncentral t for t tests and planned comparisons.

The layout: --groups K (one-way) or --factor NAME=LEVELS (repeatable; LEVELS
is a count or a comma list) with --term NAME (main effect) or
--term NAME1,NAME2 (interaction); --design rcbd for randomised complete
blocks, where n counts blocks and --sd is the SD within a block (or give the
total SD with --block-share, the share of variance the blocks explain);
--blocks B evaluates B blocks. --ratios 2,1,1 gives unequal allocation.

The effect, one of: --f (Cohen's f), --eta2, --means with --sd (expected
group means), --diff with --sd (smallest difference between any two means
that matters; planned for the least favourable configuration), or --d (two
groups, standardised difference; selects the t test). --pilot-n M replaces
--sd by its upper confidence limit from a pilot of M units.

--compare control|dunnett|pairs plans t comparisons of each group with the
first (the control; Bonferroni or Dunnett critical value) or of all pairs
(Bonferroni), for --diff with --sd (or --d).
--dropout R adds the attrition allowance n/(1−R), rounded up.

--simulate estimates power by simulating --sims data sets from --means with
--sd (or per-group --sds), --block-sd, random losses (--dropout, each unit
lost with that probability), subsamples (--subsamples, --subsample-sd), and
running allot's own ANOVA on each (Type III), with --posthoc tukey|dunnett
comparisons if asked; it reports each test's power with its Monte-Carlo
standard error and a 95% interval, and without --n searches for n, starting
from the exact answer. Results are reproducible with --seed, whatever the
number of --workers; Ctrl-C stops early and prints what is done.` + "\n" + exitHelp,
		Example: `  # Four groups, medium effect (Cohen's f = 0.25), 90% power
  allot size --groups 4 --f 0.25 --power 0.9

  # Expected means and SD from a pilot of 8 animals, 15% attrition, with a justification
  allot size --means 12,15,15,18 --sd 3 --pilot-n 8 --dropout 0.15 --justify

  # Power of 6 benches in randomised complete blocks
  allot size --design rcbd --groups 5 --f 0.6 --blocks 6

  # Smallest detectable difference with 10 per group, two groups, one-sided
  allot size --groups 2 --sides 1 --n 10 --detect --sd 4

  # Power by simulation with unequal SDs and 10% losses, 6 blocks
  allot size --simulate --design rcbd --means 10,11,12,13 --sds 1.5,1.5,2,2.5 \
    --block-sd 1 --dropout 0.1 --blocks 6 --seed 7`,
		Args: cobra.NoArgs,
		RunE: func(c *cobra.Command, args []string) error {
			o.command = commandLine(c)
			if err := o.resolve(c); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return sizeRun(s, o)
		},
	}
	f := cmd.Flags()
	f.IntVar(&o.req.Groups, "groups", 0, "number of groups `K` of a one-way layout")
	f.StringArrayVar(&o.factors, "factor", nil, "factor `NAME=LEVELS` (a count or a comma list); repeat for a factorial")
	f.StringVar(&o.term, "term", "", "effect to plan for in a factorial: `NAME` or NAME1,NAME2 for an interaction")
	f.StringVar(&o.design, "design", "crd", "`crd` (completely randomised), rcbd (randomised complete blocks) or split-plot")
	f.IntVar(&o.blocks, "blocks", 0, "evaluate `B` blocks (implies --design rcbd and --n B)")
	f.StringVar(&o.ratios, "ratios", "", "unequal allocation, one `RATIO` per group, for example 2,1,1")
	f.Float64Var(&o.req.Alpha, "alpha", 0.05, "significance level `A`")
	f.Float64Var(&o.req.Power, "power", 0.80, "target power `P`")
	f.IntVar(&o.req.Sides, "sides", 2, "`1` or 2 sides, for t tests and comparisons")
	f.IntVar(&o.req.N, "n", 0, "report power at `N` units per group (blocks for rcbd) instead of solving")
	f.BoolVar(&o.req.Detect, "detect", false, "with --n: report the smallest detectable effect at the target power")
	f.Float64Var(&o.req.F, "f", 0, "effect size as Cohen's `f`")
	f.Float64Var(&o.req.Eta2, "eta2", 0, "effect size as the proportion of variance explained, `E`")
	f.StringVar(&o.means, "means", "", "expected group means `M1,M2,...` in the response's units (needs --sd)")
	f.Float64Var(&o.req.SD, "sd", 0, "SD `S` of the response between units (within blocks for rcbd)")
	f.Float64Var(&o.req.Diff, "diff", 0, "smallest difference `D` between two means that matters (needs --sd)")
	f.Float64Var(&o.req.D, "d", 0, "standardised difference `D` between two groups (t test)")
	f.IntVar(&o.req.PilotN, "pilot-n", 0, "the --sd came from a pilot of `M` units: plan with its upper confidence limit")
	f.Float64Var(&o.req.PilotConf, "pilot-conf", 0.8, "confidence `C` of the pilot SD's upper limit")
	f.Float64Var(&o.req.BlockShare, "block-share", 0, "rcbd: share `R` of the total variance (--sd) explained by blocks")
	f.StringVar(&o.compare, "compare", "", "plan comparisons: `control` (each group with group 1, Bonferroni), dunnett (the same, Dunnett) or pairs")
	f.Float64Var(&o.req.Dropout, "dropout", 0, "expected attrition fraction `R`: also report n/(1−R)")
	f.BoolVar(&o.json, "json", false, "print one JSON object instead of the summary")
	f.BoolVar(&o.justify, "justify", false, "also print a paragraph for an ethics or grant application")
	f.StringVar(&o.curve, "curve", "", "write a power curve to `FILE` (.svg or .png)")
	f.BoolVar(&o.force, "force", false, "overwrite an existing --curve file")
	o.addSimFlags(f)
	addSplitPlotSizeFlags(f, o)
	return cmd
}

// resolve turns the flag strings into the request.
func (o *sizeOptions) resolve(c *cobra.Command) error {
	r := &o.req
	if o.design == "split-plot" {
		return o.resolveSplitPlot(c)
	}
	switch o.design {
	case "crd":
	case "rcbd":
		r.Blocked = true
	default:
		return usagef("--design %s: must be crd (completely randomised) or rcbd (randomised complete blocks)", o.design)
	}
	if c.Flags().Changed("blocks") {
		if o.blocks < 2 {
			return usagef("--blocks %d: a block design needs at least 2 blocks", o.blocks)
		}
		if c.Flags().Changed("n") {
			return usagef("--blocks %d: give either --blocks or --n, not both", o.blocks)
		}
		r.Blocked, r.N = true, o.blocks
	}
	for _, spec := range o.factors {
		name, levels, ok := strings.Cut(spec, "=")
		name = strings.TrimSpace(name)
		if !ok || name == "" || levels == "" {
			return usagef("--factor %s: write NAME=LEVELS, for example dose=3 or diet=chow,fat", spec)
		}
		k, err := strconv.Atoi(levels)
		names := sim.Levels(max(k, 0))
		if err != nil {
			list := strings.Split(levels, ",")
			seen := map[string]bool{}
			names = nil
			for _, l := range list {
				l = strings.TrimSpace(l)
				if l == "" || seen[l] {
					return usagef("--factor %s: level names must be non-empty and distinct", spec)
				}
				seen[l] = true
				names = append(names, l)
			}
			k = len(list)
		}
		o.sim.levels = append(o.sim.levels, names)
		if k < 2 {
			return usagef("--factor %s: factor %q needs at least 2 levels", spec, name)
		}
		r.Factors = append(r.Factors, power.Factor{Name: name, Levels: k})
	}
	if o.term != "" {
		for _, t := range strings.Split(o.term, ",") {
			r.Term = append(r.Term, strings.TrimSpace(t))
		}
	}
	var err error
	if r.Means, err = floatList("means", o.means); err != nil {
		return err
	}
	if r.Ratios, err = floatList("ratios", o.ratios); err != nil {
		return err
	}
	switch o.compare {
	case "":
		r.Test = power.TestF
		if r.D > 0 || r.Sides == 1 {
			r.Test = power.TestT
		}
	case "control":
		r.Test = power.TestControl
	case "pairs":
		r.Test = power.TestAllPairs
	case "dunnett":
		r.Test = power.TestDunnett
	default:
		return usagef("--compare %s: must be control, dunnett or pairs", o.compare)
	}
	if o.curve != "" && !strings.HasSuffix(o.curve, ".svg") && !strings.HasSuffix(o.curve, ".png") {
		return usagef("--curve %s: the file name must end in .svg or .png", o.curve)
	}
	if o.json && o.justify {
		return usagef("--justify: the justification is part of the summary; drop --json or --justify")
	}
	return nil
}

// commandLine reconstructs the invocation from the flags that were set, in
// alphabetical order, so that a justification names the exact command to
// re-run.
func commandLine(c *cobra.Command) string {
	parts := []string{c.CommandPath()}
	c.Flags().Visit(func(f *pflag.Flag) {
		if sv, ok := f.Value.(pflag.SliceValue); ok {
			for _, v := range sv.GetSlice() {
				parts = append(parts, "--"+f.Name, shellQuote(v))
			}
			return
		}
		if f.Value.Type() == "bool" {
			parts = append(parts, "--"+f.Name)
			return
		}
		parts = append(parts, "--"+f.Name, shellQuote(f.Value.String()))
	})
	return strings.Join(parts, " ")
}

// shellQuote quotes s for a POSIX shell when it holds anything but safe
// characters.
func shellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789.,=_-+:/") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

func floatList(flag, s string) ([]float64, error) {
	if s == "" {
		return nil, nil
	}
	var out []float64
	for _, p := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil {
			return nil, usagef("--%s %s: %q is not a number; give a comma list such as 10,12.5,14", flag, s, p)
		}
		out = append(out, v)
	}
	return out, nil
}

func sizeRun(s *streams, o *sizeOptions) error {
	if o.design == "split-plot" {
		return splitPlotSizeRun(s, o)
	}
	if o.sim.on {
		return simulateRun(s, o)
	}
	ans, err := power.Compute(o.req)
	var fe *power.FieldError
	if errors.As(err, &fe) {
		return &usageError{err: err}
	}
	if err != nil {
		return err
	}
	rep := report.Size{Answer: ans, Command: o.command, Version: version.String()}
	if o.curve != "" {
		pts, err := power.CurvePoints(o.req, ans)
		if err != nil {
			return err
		}
		if err := report.PowerCurve(o.curve, pts, ans, o.force); err != nil {
			return inputErr(err)
		}
		fmt.Fprintf(s.Err, "allot size: wrote %s\n", o.curve)
	}
	if o.json {
		return report.SizeJSON(s.Out, rep)
	}
	if err := report.SizeText(s.Out, rep); err != nil {
		return err
	}
	if o.justify {
		fmt.Fprintln(s.Out)
		return report.JustificationText(s.Out, rep)
	}
	return nil
}
