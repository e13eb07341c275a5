package main

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func TestUnblindParse(t *testing.T) {
	var got *unblindOptions
	cmd := newUnblindCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *unblindOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"mice.xlsx", "--key", "k.json", "-o", "rec.json", "--json", "--force"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.file != "mice.xlsx" || got.key != "k.json" || got.out != "rec.json" || !got.json || !got.force {
		t.Errorf("%+v", got)
	}
	for _, tt := range []struct {
		args []string
		want string
	}{
		{[]string{"unblind", "mice.xlsx"}, "--key: give the key file"},
		{[]string{"unblind"}, "unblind takes one FILE"},
		{[]string{"unblind", "mice.xlsx", "--key", "mice.xlsx"}, "the same file as"},
		{[]string{"unblind", "mice.xlsx", "--key", "k.json", "-o", "x.pdf"}, "-o x.pdf: the file name must end in .json or .txt"},
	} {
		if code, _, errs := runArgs(t, tt.args...); code != exitUsage || !strings.Contains(errs, tt.want) {
			t.Errorf("%v: exit %d %q; want 2 and %q", tt.args, code, errs, tt.want)
		}
	}
}

// TestUnblindRun checks the exact output for a layout made with a fixed
// seed and secret, at a fixed time.
func TestUnblindRun(t *testing.T) {
	dir := t.TempDir()
	mice := writeMice(t, dir)
	key, wb := filepath.Join(dir, "key.json"), filepath.Join(dir, "mice.xlsx")
	for _, mode := range []string{"treatment", "unit"} {
		code, _, errs := runLayoutSecret(t, testSecret, "--title", "Dose finding", "--factor", "dose=0,10,30", "--units", mice, "--id-column", "tag",
			"--block-column", "litter", "--block-name", "litter", "--per-block", "3", "--blind", mode, "--key", key, "--seed", "7", "-o", wb, "--force")
		if code != 0 {
			t.Fatal(errs)
		}
		var out, errw bytes.Buffer
		s := &streams{Out: &out, Err: &errw}
		cmd := newUnblindCmd(s, func(o *unblindOptions) error {
			o.now = func() time.Time { return time.Date(2026, 12, 24, 9, 30, 0, 0, time.UTC) }
			return unblindRun(s, o)
		})
		cmd.SetArgs([]string{wb, "--key", key})
		if err := cmd.Execute(); err != nil {
			t.Fatal(err)
		}
		golden(t, "unblind_"+mode, strings.ReplaceAll(out.String(), dir, "DIR"))
	}
}
