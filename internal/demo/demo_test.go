package demo

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design/workbook"
)

func runDemo(t *testing.T, dir string, force bool) (*Result, string, error) {
	t.Helper()
	var out, errw bytes.Buffer
	res, err := Run(Default(), Options{
		Out: dir, Force: force, Version: "test",
		Now:    func() time.Time { return time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC) },
		Stdout: &out, Stderr: &errw,
	})
	return res, out.String(), err
}

func TestDemoEndToEnd(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "demo")
	res, out, err := runDemo(t, dir, false)
	if err != nil {
		t.Fatal(err)
	}
	// The plan: the exact solve reaches the target and is reported.
	if res.Size.Power < 0.9 || res.Size.N < 2 || res.Size.NDropout <= res.Size.N {
		t.Errorf("sample size %d with power %.4f", res.Size.N, res.Size.Power)
	}
	// Simulated with losses, the laid-out trial keeps its power near target.
	if res.Simulated.P < 0.85 || res.Simulated.SE <= 0 {
		t.Errorf("simulated power %+v", res.Simulated)
	}
	// The layout is balanced: every bench holds each substrate once.
	if err := res.Layout.Check(); err != nil {
		t.Fatal(err)
	}
	for i, row := range res.Layout.Counts() {
		for b, c := range row {
			if c != 1 {
				t.Errorf("treatment %d bench %d: %d units", i, b+1, c)
			}
		}
	}
	// The read-back check is clean and the F test of substrate rejects at 0.05.
	if len(res.Problems) != 0 {
		t.Errorf("problems: %v", res.Problems)
	}
	var found bool
	for _, term := range res.Table.Terms {
		if term.Source == "substrate" {
			found = true
			if term.P >= 0.05 {
				t.Errorf("substrate p = %.4f, want < 0.05 with the demo seed", term.P)
			}
		}
	}
	if !found || res.PostHoc == nil {
		t.Fatal("no substrate term or no Tukey comparisons")
	}
	if res.Table.N != len(res.Layout.Units) {
		t.Errorf("analysed %d of %d units", res.Table.N, len(res.Layout.Units))
	}
	for _, want := range []string{"Sample size", "Layout:", "Balance:", "Analysis of variance: shoot_dry_mg", "Tukey HSD", "SIMULATED"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q", want)
		}
	}
	for _, f := range []string{FileWorkbook, FileFilled, FileJustification, FileLayout, FileReport, FileAnalysis, FileHTML, FileMap, FileCurve, FileLabels, FileSheet, DirFigures + "/shoot_dry_mg-means.png"} {
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("%s missing or empty: %v", f, err)
		}
	}
	// The filled copy says it is simulated, in the file itself.
	fl, err := workbook.Read(filepath.Join(dir, FileFilled), workbook.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fl.Errors() != 0 {
		t.Errorf("filled workbook errors: %v", fl.Problems)
	}
	md, _ := os.ReadFile(filepath.Join(dir, FileReport))
	if !strings.Contains(string(md), "SIMULATED") {
		t.Error("report does not say the data are simulated")
	}
}

func TestDemoRefusesNonEmptyFolder(t *testing.T) {
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "keep.txt"), []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, err := runDemo(t, dir, false)
	if !errors.Is(err, ErrOutExists) {
		t.Fatalf("got %v, want ErrOutExists", err)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "keep.txt")); string(b) != "mine" {
		t.Error("the user's file was touched")
	}
	if _, _, err := runDemo(t, dir, true); err != nil {
		t.Fatalf("with force: %v", err)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "keep.txt")); string(b) != "mine" {
		t.Error("--force removed an unrelated file")
	}
}
