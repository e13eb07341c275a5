package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/internal/version"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/report"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

type sizeOptions struct {
	req      power.Request
	study    report.Study
	factors  []string
	term     string
	design   string
	blocks   int
	means    string
	ratios   string
	levels   string
	compare  string
	json     bool
	justify  bool
	resource bool
	curve    string
	curveSD  string
	out      string
	layout   string
	force    bool
	command  string
	sim      simOptions
	glm      glmSizeFlags
	split    *splitPlotSize // --design split-plot (size_strata.go)
	latin    *latinSize     // --design latin (size_latin.go)
	squares  int
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

--means lists one mean per group; for a factorial, one per treatment cell
in the order of the full factorial with the first --factor varying slowest
(A=2, B=2: A1B1, A1B2, A2B1, A2B2). The planned term uses only its own
component of the cell means (its marginal means for a main effect, the
interaction contrast for an interaction).

--compare control|dunnett|pairs|pairs-bonferroni plans t comparisons of each
group with the control (--control LEVEL, default the first; Bonferroni or
Dunnett critical value) or of all pairs (Tukey's studentized range, as
allot analyze tests them; or Bonferroni), for --diff with --sd (or --d).
--sides 1 with --direction lower|higher plans a one-sided test in that
direction (the treatment below or above the control).
--dropout R adds the attrition allowance n/(1−R), rounded up. --covariate-r R
plans an analysis of covariance on a baseline measurement (start weight,
seedling height) correlated R with the outcome within groups: the error
variance shrinks by 1 − R² and the slope uses one error df.

--resource answers with Mead's resource equation instead of power: the range
of n whose error df lies within 10–20, for when no effect size or SD can be
given.

--justify prints a paragraph for an ethics or grant application (with --json
it is part of the JSON). Name the study in it with --response NAME --unit U
(what is measured, in what unit), --sd-source TEXT (where the SD comes from),
--subjects animals|plants|units (the word for a unit, and which cautions
apply), --block-name litter|bench|..., --levels a,b,c (group names) or
--factor NAME=a,b,c, --control LEVEL, --effect-reason TEXT, and --layout
FILE.json (a layout from allot layout -o, for the allocation and blinding
plan). -o FILE.json writes the answer with a plan fragment that
allot layout --from FILE.json lays out.

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
			if o.glm.on() {
				p, err := o.glmPlan(c)
				if err != nil {
					return err
				}
				if runF != nil {
					return runF(o)
				}
				return glmSizeRun(s, o, p)
			}
			if err := o.resolve(c); err != nil {
				return err
			}
			if runF != nil {
				return runF(o)
			}
			return sizeRun(s, o)
		},
	}
	o.glm.add(cmd)
	f := cmd.Flags()
	f.IntVar(&o.req.Groups, "groups", 0, fmt.Sprintf("number of groups `K` of a one-way layout (2 to %d)", power.MaxCells))
	f.StringArrayVar(&o.factors, "factor", nil, "factor `NAME=LEVELS` (a count or a comma list); repeat for a factorial")
	f.StringVar(&o.term, "term", "", "effect to plan for in a factorial: `NAME` or NAME1,NAME2 for an interaction")
	f.StringVar(&o.design, "design", "crd", "`crd` (completely randomised), rcbd (randomised complete blocks), split-plot or latin")
	f.IntVar(&o.squares, "squares", 0, "latin: evaluate the power with `S` Latin squares (default: the fewest for --power)")
	f.IntVar(&o.blocks, "blocks", 0, "evaluate `B` blocks (implies --design rcbd and --n B)")
	f.StringVar(&o.ratios, "ratios", "", "unequal allocation, one `RATIO` per group, for example 2,1,1")
	f.Float64Var(&o.req.Alpha, "alpha", 0.05, "significance level `A`")
	f.Float64Var(&o.req.Power, "power", 0.80, "target power `P`")
	f.IntVar(&o.req.Sides, "sides", 2, "`1` or 2 sides, for t tests and comparisons")
	f.IntVar(&o.req.N, "n", 0, "report power at `N` units per group (blocks for rcbd) instead of solving")
	f.BoolVar(&o.req.Detect, "detect", false, "with --n: report the smallest detectable effect at the target power")
	f.Float64Var(&o.req.F, "f", 0, "effect size as Cohen's `f`")
	f.Float64Var(&o.req.Eta2, "eta2", 0, "effect size as the proportion of variance explained, `E`")
	f.StringVar(&o.means, "means", "", "expected group means `M1,M2,...` in the response's units (needs --sd); for a factorial one per cell, the first --factor varying slowest")
	f.Float64Var(&o.req.SD, "sd", 0, "SD `S` of the response between units (within blocks for rcbd)")
	f.Float64Var(&o.req.Diff, "diff", 0, "smallest difference `D` between two means that matters (needs --sd)")
	f.Float64Var(&o.req.D, "d", 0, "standardised difference `D` between two groups (t test)")
	f.IntVar(&o.req.PilotN, "pilot-n", 0, "the --sd came from a pilot of `M` units: plan with its upper confidence limit")
	f.Float64Var(&o.req.PilotConf, "pilot-conf", 0.8, "confidence `C` of the pilot SD's upper limit")
	f.Float64Var(&o.req.BlockShare, "block-share", 0, "rcbd: share `R` of the total variance (--sd) explained by blocks")
	f.StringVar(&o.compare, "compare", "", "plan comparisons: `control` (each group with the control, Bonferroni), dunnett (the same, Dunnett), pairs (all pairs, Tukey) or pairs-bonferroni")
	f.Float64Var(&o.req.Dropout, "dropout", 0, "expected attrition fraction `R`: also report n/(1−R)")
	f.Float64Var(&o.req.CovariateR, "covariate-r", 0, "the analysis adjusts for a baseline covariate correlated `R` with the outcome (error variance × (1 − R²), one error df less)")
	f.BoolVar(&o.json, "json", false, "print one JSON object instead of the summary")
	f.BoolVar(&o.justify, "justify", false, "also print a paragraph for an ethics or grant application")
	f.BoolVar(&o.resource, "resource", false, "give the range of n by the resource equation (error df 10–20) instead of power")
	f.StringVar(&o.curve, "curve", "", "write a power curve to `FILE` (.svg or .png)")
	f.StringVar(&o.curveSD, "curve-sd", "", "extra curves with the SD multiplied by `F1,F2,...` (for example 0.8,1.2)")
	f.StringVarP(&o.out, "out", "o", "", "write the answer and its plan fragment to `FILE.json` (for allot layout --from)")
	f.StringVar(&o.layout, "layout", "", "attach the layout `FILE.json` (from allot layout -o) to the justification")
	f.BoolVar(&o.force, "force", false, "overwrite existing --curve and -o files")
	f.StringVar(&o.levels, "levels", "", "names of the groups of a one-way layout, `A,B,C`")
	f.StringVar(&o.req.ControlName, "control", "", "the control `LEVEL` for comparisons and the justification (default the first)")
	f.StringVar(&o.req.Direction, "direction", "", "one-sided tests: the treatment expected `lower` or higher than the control")
	f.StringVar(&o.study.Response, "response", "", "what is measured, `NAME` (for the justification and layout)")
	f.StringVar(&o.study.Unit, "unit", "", "the response's unit `U`, for example mg")
	f.StringVar(&o.study.SDSource, "sd-source", "", "where the SD comes from, `TEXT` (for example \"pilot, 8 animals\")")
	f.StringVar(&o.study.Subjects, "subjects", "units", "what a unit is: `animals`, plants or units (the word used, and which cautions apply)")
	f.StringVar(&o.study.BlockName, "block-name", "", "what a block is called, `NAME` such as litter, bench, day")
	f.StringVar(&o.study.EffectReason, "effect-reason", "", "why this effect matters, `TEXT`")
	o.addSimFlags(f)
	addSplitPlotSizeFlags(f, o)
	return cmd
}

// resolve turns the flag strings into the request (package options does
// the work, shared with the web pages of allot serve).
func (o *sizeOptions) resolve(c *cobra.Command) error {
	if o.design == "split-plot" {
		return o.resolveSplitPlot(c)
	}
	if o.design == "latin" {
		return o.resolveLatin(c)
	}
	given := map[string]bool{}
	c.Flags().Visit(func(f *pflag.Flag) { given[f.Name] = true })
	req, study, err := options.Size{Req: o.req, Study: o.study, Factors: o.factors, Term: o.term, Design: o.design,
		Blocks: o.blocks, Means: o.means, Ratios: o.ratios, Levels: o.levels, Compare: o.compare, Given: given}.Request()
	if err != nil {
		return usagef("%s", err)
	}
	o.req, o.study = req, study
	if o.curve != "" && !strings.HasSuffix(o.curve, ".svg") && !strings.HasSuffix(o.curve, ".png") {
		return usagef("--curve %s: the file name must end in .svg or .png", o.curve)
	}
	if o.out != "" && !strings.HasSuffix(strings.ToLower(o.out), ".json") {
		return usagef("-o %s: the file name must end in .json", o.out)
	}
	if o.curveSD != "" {
		if o.curve == "" {
			return usagef("--curve-sd %s: needs --curve FILE", o.curveSD)
		}
		v, err := floatList("curve-sd", o.curveSD)
		if err != nil {
			return err
		}
		for _, x := range v {
			if !(x > 0) || x > 100 {
				return usagef("--curve-sd %s: each factor must be above 0 (for example 0.8 or 1.2)", o.curveSD)
			}
		}
	}
	if o.resource && (o.sim.on || o.justify || o.curve != "" || o.out != "") {
		return usagef("--resource: the resource equation gives a range of n; it does not combine with --simulate, --justify, --curve or -o")
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

func shellQuote(s string) string { return options.ShellQuote(s) }

func floatList(flag, s string) ([]float64, error) {
	v, err := options.FloatList(flag, s)
	if err != nil {
		return nil, usagef("%s", err)
	}
	return v, nil
}

func sizeRun(s *streams, o *sizeOptions) error {
	if o.design == "split-plot" {
		return splitPlotSizeRun(s, o)
	}
	if o.design == "latin" {
		return latinSizeRun(s, o)
	}
	if o.sim.on {
		return simulateRun(s, o)
	}
	if o.resource {
		ra, err := power.Resource(o.req)
		if err != nil {
			return &usageError{err: err}
		}
		rep := report.Resource{ResourceAnswer: ra, Study: o.study, Command: o.command, Version: version.String()}
		if o.json {
			return report.ResourceJSON(s.Out, rep)
		}
		return report.ResourceText(s.Out, rep)
	}
	ans, err := power.Compute(o.req)
	var fe *power.FieldError
	if errors.As(err, &fe) {
		return &usageError{err: err, showUsage: true} // names a flag
	}
	if err != nil {
		return err
	}
	rep := report.Size{Answer: ans, Study: o.study, Command: o.command, Version: version.String()}
	if o.layout != "" {
		b, err := os.ReadFile(o.layout)
		if err != nil {
			return inputErr(fmt.Errorf("--layout %s: %w", o.layout, err))
		}
		l, err := design.ParseLayout(b)
		if err != nil {
			return inputErr(fmt.Errorf("--layout %s: %w; give the .json that allot layout -o wrote", o.layout, err))
		}
		rep.Allocation = report.AllocationOf(l)
	}
	if o.curve != "" {
		sdf, _ := floatList("curve-sd", o.curveSD)
		pts, err := power.CurvePoints(o.req, ans, sdf...)
		if err != nil {
			return err
		}
		if err := report.PowerCurveFor(o.curve, pts, rep, o.force); err != nil {
			return inputErr(err)
		}
		fmt.Fprintf(s.Err, "allot size: wrote %s\n", o.curve)
	}
	if o.out != "" {
		if err := atomicfile.Write(o.out, o.force, func(w io.Writer) error { return report.SizeJSON(w, rep, true) }); err != nil {
			return inputErr(fmt.Errorf("-o %w", err))
		}
		fmt.Fprintf(s.Err, "allot size: wrote %s (lay it out with allot layout --from %s)\n", o.out, o.out)
	}
	if o.json {
		return report.SizeJSON(s.Out, rep, o.justify)
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
