package web

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/internal/demo"
	"github.com/allotproject/allot/internal/options"
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
