package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/design"
)

func TestCheckScansParse(t *testing.T) {
	var got *checkOptions
	cmd := newCheckCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *checkOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"trial.xlsx", "--scans", "scans.csv"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.scans != "scans.csv" {
		t.Errorf("%+v", got)
	}
}

func TestCheckScansRun(t *testing.T) {
	dir := t.TempDir()
	layoutFiles(t, dir)
	b, err := os.ReadFile(filepath.Join(dir, "trial.json"))
	if err != nil {
		t.Fatal(err)
	}
	lay, err := design.ParseLayout(b)
	if err != nil {
		t.Fatal(err)
	}
	fp := lay.Plan.Fingerprint()
	var in strings.Builder
	in.WriteString("code,response,value\n")
	for i, u := range lay.Units {
		fmt.Fprintf(&in, "%s,height_cm,%d.5\n", design.UnitCode(fp, u.ID, 0), 10+i)
	}
	good := filepath.Join(dir, "scans.csv")
	os.WriteFile(good, []byte(in.String()), 0o644)
	wb := filepath.Join(dir, "trial.xlsx")
	code, out, errs := runArgs(t, "check", wb, "--scans", good)
	if code != 0 || !strings.Contains(out, "scans.csv: 6 scan(s), 6 matched to 6 unit(s) of plan "+fp[:12]) || !strings.Contains(out, "Scans: every code belongs to this plan") {
		t.Errorf("good scans: exit %d\n%s%s", code, out, errs)
	}
	in.WriteString("allot:0123456789ab:101,height_cm,3\n")
	fmt.Fprintf(&in, "%s,height_cm,3\n", design.UnitCode(fp, "909", 0))
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte(in.String()), 0o644)
	code, out, _ = runArgs(t, "check", wb, "--scans", bad)
	for _, want := range []string{
		"error: line 8: code allot:0123456789ab:101 belongs to another plan",
		`error: line 9: code ` + design.UnitCode(fp, "909", 0) + ` names unit "909", which is not in the plan`,
		"Scans: 2 errors and 0 warnings",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("bad scans: no %q in\n%s", want, out)
		}
	}
	if code != exitFailed {
		t.Errorf("bad scans: exit %d, want 1", code)
	}
	// CSV with its layout, and JSON output.
	code, out, errs = runArgs(t, "check", filepath.Join(dir, "trial.csv"), "--plan", filepath.Join(dir, "trial.json"), "--scans", bad, "--json")
	var doc struct {
		Check struct {
			Units int `json:"units"`
		} `json:"check"`
		Scans struct {
			Matched  int `json:"matched"`
			Errors   int `json:"errors"`
			Problems []struct {
				Line int `json:"line"`
			} `json:"problems"`
		} `json:"scans"`
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("%v\n%s%s", err, out, errs)
	}
	if code != exitFailed || doc.Check.Units != 6 || doc.Scans.Matched != 6 || doc.Scans.Errors != 2 || doc.Scans.Problems[0].Line != 8 {
		t.Errorf("json: exit %d %+v", code, doc)
	}
	code, _, errs = runArgs(t, "check", wb, "--scans", filepath.Join(dir, "none.csv"))
	if code != exitUsage || !strings.Contains(errs, "--scans") {
		t.Errorf("missing scans file: exit %d %s", code, errs)
	}
}
