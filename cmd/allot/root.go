package main

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/allotproject/allot/internal/atomicfile"
	"github.com/allotproject/allot/internal/version"

	"github.com/spf13/cobra"
)

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
		Version:           version.String(),
		SilenceUsage:      true,
		SilenceErrors:     true,
		DisableAutoGenTag: true,
		PersistentPreRunE: func(c *cobra.Command, args []string) error {
			return checkOutputs(s, c)
		},
	}
	root.SetIn(s.In)
	root.SetOut(s.Out)
	root.SetErr(s.Err)
	root.SetVersionTemplate("allot {{.Version}}\n")
	root.SetFlagErrorFunc(flagError)
	root.AddCommand(
		newDemoCmd(s, nil),
		newSizeCmd(s, nil),
		newLayoutCmd(s, nil),
		newUnblindCmd(s, nil),
		newCheckCmd(s, nil),
		newAnalyzeCmd(s, nil),
		newLabelsCmd(s, nil),
		newSheetCmd(s, nil),
		newDocsCmd(s, nil),
		newServeCmd(s, nil),
	)
	root.SetHelpCommand(newHelpCmd())
	root.InitDefaultCompletionCmd()
	// cobra adds these when it runs; adding them now puts them in the
	// generated reference too.
	root.InitDefaultHelpFlag()
	root.InitDefaultVersionFlag()
	for _, c := range root.Commands() {
		if c.Name() == "completion" {
			adoptCompletionCmd(c)
		}
	}
	registerCompletions(root)
	return root
}

// newHelpCmd replaces cobra's help command, which answers an unknown topic
// with the whole usage and exit status 0.
func newHelpCmd() *cobra.Command {
	return &cobra.Command{
		Use:   "help [COMMAND]",
		Short: "Show the help of a command, with its flags and examples",
		Long:  "Show the help of a command (allot help layout verify), or of allot itself.\n" + exitHelp,
		ValidArgsFunction: func(c *cobra.Command, args []string, toComplete string) ([]cobra.Completion, cobra.ShellCompDirective) {
			cmd, _, err := c.Root().Find(args)
			if err != nil {
				return nil, cobra.ShellCompDirectiveNoFileComp
			}
			var out []cobra.Completion
			for _, sub := range cmd.Commands() {
				if sub.IsAvailableCommand() {
					out = append(out, cobra.CompletionWithDesc(sub.Name(), sub.Short))
				}
			}
			return out, cobra.ShellCompDirectiveNoFileComp
		},
		RunE: func(c *cobra.Command, args []string) error {
			cmd, rest, err := c.Root().Find(args)
			if err != nil || len(rest) > 0 {
				return usagef("help %s: no such command; the commands are %s", joinArgs(args), commandNames(c.Root()))
			}
			return cmd.Help()
		},
	}
}

func joinArgs(args []string) string {
	s := ""
	for i, a := range args {
		if i > 0 {
			s += " "
		}
		s += a
	}
	return s
}

func commandNames(root *cobra.Command) string {
	s := ""
	for _, c := range root.Commands() {
		if !c.IsAvailableCommand() {
			continue
		}
		if s != "" {
			s += ", "
		}
		s += c.Name()
	}
	return s
}

// outputFlags names, per command, the flags that give a file the command
// writes. They are checked before any work is done (a file that exists
// without --force, a folder that does not exist or cannot be written), so
// that a long analysis is not printed and then refused.
func outputFlags() map[string][]string {
	return map[string][]string{
		"allot size":    {"curve"},
		"allot layout":  {"out", "map", "key"},
		"allot analyze": {"report"},
	}
}

// checkOutputs refuses the output files of c that could not be written, and
// names temporaries left in their folders by an earlier run that was killed.
func checkOutputs(s *streams, c *cobra.Command) error {
	force := false
	if f := c.Flags().Lookup("force"); f != nil {
		force = f.Value.String() == "true"
	}
	seen := map[string]bool{}
	for _, name := range outputFlags()[c.CommandPath()] {
		f := c.Flags().Lookup(name)
		if f == nil || !f.Changed || f.Value.String() == "" {
			continue
		}
		path := f.Value.String()
		if err := atomicfile.Check(path, force); err != nil {
			return &usageError{err: fmt.Errorf("--%s %w", name, err), showUsage: errors.Is(err, atomicfile.ErrExists)}
		}
		dir := filepath.Dir(path)
		if seen[dir] {
			continue
		}
		seen[dir] = true
		for _, l := range atomicfile.Leftovers(dir) {
			fmt.Fprintf(s.Err, "allot: note: %s is a temporary file left by an earlier allot run that was stopped before it finished; delete it\n", l)
		}
	}
	return nil
}

// adoptCompletionCmd gives cobra's completion command allot's exit-status
// help, and makes an unknown shell a usage error (cobra prints the help and
// exits 0).
func adoptCompletionCmd(c *cobra.Command) {
	var shells []string
	for _, sub := range c.Commands() {
		sub.Long += "\n" + exitHelp
		shells = append(shells, sub.Name())
	}
	c.Long += "\n" + exitHelp
	c.Args = cobra.ArbitraryArgs
	c.RunE = func(c *cobra.Command, args []string) error {
		if len(args) == 0 {
			return c.Help()
		}
		return usagef("completion %s: no such shell; give one of %s", args[0], strings.Join(shells, ", "))
	}
}
