package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/spf13/cobra"
	"github.com/xuri/excelize/v2"
)

// exitFixture writes a small blocked layout (workbook and JSON), a filled
// copy, a copy with an error cell and a layout JSON with two units swapped.
type exitFixture struct {
	dir, workbook, layoutJSON, filled, broken, moved string
}

func newExitFixture(t *testing.T) exitFixture {
	t.Helper()
	dir := t.TempDir()
	fx := exitFixture{dir: dir, workbook: filepath.Join(dir, "trial.xlsx"), layoutJSON: filepath.Join(dir, "trial.json"),
		filled: filepath.Join(dir, "filled.xlsx"), broken: filepath.Join(dir, "broken.xlsx"), moved: filepath.Join(dir, "moved.json")}
	for _, p := range []string{fx.workbook, fx.layoutJSON} {
		if code, _, errs := runArgs(t, "layout", "--title", "Exit test", "--factor", "feed=F0,F1,F2", "--design", "rcbd", "--blocks", "3",
			"--seed", "5", "--response", "height_cm:0..100", "-o", p); code != 0 {
			t.Fatal(errs)
		}
	}
	fill := func(dst string, bad bool) {
		f, err := excelize.OpenFile(fx.workbook)
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		for r := 2; r <= 10; r++ {
			cell, _ := excelize.CoordinatesToCellName(5, r)
			f.SetCellFloat("Entry", cell, float64(10+r*r%7)+0.5, -1, 64)
		}
		if bad {
			f.SetCellStr("Entry", "E4", "n/a")
		}
		if err := f.SaveAs(dst); err != nil {
			t.Fatal(err)
		}
	}
	fill(fx.filled, false)
	fill(fx.broken, true)
	b, err := os.ReadFile(fx.layoutJSON)
	if err != nil {
		t.Fatal(err)
	}
	var doc map[string]any
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	units := doc["units"].([]any)
	u0, u1 := units[0].(map[string]any), units[1].(map[string]any)
	u0["treatment"], u1["treatment"] = u1["treatment"], u0["treatment"]
	b, _ = json.Marshal(doc)
	if err := os.WriteFile(fx.moved, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return fx
}

// TestExitStatusPerCommand runs every command into each exit status it
// can give: 0 success, 1 a check found errors, 2 bad usage or input.
// Exit 3 (a panic) is TestPanicIsInternalError.
func TestExitStatusPerCommand(t *testing.T) {
	fx := newExitFixture(t)
	existing := filepath.Join(fx.dir, "exists.html")
	os.WriteFile(existing, []byte("keep"), 0o644)
	tests := []struct {
		name string
		args []string
		code int
	}{
		{"size ok", []string{"size", "--groups", "4", "--f", "0.25"}, exitOK},
		{"size bad value", []string{"size", "--groups", "4", "--f", "large"}, exitUsage},
		{"size bad combination", []string{"size", "--groups", "4", "--f", "0.25", "--design", "latin"}, exitUsage},
		{"layout ok", []string{"layout", "--factor", "feed=A,B", "--reps", "2", "--seed", "1"}, exitOK},
		{"layout no inputs", []string{"layout"}, exitUsage},
		{"layout existing output", []string{"layout", "--factor", "feed=A,B", "--reps", "2", "--seed", "1", "-o", fx.workbook}, exitUsage},
		{"verify ok", []string{"layout", "verify", fx.layoutJSON}, exitOK},
		{"verify differs", []string{"layout", "verify", fx.moved}, exitFailed},
		{"verify missing file", []string{"layout", "verify", filepath.Join(fx.dir, "none.json")}, exitUsage},
		{"check ok", []string{"check", fx.filled}, exitOK},
		{"check finds errors", []string{"check", fx.broken}, exitFailed},
		{"check not a workbook", []string{"check", fx.layoutJSON}, exitUsage},
		{"analyze ok", []string{"analyze", fx.filled}, exitOK},
		{"analyze refuses errors", []string{"analyze", fx.broken}, exitFailed},
		{"analyze existing report", []string{"analyze", fx.filled, "--report", existing}, exitUsage},
		{"demo out is a file", []string{"demo", "--out", existing}, exitUsage},
		{"docs ok", []string{"docs", "markdown", filepath.Join(fx.dir, "docs")}, exitOK},
		{"docs bad format", []string{"docs", "pdf", fx.dir}, exitUsage},
		{"help ok", []string{"help", "layout", "verify"}, exitOK},
		{"help unknown topic", []string{"help", "plant"}, exitUsage},
		{"completion ok", []string{"completion", "fish"}, exitOK},
		{"completion unknown shell", []string{"completion", "tcsh"}, exitUsage},
		{"unknown command", []string{"plant"}, exitUsage},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errs := runArgs(t, tt.args...)
			// allot never colours its output, so NO_COLOR holds whatever
			// the terminal: no escape sequence anywhere.
			if strings.ContainsRune(out+errs, 0x1b) {
				t.Errorf("escape sequence in the output")
			}
			if code != tt.code {
				t.Errorf("allot %s: exit %d, want %d; stderr:\n%s", strings.Join(tt.args, " "), code, tt.code, errs)
			}
			if code == exitInternal || strings.Contains(errs, "internal error") {
				t.Errorf("an internal error reported:\n%s", errs)
			}
		})
	}
}

// TestOutputsCheckedFirst: an output that cannot be written is refused
// before the work, so nothing is printed and the file is untouched.
func TestOutputsCheckedFirst(t *testing.T) {
	fx := newExitFixture(t)
	existing := filepath.Join(fx.dir, "report.html")
	os.WriteFile(existing, []byte("keep"), 0o644)
	for _, args := range [][]string{
		{"analyze", fx.filled, "--report", existing},
		{"size", "--groups", "3", "--f", "0.4", "--curve", filepath.Join(fx.dir, "no-such-folder", "c.svg")},
		{"layout", "--factor", "feed=A,B", "--reps", "2", "--seed", "1", "--map", filepath.Join(fx.dir, "no-such-folder", "m.svg")},
	} {
		code, out, errs := runArgs(t, args...)
		if code != exitUsage || out != "" || !strings.HasPrefix(errs, "allot: --") {
			t.Errorf("%v: exit %d, stdout %q, stderr %q; want 2, nothing printed and the flag named", args, code, out, errs)
		}
	}
	if b, _ := os.ReadFile(existing); string(b) != "keep" {
		t.Error("existing report replaced")
	}
	// With --force the same report is written.
	if code, _, errs := runArgs(t, "analyze", fx.filled, "--report", existing, "--force"); code != 0 {
		t.Errorf("--force: exit %d: %s", code, errs)
	}
}

// TestPanicIsInternalError: a panic in any command is caught at the
// command boundary: exit 3, with a request to report it.
func TestPanicIsInternalError(t *testing.T) {
	var out, errw bytes.Buffer
	s := &streams{In: strings.NewReader(""), Out: &out, Err: &errw}
	root := newRootCmd(s)
	var paths [][]string
	var walk func(c *cobra.Command)
	walk = func(c *cobra.Command) {
		for _, sub := range c.Commands() {
			if sub.Runnable() && sub.Name() != "help" && !strings.HasPrefix(sub.Name(), "__") {
				paths = append(paths, strings.Fields(strings.TrimPrefix(sub.CommandPath(), "allot ")))
			}
			walk(sub)
		}
	}
	walk(root)
	if len(paths) < 8 {
		t.Fatalf("only %d commands found: %v", len(paths), paths)
	}
	for _, p := range paths {
		t.Run(strings.Join(p, " "), func(t *testing.T) {
			out.Reset()
			errw.Reset()
			root := newRootCmd(s)
			c, _, err := root.Find(p)
			if err != nil {
				t.Fatal(err)
			}
			c.Args = cobra.ArbitraryArgs
			c.PersistentPreRunE = nil
			c.RunE = func(*cobra.Command, []string) error { panic("deliberate test panic") }
			c.Run = nil
			code := execute(s, root, p)
			if code != exitInternal || !strings.Contains(errw.String(), "internal error: deliberate test panic") || !strings.Contains(errw.String(), reportURL) {
				t.Errorf("exit %d, stderr:\n%s", code, errw.String())
			}
		})
	}
}

func TestStatusOf(t *testing.T) {
	tests := []struct {
		name string
		err  error
		want int
	}{
		{"nil", nil, exitOK},
		{"usage", usagef("--x: bad"), exitUsage},
		{"input", inputErr(os.ErrInvalid), exitUsage},
		{"failed", &failedError{err: os.ErrInvalid}, exitFailed},
		{"missing file", &os.PathError{Op: "open", Path: "x", Err: os.ErrNotExist}, exitUsage},
		{"unclassified", os.ErrInvalid, exitInternal},
	}
	for _, tt := range tests {
		if got := statusOf(tt.err); got != tt.want {
			t.Errorf("%s: %d, want %d", tt.name, got, tt.want)
		}
	}
}

// TestUsageErrorIsOneLine: a small mistake gives one line naming the flag
// and one pointing to the help, never the usage text.
func TestUsageErrorIsOneLine(t *testing.T) {
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"size", "--group", "4"}, "allot: --group: allot size has no such flag; did you mean --groups?"},
		{[]string{"analyze", "x.xlsx", "--posthc", "holm"}, "did you mean --posthoc?"},
		{[]string{"size", "--alpha", "high"}, "allot: --alpha high: must be a number, for example 0.05"},
		{[]string{"size", "--groups"}, "allot: --groups needs a value: --groups K"},
		{[]string{"layout", "-Z"}, "allot: -Z: allot layout has no such short flag"},
		{[]string{"analyze"}, "allot: analyze takes one FILE, got 0"},
		{[]string{"layot"}, `allot: unknown command "layot" for "allot"; did you mean layout?`},
	}
	for _, tt := range tests {
		t.Run(strings.Join(tt.args, " "), func(t *testing.T) {
			code, out, errs := runArgs(t, tt.args...)
			lines := strings.Split(strings.TrimRight(errs, "\n"), "\n")
			if code != exitUsage || out != "" || len(lines) != 2 || !strings.HasPrefix(lines[0], "allot: ") || !strings.Contains(lines[0], tt.want) ||
				!strings.HasPrefix(lines[1], "Run 'allot help") {
				t.Errorf("exit %d, stdout %q, stderr:\n%s\nwant 2 lines, the first containing %q", code, out, errs, tt.want)
			}
		})
	}
	if _, _, errs := runArgs(t, "layout", "verify"); !strings.Contains(errs, "Run 'allot help layout verify' for its flags and examples.") {
		t.Errorf("help hint of a subcommand: %q", errs)
	}
}

func TestEditDistance(t *testing.T) {
	for _, tt := range []struct {
		a, b string
		d    int
	}{{"", "", 0}, {"group", "groups", 1}, {"posthc", "posthoc", 1}, {"alpah", "alpha", 2}, {"kitten", "sitting", 3}, {"é", "e", 1}} {
		if got := editDistance(tt.a, tt.b); got != tt.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", tt.a, tt.b, got, tt.d)
		}
	}
}

// TestHelpDocumentsExitStatus: every command's help lists the exit
// statuses, including 3.
func TestHelpDocumentsExitStatus(t *testing.T) {
	root := newRootCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}})
	var walk func(c *cobra.Command)
	walk = func(c *cobra.Command) {
		if c.IsAvailableCommand() || c == root {
			if !strings.Contains(c.Long, exitHelp) {
				t.Errorf("%s: the help does not list the exit statuses", c.CommandPath())
			}
		}
		for _, sub := range c.Commands() {
			walk(sub)
		}
	}
	walk(root)
}

// TestCompletion asks the completion machinery what the shell would offer.
func TestCompletion(t *testing.T) {
	tests := []struct {
		args []string
		want []string // offered values, then the directive line
	}{
		{[]string{"analyze", "x.xlsx", "--posthoc", ""}, []string{"tukey", "dunnett", "holm", "none", ":4"}},
		{[]string{"size", "--design", ""}, []string{"crd", "rcbd", ":4"}},
		{[]string{"layout", "--numbering", ""}, []string{"rows", "serpentine", ":4"}},
		{[]string{"layout", "-o", ""}, []string{"xlsx", "csv", "json", ":8"}},
		{[]string{"check", ""}, []string{"xlsx", "csv", ":8"}},
		{[]string{"demo", "--out", ""}, []string{":16"}},
		{[]string{"docs", ""}, []string{"man", "markdown", ":4"}},
	}
	for _, tt := range tests {
		t.Run(strings.Join(tt.args, " "), func(t *testing.T) {
			code, out, errs := runArgs(t, append([]string{cobra.ShellCompRequestCmd}, tt.args...)...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			var got []string
			for _, l := range strings.Split(strings.TrimSpace(out), "\n") {
				got = append(got, strings.SplitN(l, "\t", 2)[0])
			}
			if strings.Join(got, " ") != strings.Join(tt.want, " ") {
				t.Errorf("offered %q, want %q", got, tt.want)
			}
		})
	}
}

// TestLayoutNamesMissingInputsFirst: without inputs, layout says what is
// missing and draws no seed.
func TestLayoutNamesMissingInputsFirst(t *testing.T) {
	code, out, errs := runArgs(t, "layout")
	if code != exitUsage || out != "" || strings.Contains(errs, "drew seed") || !strings.Contains(errs, "--factor") {
		t.Errorf("exit %d, stdout %q, stderr %q", code, out, errs)
	}
}

// TestUnwritableFolders: a folder that takes no files is unusable input.
func TestUnwritableFolders(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("running as root: every folder is writable")
	}
	dir := filepath.Join(t.TempDir(), "ro")
	os.Mkdir(dir, 0o555)
	defer os.Chmod(dir, 0o755)
	for _, args := range [][]string{
		{"demo", "--out", dir},
		{"demo", "--out", filepath.Join(dir, "sub")},
		{"layout", "--factor", "feed=A,B", "--reps", "2", "--seed", "1", "-o", filepath.Join(dir, "t.xlsx")},
		{"docs", "markdown", dir},
	} {
		if code, _, errs := runArgs(t, args...); code != exitUsage {
			t.Errorf("%v: exit %d, %s", args, code, errs)
		}
	}
}

// TestLeftoversNamed: a temporary left by a killed run is named on the
// next run that writes into its folder.
func TestLeftoversNamed(t *testing.T) {
	dir := t.TempDir()
	left := filepath.Join(dir, ".allot-999999999-0123456789ab.xlsx")
	os.WriteFile(left, []byte("partial"), 0o644)
	_, _, errs := runArgs(t, "layout", "--factor", "feed=A,B", "--reps", "2", "--seed", "1", "-o", filepath.Join(dir, "t.csv"))
	if !strings.Contains(errs, left) || !strings.Contains(errs, "stopped before it finished") {
		t.Errorf("stderr %q does not name %s", errs, left)
	}
}
