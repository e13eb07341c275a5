package main

import (
	"errors"
	"fmt"
	"strings"

	"github.com/allotproject/allot/internal/version"

	"github.com/spf13/cobra"
)

// Exit statuses.
const (
	exitOK     = 0
	exitFailed = 1 // a check or analysis found errors
	exitUsage  = 2 // bad flags, arguments or input files
)

// usageError is bad usage or bad input: exit 2.
type usageError struct {
	err       error
	showUsage bool
}

func (e *usageError) Error() string { return e.err.Error() }
func (e *usageError) Unwrap() error { return e.err }

// failedError is a check or analysis that ran and found problems: exit 1.
type failedError struct{ err error }

func (e *failedError) Error() string { return e.err.Error() }
func (e *failedError) Unwrap() error { return e.err }

func usagef(format string, args ...any) error {
	return &usageError{err: fmt.Errorf(format, args...), showUsage: true}
}

func inputErr(err error) error { return &usageError{err: err} }

const exitHelp = `
Exit status:
  0  success
  1  a check or analysis ran and found errors
  2  bad usage or unusable input (the message names the flag, file or cell)`

func newRootCmd(s *streams) *cobra.Command {
	root := &cobra.Command{
		Use:   "allot",
		Short: "Plan, randomise and analyse comparative experiments",
		Long: `allot carries a comparative experiment from "how many units do we need?"
through "which unit gets which treatment?" to "what does the filled-in sheet
say?": exact sample sizes with a justification, seeded randomised layouts and
data-entry workbooks, and the ANOVA that matches the design.` + "\n" + exitHelp,
		Example: `  # The whole job on an invented growth-room trial
  allot demo --out ./allot-demo

  # Units per group for 4 groups, medium effect, 90% power
  allot size --groups 4 --f 0.25 --power 0.9`,
		Version:       version.String(),
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetIn(s.In)
	root.SetOut(s.Out)
	root.SetErr(s.Err)
	root.SetVersionTemplate("allot {{.Version}}\n")
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		return &usageError{err: err, showUsage: true}
	})
	root.AddCommand(
		newDemoCmd(s, nil),
		newSizeCmd(s, nil),
		newLayoutCmd(s, nil),
		newUnblindCmd(s, nil),
		newCheckCmd(s, nil),
		newAnalyzeCmd(s, nil),
		newLabelsCmd(s, nil),
		newSheetCmd(s, nil),
		newServeCmd(s, nil),
	)
	return root
}

// exitCode prints err (with the command's usage for flag errors) and maps
// it to an exit status.
func exitCode(s *streams, cmd *cobra.Command, err error) int {
	if err == nil {
		return exitOK
	}
	fmt.Fprintln(s.Err, "allot: "+err.Error())
	var ue *usageError
	var fe *failedError
	switch {
	case errors.As(err, &fe):
		return exitFailed
	case errors.As(err, &ue):
		if ue.showUsage && cmd != nil {
			fmt.Fprintln(s.Err, "\n"+cmd.UsageString())
		}
		return exitUsage
	case strings.HasPrefix(err.Error(), "unknown command"), strings.Contains(err.Error(), "arg(s)"):
		// Cobra's own errors for an unknown command or a wrong number of
		// arguments are untyped.
		if cmd != nil {
			fmt.Fprintln(s.Err, "\n"+cmd.UsageString())
		}
		return exitUsage
	}
	return exitFailed
}
