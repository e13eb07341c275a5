package analyze

import (
	"math"
	"strconv"
	"testing"
)

// TestLatinSquarePublished: the rocket-propellant Latin square of
// Montgomery, Design and Analysis of Experiments (Wiley), Example 4.3
// (formulations A–E, batches of raw material as rows, operators as
// columns; the data and ANOVA are given from memory and reproduce the
// published sums of squares exactly): SS formulations 330.00, batches
// 68.00, operators 150.00, error 128.00 on 12 df, F = 7.73 for
// formulations.
func TestLatinSquarePublished(t *testing.T) {
	rows := [][]struct {
		f string
		y int
	}{
		{{"A", 24}, {"B", 20}, {"C", 19}, {"D", 24}, {"E", 24}},
		{{"B", 17}, {"C", 24}, {"D", 30}, {"E", 27}, {"A", 36}},
		{{"C", 18}, {"D", 38}, {"E", 26}, {"A", 27}, {"B", 21}},
		{{"D", 26}, {"E", 31}, {"A", 26}, {"B", 23}, {"C", 22}},
		{{"E", 22}, {"A", 30}, {"B", 20}, {"C", 29}, {"D", 31}},
	}
	d := LatinData{Response: "burning rate", Row: Column{Name: "batch"}, Col: Column{Name: "operator"}, Treatment: Column{Name: "formulation"}}
	for i, r := range rows {
		for j, c := range r {
			d.Values = append(d.Values, strconv.Itoa(c.y))
			d.Row.Values = d.Row.Values.Append(strconv.Itoa(i + 1))
			d.Col.Values = d.Col.Values.Append(strconv.Itoa(j + 1))
			d.Treatment.Values = d.Treatment.Values.Append(c.f)
		}
	}
	r, err := LatinSquareANOVA(d)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{"batch": 68, "operator": 150, "formulation": 330}
	for _, tm := range r.Terms {
		if math.Abs(tm.SS-want[tm.Source]) > 1e-9 || tm.DF != 4 {
			t.Errorf("%s: SS %g on %d df, want %g on 4", tm.Source, tm.SS, tm.DF, want[tm.Source])
		}
		if tm.Source == "formulation" && math.Abs(tm.F-7.734375) > 1e-9 {
			t.Errorf("formulation F %g, want 7.73", tm.F)
		}
	}
	if math.Abs(r.Residual.SS-128) > 1e-9 || r.Residual.DF != 12 {
		t.Errorf("error SS %g on %d df, want 128 on 12", r.Residual.SS, r.Residual.DF)
	}
}

// TestSplitPlotPublished: the paper tensile-strength split plot of
// Montgomery, Design and Analysis of Experiments (Wiley), chapter on
// split-plot designs (3 pulp preparation methods as whole plots on each of
// 3 days as replicates, 4 cooking temperatures as sub-plots; data and sums
// of squares from memory, and the data reproduce them exactly): replicates
// 77.55, methods 128.39, replicates × methods 36.28 (the whole-plot error),
// temperature 434.08, methods × temperature 75.17, total 822.97; the
// sub-plot error pools replicates × temperature and the three-way term,
// 71.50 on 18 df, as in Gomez and Gomez (1984).
func TestSplitPlotPublished(t *testing.T) {
	data := [][][]int{
		{{30, 35, 37, 36}, {34, 41, 38, 42}, {29, 26, 33, 36}},
		{{28, 32, 40, 41}, {31, 36, 42, 40}, {31, 30, 32, 40}},
		{{31, 37, 41, 40}, {35, 40, 39, 44}, {32, 34, 39, 45}},
	}
	var d SplitPlot
	d.Response, d.Whole.Name, d.Sub.Name, d.MainPlot.Name = "tensile strength", "method", "temperature", "plot"
	blk := Column{Name: "day"}
	temps := []string{"200", "225", "250", "275"}
	for r, rep := range data {
		for m, row := range rep {
			for k, y := range row {
				d.Values = append(d.Values, strconv.Itoa(y))
				d.Whole.Values = d.Whole.Values.Append(strconv.Itoa(m + 1))
				d.Sub.Values = d.Sub.Values.Append(temps[k])
				d.MainPlot.Values = d.MainPlot.Values.Append(strconv.Itoa(r*3 + m))
				blk.Values = blk.Values.Append(strconv.Itoa(r + 1))
			}
		}
	}
	d.Block = &blk
	res, err := SplitPlotANOVA(d)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{"day": 77.5556, "method": 128.3889, "temperature": 434.0833, "method × temperature": 75.1667}
	for _, tm := range res.Terms {
		if w, ok := want[tm.Source]; ok && math.Abs(tm.SS-w) > 5e-4 {
			t.Errorf("%s SS %.4f, want %.4f", tm.Source, tm.SS, w)
		}
	}
	if math.Abs(res.MSa*float64(res.DFa)-36.2778) > 5e-4 || res.DFa != 4 {
		t.Errorf("whole-plot error SS %.4f on %d df, want 36.28 on 4", res.MSa*float64(res.DFa), res.DFa)
	}
	if math.Abs(res.MSb*float64(res.DFb)-71.5) > 5e-4 || res.DFb != 18 {
		t.Errorf("sub-plot error SS %.4f on %d df, want 71.50 on 18", res.MSb*float64(res.DFb), res.DFb)
	}
}
