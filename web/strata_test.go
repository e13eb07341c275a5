package web

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/internal/demo"
	"github.com/allotproject/allot/internal/options"
	"github.com/allotproject/allot/randomize"
	"github.com/allotproject/allot/report"
)

// TestCheckSplitPlot: a filled split-plot workbook is analysed stratum by
// stratum, as allot analyze does (the whole-plot factor against error (a)),
// not as a factorial of separate jobs, which WorkbookJobs refuses.
func TestCheckSplitPlot(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "chambers")
	var out bytes.Buffer
	res, err := demo.RunChambers(demo.DefaultChambers(), demo.Options{Out: dir, Version: "test", Now: func() time.Time { return time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC) }, Stdout: &out, Stderr: &out})
	if err != nil {
		t.Fatal(err)
	}
	wb, err := os.ReadFile(filepath.Join(dir, demo.FileChambersFilled))
	if err != nil {
		t.Fatal(err)
	}
	fl := readBytes(t, wb)
	if _, _, _, err := options.WorkbookJobs(fl, "chambers.xlsx", ""); !errors.Is(err, options.ErrStrata) {
		t.Errorf("WorkbookJobs of a split plot: %v, want ErrStrata", err)
	}
	s := newServer(t, Config{})
	rec := postUpload(t, s, checkValues(), part{"file", "chambers.xlsx", wb})
	body := rec.Body.String()
	if rec.Code != 200 {
		t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
	}
	// The page's JSON is the one the strata analysis gives.
	a, err := report.RunStrata(fl.Layout.Plan, fl.Responses[0], fl.StrataObservations(0), 0.05)
	if err != nil {
		t.Fatal(err)
	}
	a.Simulated = fl.Simulated()
	var want bytes.Buffer
	report.StrataAnalysesJSON(&want, s.cfg.Version, []report.StrataAnalysis{a})
	if got := section(t, body, "analysis-json-0"); got != want.String() {
		t.Errorf("analysis JSON differs:\n%.600s\nwant\n%.600s", got, want.String())
	}
	if a.SplitPlot == nil || res.Analysis.SplitPlot == nil || a.SplitPlot.Terms[0].F != res.Analysis.SplitPlot.Terms[0].F {
		t.Errorf("whole-plot F: web %v, demo %v", a.SplitPlot, res.Analysis.SplitPlot)
	}
	if !strings.Contains(want.String(), `"error": "error (a)"`) {
		t.Error("the whole-plot factor is not tested against error (a)")
	}
}

// TestCheckRepeated: a workbook of a response measured at several times is
// analysed as a split plot in time, as allot analyze does, not one time
// at a time.
func TestCheckRepeated(t *testing.T) {
	seed := design.SeedText(5)
	spec := design.Spec{Title: "repeated", Design: "crd", Factor: []string{"feed=A,B,C"}, Reps: "4", Response: []string{"weight"}, Times: "0,7,14", Seed: &seed}
	p, err := spec.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	src, dst := filepath.Join(dir, "w.xlsx"), filepath.Join(dir, "filled.xlsx")
	if err := workbook.Write(src, l, workbook.Meta{}, false); err != nil {
		t.Fatal(err)
	}
	// Test inputs: growth by time and feed with a unit pattern, no scenario.
	tr := p.Treatments()
	vals := make([][]float64, 3)
	for k := range vals {
		for i, u := range l.Units {
			vals[k] = append(vals[k], 20+float64(k)*(3+float64(u.Treatment))+0.7*float64((i*5)%3)+0.2*float64(len(tr[u.Treatment].Name)))
		}
	}
	if err := workbook.Fill(src, dst, vals, "SIMULATED for a test", false); err != nil {
		t.Fatal(err)
	}
	wb, err := os.ReadFile(dst)
	if err != nil {
		t.Fatal(err)
	}
	s := newServer(t, Config{})
	rec := postUpload(t, s, checkValues(), part{"file", "filled.xlsx", wb})
	body := rec.Body.String()
	if rec.Code != 200 {
		t.Fatalf("status %d\n%s", rec.Code, errorsIn(body))
	}
	fl := readBytes(t, wb)
	profiles, err := options.RepeatedProfiles(fl, "", 0.05)
	if err != nil || len(profiles) != 1 {
		t.Fatalf("%d profiles, %v", len(profiles), err)
	}
	var want bytes.Buffer
	report.AnalysesWithMethodsJSON(&want, s.cfg.Version, nil, []report.MethodDoc{{Response: "weight", Method: "repeated", Result: profiles[0].RMResult}})
	if got := section(t, body, "analysis-json-0"); got != want.String() {
		t.Errorf("analysis JSON differs:\n%.600s\nwant\n%.600s", got, want.String())
	}
	if !strings.Contains(want.String(), `"method": "repeated"`) {
		t.Errorf("not the repeated-measures analysis:\n%.300s", want.String())
	}
}
