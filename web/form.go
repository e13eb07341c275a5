package web

import (
	"net/url"
	"sort"
	"strconv"
	"strings"

	"github.com/allotproject/allot/internal/options"
)

// Field kinds.
const (
	kindText   = "text"
	kindNumber = "number"
	kindSelect = "select"
	kindCheck  = "check"
	kindLines  = "lines" // a repeatable flag: one value per line
	kindFile   = "file"
)

// Option is one choice of a select field.
type Option struct{ Value, Label string }

// Field is one form field; Name is the command-line flag it stands for.
type Field struct {
	Name        string
	Label       string
	Help        string
	Kind        string
	Default     string // the flag's default, as the command prints it
	Value       string
	Checked     bool
	Options     []Option
	Placeholder string
	Accept      string
	Error       string
	// canon is the value as the command line would print it, set by the
	// parsers; empty means the flag is not given.
	canon []string
}

// Group is a fieldset.
type Group struct {
	Legend string
	Fields []*Field
}

// Form is a page's fields.
type Form struct {
	Groups []Group
	// Problem is an error that belongs to no single field.
	Problem string
}

func (f *Form) field(name string) *Field {
	for _, g := range f.Groups {
		for _, x := range g.Fields {
			if x.Name == name {
				return x
			}
		}
	}
	panic("web: no field " + name)
}

// Problems lists the fields with an error, for the summary at the top.
func (f *Form) Problems() []*Field {
	var out []*Field
	for _, g := range f.Groups {
		for _, x := range g.Fields {
			if x.Error != "" {
				out = append(out, x)
			}
		}
	}
	return out
}

// HasErrors reports whether any field or the form has an error.
func (f *Form) HasErrors() bool { return f.Problem != "" || len(f.Problems()) > 0 }

// Lines returns the non-empty lines of a lines field.
func (x *Field) Lines() []string {
	var out []string
	for _, l := range strings.Split(x.Value, "\n") {
		if l = strings.TrimSpace(l); l != "" {
			out = append(out, l)
		}
	}
	return out
}

// fill copies the submitted values into the form's fields.
func (f *Form) fill(v url.Values) {
	for _, g := range f.Groups {
		for _, x := range g.Fields {
			switch x.Kind {
			case kindCheck:
				x.Checked = v.Get(x.Name) != ""
			case kindFile:
			default:
				x.Value = strings.TrimSpace(strings.ReplaceAll(v.Get(x.Name), "\r\n", "\n"))
			}
		}
	}
}

// setError puts err beside the field it names (a *options.Error, or a
// message starting with --flag), or on the form.
func (f *Form) setError(flag string, msg string) {
	for _, g := range f.Groups {
		for _, x := range g.Fields {
			if x.Name == flag {
				if x.Error == "" {
					x.Error = plain(flag, msg)
				}
				return
			}
		}
	}
	if f.Problem == "" {
		f.Problem = msg
	}
}

// plain drops the leading "--flag VALUE: " of a command-line message, since
// the message is shown beside the field, and says "field" for "--flag".
func plain(flag, msg string) string {
	if strings.HasPrefix(msg, "--"+flag) {
		if _, rest, ok := strings.Cut(msg, ": "); ok && rest != "" {
			msg = strings.ToUpper(rest[:1]) + rest[1:]
		}
	}
	return msg
}

func (f *Form) optionError(err error) bool {
	if oe, ok := err.(*options.Error); ok {
		f.setError(oe.Flag, oe.Msg)
		return true
	}
	return false
}

// text returns a text field's value and marks it given when non-empty.
func (f *Form) text(name string) string {
	x := f.field(name)
	if x.Value != "" && x.Value != x.Default {
		x.canon = []string{x.Value}
	}
	return x.Value
}

// lines returns a lines field's values, each given.
func (f *Form) lines(name string) []string {
	x := f.field(name)
	l := x.Lines()
	x.canon = l
	return l
}

// check returns a checkbox.
func (f *Form) check(name string) bool {
	x := f.field(name)
	if x.Checked {
		x.canon = []string{""}
	}
	return x.Checked
}

// float parses a number field; an empty field is its default.
func (f *Form) float(name string) float64 {
	x := f.field(name)
	s := x.Value
	if s == "" {
		s = x.Default
	}
	if s == "" {
		return 0
	}
	v, err := strconv.ParseFloat(strings.ReplaceAll(s, " ", ""), 64)
	if err != nil {
		example := x.Default
		if example == "" {
			example = "2.5"
		}
		x.Error = strconv.Quote(x.Value) + " is not a number; write it with a decimal point, for example " + example
		return 0
	}
	c := strconv.FormatFloat(v, 'g', -1, 64)
	if x.Value != "" && c != x.Default {
		x.canon = []string{c}
	}
	return v
}

// int parses a whole-number field; an empty field is its default.
func (f *Form) int(name string) int {
	x := f.field(name)
	s := x.Value
	if s == "" {
		s = x.Default
	}
	if s == "" {
		return 0
	}
	v, err := strconv.Atoi(s)
	if err != nil {
		example := x.Default
		if example == "" {
			example = "6"
		}
		x.Error = strconv.Quote(x.Value) + " is not a whole number, for example " + example
		return 0
	}
	c := strconv.Itoa(v)
	if x.Value != "" && c != x.Default {
		x.canon = []string{c}
	}
	return v
}

// given reports whether the field was filled in (the flag was set).
func (f *Form) given(name string) bool { return len(f.field(name).canon) > 0 }

// command is the command line equivalent to the parsed form: the given
// flags in alphabetical order (as allot prints its own command line), then
// extra words.
func (f *Form) command(prog string, extra ...string) string {
	var fs []*Field
	for _, g := range f.Groups {
		for _, x := range g.Fields {
			if len(x.canon) > 0 {
				fs = append(fs, x)
			}
		}
	}
	sort.Slice(fs, func(i, j int) bool { return fs[i].Name < fs[j].Name })
	parts := []string{prog}
	for _, x := range fs {
		for _, v := range x.canon {
			parts = append(parts, "--"+x.Name)
			if x.Kind != kindCheck {
				parts = append(parts, options.ShellQuote(v))
			}
		}
	}
	return strings.Join(append(parts, extra...), " ")
}
