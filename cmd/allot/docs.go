package main

import (
	"bytes"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/allotproject/allot/internal/atomicfile"

	"github.com/spf13/cobra"
	"github.com/spf13/cobra/doc"
)

type docsOptions struct {
	format string // man or markdown
	dir    string
	force  bool
	date   time.Time // man page date
}

func newDocsCmd(s *streams, runF func(*docsOptions) error) *cobra.Command {
	o := &docsOptions{}
	cmd := &cobra.Command{
		Use:   "docs man|markdown DIR",
		Short: "Write the command reference as man pages or Markdown",
		Long: `Write a page for every allot command into DIR (created if missing): man pages
(allot.1, allot-layout.1, ...; section 1) or Markdown (allot.md,
allot_layout.md, ...). The pages are the commands' own help, so they are
always in step with the program. docs/cli/ in the source tree holds the
Markdown pages; a test fails when they are out of date.

Existing pages are replaced only with --force. Man pages are dated by
SOURCE_DATE_EPOCH when it is set (reproducible builds), else today.` + "\n" + exitHelp,
		Example: `  allot docs markdown docs/cli --force
  allot docs man /usr/local/share/man/man1`,
		Args: func(c *cobra.Command, args []string) error {
			if len(args) != 2 {
				return usagef("docs takes a format (man or markdown) and a folder DIR, got %d argument(s)", len(args))
			}
			if args[0] != "man" && args[0] != "markdown" {
				return usagef("docs %s: the format must be man or markdown", args[0])
			}
			return nil
		},
		ValidArgsFunction: func(c *cobra.Command, args []string, _ string) ([]cobra.Completion, cobra.ShellCompDirective) {
			if len(args) == 0 {
				return []cobra.Completion{"man", "markdown"}, cobra.ShellCompDirectiveNoFileComp
			}
			return nil, cobra.ShellCompDirectiveFilterDirs
		},
		RunE: func(c *cobra.Command, args []string) error {
			o.format, o.dir = args[0], args[1]
			o.date = time.Now()
			if runF != nil {
				return runF(o)
			}
			return docsRun(s, c.Root(), o)
		},
	}
	cmd.Flags().BoolVar(&o.force, "force", false, "replace existing pages in DIR")
	return cmd
}

// docPages renders a page per available command of root, keyed by file name.
func docPages(root *cobra.Command, format string, date time.Time) (map[string][]byte, error) {
	pages := map[string][]byte{}
	var walk func(c *cobra.Command) error
	walk = func(c *cobra.Command) error {
		if !c.IsAvailableCommand() && c != root {
			return nil
		}
		var b bytes.Buffer
		base := strings.ReplaceAll(c.CommandPath(), " ", "_")
		switch format {
		case "markdown":
			if err := doc.GenMarkdownCustom(c, &b, func(name string) string { return name }); err != nil {
				return err
			}
			pages[base+".md"] = b.Bytes()
		case "man":
			h := &doc.GenManHeader{Title: strings.ToUpper(strings.ReplaceAll(c.CommandPath(), " ", "-")), Section: "1",
				Source: "allot", Manual: "allot manual", Date: &date}
			if err := doc.GenMan(c, h, &b); err != nil {
				return err
			}
			pages[strings.ReplaceAll(c.CommandPath(), " ", "-")+".1"] = b.Bytes()
		}
		for _, sub := range c.Commands() {
			if err := walk(sub); err != nil {
				return err
			}
		}
		return nil
	}
	if err := walk(root); err != nil {
		return nil, err
	}
	return pages, nil
}

func docsRun(s *streams, root *cobra.Command, o *docsOptions) error {
	if epoch := os.Getenv("SOURCE_DATE_EPOCH"); epoch != "" {
		var sec int64
		if _, err := fmt.Sscan(epoch, &sec); err != nil {
			return inputErr(fmt.Errorf("SOURCE_DATE_EPOCH %q: must be seconds since 1970", epoch))
		}
		o.date = time.Unix(sec, 0).UTC()
	}
	pages, err := docPages(root, o.format, o.date)
	if err != nil {
		return err
	}
	if err := os.MkdirAll(o.dir, 0o777); err != nil {
		return inputErr(fmt.Errorf("docs %s: %w", o.dir, err))
	}
	names := make([]string, 0, len(pages))
	for n := range pages {
		names = append(names, n)
	}
	sort.Strings(names)
	// Refuse before writing anything, so that a refused run leaves DIR as it was.
	for _, n := range names {
		if err := atomicfile.Check(filepath.Join(o.dir, n), o.force); err != nil {
			return inputErr(err)
		}
	}
	for _, n := range names {
		b := pages[n]
		if err := atomicfile.Write(filepath.Join(o.dir, n), o.force, func(w io.Writer) error { _, err := w.Write(b); return err }); err != nil {
			return inputErr(err)
		}
	}
	fmt.Fprintf(s.Err, "allot docs: wrote %d %s pages to %s\n", len(names), o.format, o.dir)
	return nil
}
