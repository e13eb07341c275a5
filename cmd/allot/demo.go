package main

import (
	"errors"
	"fmt"

	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/internal/demo"
	"github.com/allotproject/allot/internal/version"

	"github.com/spf13/cobra"
)

type demoOptions struct {
	out      string
	force    bool
	scenario string
}

func newDemoCmd(s *streams, runF func(*demoOptions) error) *cobra.Command {
	opts := &demoOptions{}
	cmd := &cobra.Command{
		Use:   "demo [--out DIR] [--force]",
		Short: "Run the whole job on an invented growth-room trial",
		Long: `Run the whole job on an embedded, invented scenario: a growth-room trial of
four peat-free substrate blends for basil seedlings, benches as blocks.

The demo computes the number of benches (exact noncentral F) and prints the
justification; lays the trial out in randomised complete blocks with a fixed
seed; writes the data-entry workbook; fills a copy with SIMULATED values as a
stand-in for the technician; reads the copy back, checks it, runs the ANOVA
with Tukey HSD and writes the reports. Everything lands in --out, which must
be empty or new unless --force is given.

--scenario chambers runs a split plot instead: two light regimes, each set
per growth chamber, with three lettuce varieties in pots within every
chamber; the number of chambers per regime comes from the exact power of the
whole-plot test, and the analysis tests light against the variation between
chambers.` + "\n" + exitHelp,
		Example: `  allot demo
  allot demo --out /tmp/trial --force
  allot demo --scenario chambers --out ./chambers-demo`,
		Args: cobra.NoArgs,
		RunE: func(c *cobra.Command, args []string) error {
			if opts.out == "" {
				return usagef("--out: give a folder, for example --out ./allot-demo")
			}
			if opts.scenario != "substrate" && opts.scenario != "chambers" {
				return usagef("--scenario %s: give substrate (the default, blocks of benches) or chambers (a split plot)", opts.scenario)
			}
			if runF != nil {
				return runF(opts)
			}
			return demoRun(s, opts)
		},
	}
	cmd.Flags().StringVarP(&opts.out, "out", "o", "allot-demo", "write the workbooks and reports into `DIR`")
	cmd.Flags().BoolVar(&opts.force, "force", false, "overwrite files in a non-empty --out folder")
	cmd.Flags().StringVar(&opts.scenario, "scenario", "substrate", "the invented trial: `substrate` (benches as blocks) or chambers (a split plot)")
	return cmd
}

func demoRun(s *streams, opts *demoOptions) error {
	for _, l := range atomicfile.Leftovers(opts.out) {
		fmt.Fprintf(s.Err, "allot: note: %s is a temporary file left by an earlier allot run that was stopped before it finished; delete it\n", l)
	}
	if opts.scenario == "chambers" {
		_, err := demo.RunChambers(demo.DefaultChambers(), demo.Options{
			Out: opts.out, Force: opts.force, Version: version.String(), Stdout: s.Out, Stderr: s.Err,
		})
		if errors.Is(err, demo.ErrOut) {
			return inputErr(err)
		}
		return err
	}
	_, err := demo.Run(demo.Default(), demo.Options{
		Out: opts.out, Force: opts.force, Version: version.String(), Stdout: s.Out, Stderr: s.Err,
	})
	if errors.Is(err, demo.ErrOut) {
		return inputErr(err)
	}
	return err
}
