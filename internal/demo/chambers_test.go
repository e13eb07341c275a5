package demo

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/column"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/power"
)

func TestChambersEndToEnd(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "chambers")
	var out bytes.Buffer
	s := DefaultChambers()
	res, err := RunChambers(s, Options{Out: dir, Version: "test", Now: func() time.Time { return time.Date(2026, 12, 2, 9, 0, 0, 0, time.UTC) }, Stdout: &out, Stderr: &out})
	if err != nil {
		t.Fatal(err)
	}
	// The replication is the least reaching the target for the whole-plot test.
	plan := power.SplitPlotPlan{A: 2, B: 3, Means: s.PlanMeans, SDMain: s.PlanSDMain, SDSub: s.PlanSD, Alpha: s.Alpha}
	if res.R < 2 || plan.Evaluate(res.R)[0].Power < s.Power || res.R > 2 && plan.Evaluate(res.R - 1)[0].Power >= s.Power {
		t.Errorf("r = %d chambers per regime", res.R)
	}
	// Each chamber holds one regime and every variety once.
	if err := res.Layout.Check(); err != nil || len(res.Layout.Units) != 2*3*res.R {
		t.Errorf("layout: %v, %d units", err, len(res.Layout.Units))
	}
	a := res.Analysis
	if a.SplitPlot == nil || a.SplitPlot.DFa != 2*(res.R-1) || a.SplitPlot.DFb != 2*(res.R-1)*2 || !a.Simulated {
		t.Fatalf("analysis %+v", a)
	}
	// The analysis is that of the data in the filled workbook.
	fl, err := workbook.Read(filepath.Join(dir, FileChambersFilled), workbook.ReadOptions{})
	if err != nil || fl.Errors() > 0 || !fl.Simulated() {
		t.Fatalf("filled workbook: %v, %d errors, simulated %v", err, fl.Errors(), fl.Simulated())
	}
	o := fl.StrataObservations(0)
	direct, err := analyze.SplitPlotANOVA(analyze.SplitPlot{Values: o.Values.Strings(), Whole: analyze.Column{Name: "light", Values: column.Of(o.Whole)},
		Sub: analyze.Column{Name: "variety", Values: column.Of(o.Sub)}, MainPlot: analyze.Column{Name: "chamber", Values: column.Of(o.MainPlots)}})
	if err != nil || direct.Terms[0].F != a.SplitPlot.Terms[0].F {
		t.Errorf("direct analysis %v, F %v vs %v", err, direct, a.SplitPlot.Terms[0].F)
	}
	for _, f := range []string{FileChambersWorkbook, FileChambersFilled, FileChambersLayout, FileChambersReport} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("%s: %v", f, err)
		}
	}
	md, _ := os.ReadFile(filepath.Join(dir, FileChambersReport))
	for _, want := range []string{"SIMULATED", "error (a)", "Satterthwaite"} {
		if !strings.Contains(string(md), want) || !strings.Contains(out.String(), want) {
			t.Errorf("report or output lacks %q", want)
		}
	}
}
