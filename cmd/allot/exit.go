package main

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"runtime/debug"
	"sort"
	"strings"

	"github.com/allotproject/allot/internal/atomicfile"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// Exit statuses. Every error a command returns carries its status in its
// type (usageError, failedError); exitCode never matches message text.
const (
	exitOK       = 0
	exitFailed   = 1 // a check or analysis ran and found errors
	exitUsage    = 2 // bad flags, arguments or input files
	exitInternal = 3 // a bug in allot: an unexpected error or a panic
)

// exitHelp ends every command's Long help.
const exitHelp = `
Exit status:
  0  success
  1  a check or analysis ran and found errors
  2  bad usage or unusable input (the message names the flag, file or cell)
  3  internal error in allot (please report it)`

// reportURL is where internal errors are to be reported.
const reportURL = "https://github.com/allotproject/allot/issues"

// usageError is bad usage or bad input: exit 2. showUsage marks an error in
// how the command was called (a flag or argument): the message is followed
// by one line naming the help to read, never by the whole usage text.
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

// usagef is an error in the flags or arguments: exit 2, with a pointer to
// the command's help.
func usagef(format string, args ...any) error {
	return &usageError{err: fmt.Errorf(format, args...), showUsage: true}
}

// inputErr marks err as unusable input (a file that cannot be read, a plan
// that is not valid): exit 2.
func inputErr(err error) error { return &usageError{err: err} }

// statusOf maps an error to its exit status by its type. An error of no
// known type is unusable input when it is about a file (missing, not
// permitted, already there), and otherwise a bug: exit 3.
func statusOf(err error) int {
	var ue *usageError
	var fe *failedError
	var pe *fs.PathError
	switch {
	case err == nil:
		return exitOK
	case errors.As(err, &fe):
		return exitFailed
	case errors.As(err, &ue):
		return exitUsage
	case errors.Is(err, atomicfile.ErrExists), errors.Is(err, fs.ErrNotExist), errors.Is(err, fs.ErrPermission), errors.As(err, &pe):
		return exitUsage
	}
	return exitInternal
}

// exitCode prints err for the user and returns the exit status: a usage
// error in one line plus "Run 'allot help CMD' ...", an internal error
// with a request to report it.
func exitCode(s *streams, cmd *cobra.Command, err error) int {
	if err == nil {
		return exitOK
	}
	err = classifyCobra(cmd, err)
	code := statusOf(err)
	fmt.Fprintln(s.Err, "allot: "+oneLine(err.Error()))
	var ue *usageError
	switch {
	case code == exitInternal:
		fmt.Fprintln(s.Err, internalNote)
	case errors.As(err, &ue) && ue.showUsage:
		fmt.Fprintln(s.Err, helpHint(cmd))
	}
	return code
}

const internalNote = "This is an internal error in allot, not a problem with your input. Please report it at " +
	reportURL + " with the command you ran, the output of allot --version and this message."

// internalPanic reports a panic caught at the command boundary: exit 3.
func internalPanic(w io.Writer, r any) int {
	fmt.Fprintf(w, "allot: internal error: %v\n%s\n\n%s", r, internalNote, debug.Stack())
	return exitInternal
}

// helpHint names the help of the command that was called.
func helpHint(cmd *cobra.Command) string {
	if cmd == nil || !cmd.HasParent() {
		return "Run 'allot help' for the commands, or 'allot help COMMAND' for a command's flags and examples."
	}
	path := strings.TrimPrefix(cmd.CommandPath(), cmd.Root().Name()+" ")
	return fmt.Sprintf("Run 'allot help %s' for its flags and examples.", path)
}

// oneLine keeps the message of a usage error on one line: cobra's own
// messages append suggestions on further lines.
func oneLine(msg string) string {
	msg = strings.TrimRight(msg, "\n")
	if !strings.HasPrefix(msg, "unknown command") {
		return msg
	}
	first, rest, _ := strings.Cut(msg, "\n")
	var sugg []string
	for _, l := range strings.Split(rest, "\n") {
		if l = strings.TrimSpace(l); l != "" && !strings.HasPrefix(l, "Did you mean") {
			sugg = append(sugg, l)
		}
	}
	if len(sugg) > 0 {
		first += "; did you mean " + strings.Join(sugg, " or ") + "?"
	}
	return first
}

// classifyCobra gives cobra's untyped errors (an unknown command, a wrong
// number of arguments) their type: they are usage errors.
func classifyCobra(cmd *cobra.Command, err error) error {
	var ue *usageError
	var fe *failedError
	if errors.As(err, &ue) || errors.As(err, &fe) {
		return err
	}
	msg := err.Error()
	// cobra calls a stray argument of a command without subcommands an
	// unknown command.
	if cmd != nil && !cmd.HasSubCommands() && strings.HasPrefix(msg, "unknown command ") {
		arg, _, _ := strings.Cut(strings.TrimPrefix(msg, "unknown command "), " for ")
		return usagef("%s takes no arguments, got %s (flags start with --)", cmd.CommandPath(), arg)
	}
	if strings.HasPrefix(msg, "unknown command") || strings.Contains(msg, "arg(s)") ||
		strings.HasPrefix(msg, "invalid argument") || strings.HasPrefix(msg, "required flag") ||
		strings.HasPrefix(msg, "if any flags in the group") {
		return &usageError{err: err, showUsage: true}
	}
	return err
}

// flagError turns pflag's errors into one line that names the flag and says
// what it wants; an unknown flag gets the nearest known ones.
func flagError(c *cobra.Command, err error) error {
	var ne *pflag.NotExistError
	var ve *pflag.InvalidValueError
	var re *pflag.ValueRequiredError
	switch {
	case errors.As(err, &ne):
		name := ne.GetSpecifiedName()
		if sh := ne.GetSpecifiedShortnames(); sh != "" {
			msg := fmt.Sprintf("-%s: %s has no such short flag", name, c.CommandPath())
			if sh != name {
				msg = fmt.Sprintf("-%s in -%s: %s has no such short flag", name, sh, c.CommandPath())
			}
			return &usageError{err: errors.New(msg), showUsage: true}
		}
		msg := fmt.Sprintf("--%s: %s has no such flag", name, c.CommandPath())
		if s := suggestFlags(c, name); len(s) > 0 {
			msg += "; did you mean --" + strings.Join(s, " or --") + "?"
		}
		return &usageError{err: errors.New(msg), showUsage: true}
	case errors.As(err, &ve):
		f := ve.GetFlag()
		if cause := ve.Unwrap(); cause != nil && !builtinType(f.Value.Type()) {
			// A value type of ours says what it takes.
			return &usageError{err: fmt.Errorf("--%s %s: %v", f.Name, ve.GetValue(), cause), showUsage: true}
		}
		return &usageError{err: fmt.Errorf("--%s %s: must be %s", f.Name, ve.GetValue(), typeWord(f.Value.Type())), showUsage: true}
	case errors.As(err, &re):
		f := re.GetFlag()
		name, _ := pflag.UnquoteUsage(f)
		if name == "" {
			name = "VALUE"
		}
		return &usageError{err: fmt.Errorf("--%s needs a value: --%s %s", f.Name, f.Name, name), showUsage: true}
	}
	return &usageError{err: err, showUsage: true}
}

// builtinType reports whether t is one of pflag's own value types, whose
// parse errors are too technical to show.
func builtinType(t string) bool {
	switch t {
	case "int", "int64", "uint", "uint64", "float64", "float32", "bool", "duration", "string", "stringArray", "stringSlice", "intSlice", "float64Slice":
		return true
	}
	return false
}

func typeWord(t string) string {
	switch t {
	case "int", "int64", "uint", "uint64":
		return "a whole number"
	case "float64", "float32":
		return "a number, for example 0.05"
	case "bool":
		return "true or false"
	case "duration":
		return "a duration such as 30s or 5m"
	}
	return "a " + t
}

// suggestFlags lists the flags of c whose names are close to name: a prefix
// of it, or within a few edits.
func suggestFlags(c *cobra.Command, name string) []string {
	type cand struct {
		name string
		d    int
	}
	var cs []cand
	seen := map[string]bool{}
	visit := func(f *pflag.Flag) {
		if f.Hidden || seen[f.Name] {
			return
		}
		seen[f.Name] = true
		d := editDistance(strings.ToLower(name), f.Name)
		limit := max(1, min(3, len(name)/3))
		if d <= limit || (len(name) >= 3 && strings.HasPrefix(f.Name, name)) {
			cs = append(cs, cand{f.Name, d})
		}
	}
	c.Flags().VisitAll(visit)
	c.InheritedFlags().VisitAll(visit)
	sort.Slice(cs, func(i, j int) bool {
		if cs[i].d != cs[j].d {
			return cs[i].d < cs[j].d
		}
		return cs[i].name < cs[j].name
	})
	var out []string
	for i := 0; i < len(cs) && i < 3; i++ {
		out = append(out, cs[i].name)
	}
	return out
}

// editDistance is the Levenshtein distance between a and b, in runes.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}
