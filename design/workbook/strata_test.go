package workbook

import (
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/randomize"

	"github.com/xuri/excelize/v2"
)

func splitLayout(t *testing.T) design.Layout {
	t.Helper()
	seed := design.SeedText(8)
	p, err := design.Spec{Design: "split-plot", Seed: &seed, WholePlot: []string{"light=low,high"}, SubPlot: []string{"variety=V1,V2,V3"},
		Blocks: 2, BlockName: "room", WholePlotName: "chamber", Response: []string{"dry_g"}}.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// TestSplitPlotWorkbook: the Entry sheet has the main-plot and factor
// columns, the Map outlines main plots, an edited main-plot cell is caught,
// and the observations carry each unit's strata.
func TestSplitPlotWorkbook(t *testing.T) {
	l := splitLayout(t)
	path := filepath.Join(t.TempDir(), "sp.xlsx")
	if err := Write(path, l, Meta{Version: "test", Created: time.Date(2026, 12, 2, 0, 0, 0, 0, time.UTC)}, false); err != nil {
		t.Fatal(err)
	}
	f, err := excelize.OpenFile(path)
	if err != nil {
		t.Fatal(err)
	}
	rows, _ := f.GetRows(SheetEntry)
	if got := strings.Join(rows[0], ","); got != "Unit,Room,Chamber,Position,Treatment,light,variety,dry_g,Status,Reason,Notes" {
		t.Errorf("Entry header %s", got)
	}
	// Position 1 of room 1 starts a chamber: a thick left border on its
	// place in the Map sheet.
	first := l.Units[0].ID
	mrows, _ := f.GetRows(SheetMap)
	found := false
	for r, row := range mrows {
		for c, v := range row {
			if !strings.HasPrefix(v, first+"\n") {
				continue
			}
			ref, _ := excelize.CoordinatesToCellName(c+1, r+1)
			id, _ := f.GetCellStyle(SheetMap, ref)
			st, _ := f.GetStyle(id)
			for _, b := range st.Border {
				found = found || b.Type == "left" && b.Style == 5
			}
		}
	}
	if !found {
		t.Errorf("Map: the place of unit %s has no thick left edge", first)
	}
	for i := range rows[1:] {
		f.SetCellFloat(SheetEntry, cell(8, i+2), float64(10+i), -1, 64)
	}
	f.SetCellInt(SheetEntry, "C3", 4) // unit 102 moved to another chamber
	edited := filepath.Join(t.TempDir(), "edited.xlsx")
	if err := f.SaveAs(edited); err != nil {
		t.Fatal(err)
	}
	fl, err := Read(edited, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fl.Errors() != 1 || !strings.Contains(fl.Problems[0].String(), `Chamber was "1" in the plan and is now "4"`) {
		t.Errorf("problems %v", fl.Problems)
	}
	o := fl.StrataObservations(0)
	if o.Values.Len() != 12 || o.MainPlots[0] != "1" || o.MainPlots[11] != "4" || o.Blocks.At(11) != "2" || len(o.Whole) != 12 || o.Whole[0]+o.Sub[0] != strings.Replace(l.Plan.Treatments()[l.Units[0].Treatment].Name, " × ", "", 1) {
		t.Errorf("observations %+v", o)
	}
}
