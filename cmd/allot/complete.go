package main

import (
	"fmt"

	"github.com/spf13/cobra"
)

// completion is what the shell offers for a flag or argument: fixed
// words, files with one of some extensions, or folders.
type completion struct {
	words []string // fixed values
	exts  []string // file extensions without the dot
	dirs  bool     // folders only
}

func (c completion) fn() cobra.CompletionFunc {
	return func(*cobra.Command, []string, string) ([]cobra.Completion, cobra.ShellCompDirective) {
		switch {
		case c.words != nil:
			return c.words, cobra.ShellCompDirectiveNoFileComp
		case c.exts != nil:
			return c.exts, cobra.ShellCompDirectiveFilterFileExt
		case c.dirs:
			return nil, cobra.ShellCompDirectiveFilterDirs
		}
		return nil, cobra.ShellCompDirectiveDefault
	}
}

func words(w ...string) completion   { return completion{words: w} }
func files(ext ...string) completion { return completion{exts: ext} }
func folders() completion            { return completion{dirs: true} }

// flagCompletions lists, per command, the completion of each flag's value.
// The values are the ones the commands accept; TestCompletionsMatchFlags
// keeps the list in step with the commands' flags.
func flagCompletions() map[string]map[string]completion {
	design := words("crd", "rcbd")
	sides := words("1", "2")
	return map[string]map[string]completion{
		"allot demo": {"out": folders()},
		"allot size": {
			"design": design, "compare": words("control", "dunnett", "pairs"), "sides": sides, "posthoc": words("tukey", "dunnett"),
			"curve": files("svg", "png"),
		},
		"allot layout": {
			"design": design, "numbering": words("rows", "serpentine"), "spec": files("toml"),
			"units": files("csv"), "out": files("xlsx", "csv", "json"), "map": files("svg", "png"), "key": files("json"),
		},
		"allot layout verify": {"key": files("json")},
		"allot check":         {"plan": files("json"), "key": files("json")},
		"allot analyze": {
			"posthoc": words("tukey", "dunnett", "holm", "none"), "format": words("text", "markdown", "json"),
			"ss": words("1", "2", "3"), "sides": sides, "report": files("html"), "plots": folders(),
			"plan": files("json"), "key": files("json"),
		},
		"allot docs": {},
	}
}

// argCompletions is the completion of each command's positional arguments.
func argCompletions() map[string]completion {
	return map[string]completion{
		"allot layout verify": files("xlsx", "json"),
		"allot check":         files("xlsx", "csv"),
		"allot analyze":       files("xlsx", "csv"),
	}
}

// registerCompletions attaches the completions to the command tree. A flag
// listed for a command that lacks it is a programming error.
func registerCompletions(root *cobra.Command) {
	fc, ac := flagCompletions(), argCompletions()
	var walk func(c *cobra.Command)
	walk = func(c *cobra.Command) {
		for name, comp := range fc[c.CommandPath()] {
			if err := c.RegisterFlagCompletionFunc(name, comp.fn()); err != nil {
				panic(fmt.Sprintf("main: completion for %s --%s: %v", c.CommandPath(), name, err))
			}
		}
		if comp, ok := ac[c.CommandPath()]; ok && c.ValidArgsFunction == nil {
			c.ValidArgsFunction = comp.fn()
		}
		for _, sub := range c.Commands() {
			walk(sub)
		}
	}
	walk(root)
}
