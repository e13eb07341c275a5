package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

func runArgs(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errw bytes.Buffer
	code := run(args, strings.NewReader(""), &out, &errw)
	return code, out.String(), errw.String()
}

func TestVersionAndHelp(t *testing.T) {
	code, out, _ := runArgs(t, "--version")
	if code != 0 || !strings.HasPrefix(out, "allot ") || strings.Count(out, "\n") != 1 {
		t.Errorf("--version: code %d, %q", code, out)
	}
	code, out, _ = runArgs(t, "--help")
	if code != 0 || !strings.Contains(out, "Exit status:") || !strings.Contains(out, "demo") {
		t.Errorf("--help: code %d, %q", code, out)
	}
	code, out, _ = runArgs(t, "completion", "bash")
	if code != 0 || !strings.Contains(out, "bash completion") {
		t.Errorf("completion bash: code %d", code)
	}
}

func TestUsageErrors(t *testing.T) {
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"unknown command", []string{"plant"}, `unknown command "plant"`},
		{"unknown flag", []string{"demo", "--colour"}, "--colour: allot demo has no such flag"},
		{"stray argument", []string{"demo", "extra"}, `allot demo takes no arguments, got "extra"`},
		{"empty out", []string{"demo", "--out", ""}, "--out: give a folder"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, _, errs := runArgs(t, tt.args...)
			if code != exitUsage || !strings.Contains(errs, tt.want) {
				t.Errorf("code %d, stderr %q; want 2 and %q", code, errs, tt.want)
			}
		})
	}
}

func TestDemoParse(t *testing.T) {
	var got *demoOptions
	cmd := newDemoCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *demoOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"--out", "/tmp/x", "--force"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.out != "/tmp/x" || !got.force {
		t.Errorf("parsed %+v", got)
	}
	cmd = newDemoCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *demoOptions) error { got = o; return nil })
	cmd.SetArgs(nil)
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.out != "allot-demo" || got.force {
		t.Errorf("defaults %+v", got)
	}
}

func TestDemoRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "d")
	code, out, errs := runArgs(t, "demo", "--out", dir)
	if code != 0 {
		t.Fatalf("code %d: %s", code, errs)
	}
	for _, want := range []string{"== 1. Sample size ==", "== 2. Randomised layout ==", "== 5. Analysis (SIMULATED data) ==", "source of variation"} {
		if !strings.Contains(out, want) {
			t.Errorf("stdout lacks %q", want)
		}
	}
	if !strings.Contains(errs, "allot demo: done") {
		t.Errorf("stderr %q", errs)
	}
	// A second run without --force refuses with exit 2 and changes nothing.
	before, _ := os.ReadFile(filepath.Join(dir, "trial.xlsx"))
	code, out, errs = runArgs(t, "demo", "--out", dir)
	if code != exitUsage || out != "" || !strings.Contains(errs, "--force") {
		t.Errorf("second run: code %d, stdout %q, stderr %q", code, out, errs)
	}
	after, _ := os.ReadFile(filepath.Join(dir, "trial.xlsx"))
	if !bytes.Equal(before, after) {
		t.Error("workbook changed by a refused run")
	}
}

// TestPrivateTempDir: library temporaries (excelize's) go to a folder of
// the run's own, removed at the end; folders of dead runs are removed.
func TestPrivateTempDir(t *testing.T) {
	base := t.TempDir()
	t.Setenv("TMPDIR", base)
	dead := filepath.Join(base, tempDirPrefix+"999999999-x")
	alive := filepath.Join(base, tempDirPrefix+strconv.Itoa(os.Getppid())+"-y")
	other := filepath.Join(base, "someone-else")
	for _, d := range []string{dead, alive, other} {
		os.Mkdir(d, 0o700)
	}
	cleanup := privateTempDir()
	mine := os.TempDir()
	if filepath.Dir(mine) != base || !strings.HasPrefix(filepath.Base(mine), tempDirPrefix+strconv.Itoa(os.Getpid())+"-") {
		t.Fatalf("TMPDIR is %s", mine)
	}
	os.WriteFile(filepath.Join(mine, "excelize-123"), []byte("x"), 0o600)
	cleanup()
	if os.TempDir() != base {
		t.Errorf("TMPDIR not restored: %s", os.TempDir())
	}
	for _, tt := range []struct {
		dir  string
		kept bool
	}{{mine, false}, {dead, false}, {alive, true}, {other, true}} {
		if _, err := os.Stat(tt.dir); (err == nil) != tt.kept {
			t.Errorf("%s: kept %v, want %v", tt.dir, err == nil, tt.kept)
		}
	}
}
