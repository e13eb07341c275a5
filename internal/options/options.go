// Package options turns what a person types — a command's flags or a web
// form's fields, which carry the same names — into the requests the
// packages take: the planning request of allot size and the analyses a
// filled workbook implies for allot analyze. The cobra commands in cmd/allot
// and the pages of package web both call it, so that a page and a command
// line give the same answer and the same messages.
package options

import (
	"fmt"
	"strconv"
	"strings"
)

// Error is a problem with one input, named by its flag (the form field of
// the same name). Msg is the whole message, as the command prints it.
type Error struct {
	Flag string
	Msg  string
}

func (e *Error) Error() string { return e.Msg }

func errorf(flag, format string, args ...any) error {
	return &Error{Flag: flag, Msg: fmt.Sprintf(format, args...)}
}

// FloatList parses a comma list of numbers given to --flag; empty s is nil.
func FloatList(flag, s string) ([]float64, error) {
	if s == "" {
		return nil, nil
	}
	var out []float64
	for _, p := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil {
			return nil, errorf(flag, "--%s %s: %q is not a number; give a comma list such as 10,12.5,14", flag, s, p)
		}
		out = append(out, v)
	}
	return out, nil
}

// ShellQuote quotes s for a POSIX shell when it holds anything but safe
// characters.
func ShellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789.,=_-+:/") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
