package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/xuri/excelize/v2"
)

func TestAnalyzeParse(t *testing.T) {
	var got *analyzeOptions
	cmd := newAnalyzeCmd(&streams{Out: &bytes.Buffer{}, Err: &bytes.Buffer{}}, func(o *analyzeOptions) error { got = o; return nil })
	cmd.SetArgs([]string{"y.csv", "--response", "yield", "--factor", "variety", "--factor", "n", "--block", "field", "--ss", "2", "--posthoc", "holm", "--format", "markdown"})
	if err := cmd.Execute(); err != nil {
		t.Fatal(err)
	}
	if got.read.file != "y.csv" || got.response != "yield" || len(got.factors) != 2 || got.block != "field" || got.ss != 2 || got.posthoc != "holm" || got.format != "markdown" {
		t.Errorf("%+v", got)
	}
}

// demoFilled runs the demo once and returns its filled workbook.
func demoFilled(t *testing.T) string {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "demo")
	if code, _, errs := runArgs(t, "demo", "--out", dir); code != 0 {
		t.Fatal(errs)
	}
	return filepath.Join(dir, "trial-filled-SIMULATED.xlsx")
}

func TestAnalyzeRun(t *testing.T) {
	wb := demoFilled(t)
	for _, tt := range []struct {
		name string
		args []string
	}{
		{"analyze_text", []string{"analyze", wb}},
		{"analyze_markdown_dunnett", []string{"analyze", wb, "--posthoc", "dunnett", "--format", "markdown"}},
	} {
		t.Run(tt.name, func(t *testing.T) {
			code, out, errs := runArgs(t, tt.args...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			golden(t, tt.name, out)
		})
	}
	// The demo's filled copy says it is simulated, and so does its analysis.
	if _, out, _ := runArgs(t, "analyze", wb); !strings.Contains(out, "SIMULATED") {
		t.Error("analysis of simulated data does not say so")
	}
	code, out, _ := runArgs(t, "analyze", wb, "--json")
	var doc struct {
		Format    string           `json:"format"`
		Responses []map[string]any `json:"responses"`
	}
	if code != 0 || json.Unmarshal([]byte(out), &doc) != nil {
		t.Fatalf("json: exit %d", code)
	}
	if doc.Format != "allot.analysis/v1" || len(doc.Responses) == 0 {
		t.Fatalf("JSON document: format %q, %d responses", doc.Format, len(doc.Responses))
	}
	m := doc.Responses[0]
	for _, k := range []string{"response", "model", "anova", "means", "comparisons", "assumptions", "reading", "cautions"} {
		if _, ok := m[k]; !ok {
			t.Errorf("JSON lacks %q", k)
		}
	}
	for _, k := range []string{"terms", "residual", "groups", "posthoc"} {
		if _, ok := m[k]; ok {
			t.Errorf("JSON repeats %q at the response level", k)
		}
	}
	for _, g := range m["means"].([]any) {
		if g.(map[string]any)["term"] == nil {
			t.Errorf("means entry without its term: %v", g)
		}
	}
}

func TestAnalyzePlainCSV(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "yields.csv")
	os.WriteFile(p, []byte("plot,variety,field,yield\n1,A,F1,5.1\n2,B,F1,6.0\n3,C,F1,7.2\n4,A,F2,4.8\n5,B,F2,6.3\n6,C,F2,6.9\n7,A,F3,5.3\n8,B,F3,5.9\n9,C,F3,7.4\n10,A,F4,5.0\n11,B,F4,\n12,C,F4,7.0\n"), 0o644)
	code, out, errs := runArgs(t, "analyze", p, "--response", "yield", "--factor", "variety", "--block", "field", "--unit-column", "plot")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, want := range []string{"field ", "variety ", "residual ", "1 unit(s) had no value"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
}

func TestAnalyzeBadInput(t *testing.T) {
	dir := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(body), 0o644)
		return p
	}
	text := write("text.csv", "g,y\na,x\nb,y\n")
	one := write("one.csv", "g,y\na,1\na,2\na,3\n")
	single := write("single.csv", "g,y\na,1\nb,2\nc,3\n")
	blocks := write("blocks.csv", "g,b,y\na,1,1\nb,1,2\na,2,3\nb,2,4.5\na,3,5\n")
	empty := write("empty.csv", "g,y\na,\nb,\n")
	two := write("two.csv", "g,y\na,1\na,2\nb,3\nb,5\n")
	tests := []struct {
		args []string
		want string
	}{
		{[]string{text, "--response", "y", "--factor", "g"}, `line 2 column "y": "x" is not a number`},
		{[]string{empty, "--response", "y", "--factor", "g"}, `column "y": has no numbers to analyse`},
		{[]string{one, "--response", "y", "--factor", "g"}, `factor "g" has only one level in the data`},
		{[]string{single, "--response", "y", "--factor", "g"}, "no residual degrees of freedom"},
		{[]string{one, "--response", "weight", "--factor", "g"}, `column "weight": no such column for --response`},
		{[]string{one, "--response", "y", "--factor", "dose"}, `column "dose": no such column for --factor`},
		{[]string{one, "--response", "y", "--factor", "g", "--ss", "4"}, "--ss 4: must be 1, 2 or 3"},
		{[]string{two, "--response", "y", "--factor", "g", "--posthoc", "dunnett", "--control", "z"}, `control "z" is not a level of g`},
		{[]string{one}, "needs --response COLUMN and --factor COLUMN"},
		{[]string{two, "--response", "y", "--factor", "g", "--json", "--format", "markdown"}, "--json and --format markdown ask for two formats"},
		{[]string{two, "--response", "y", "--factor", "g", "--factor", "g"}, `factor "g" is given twice`},
		{[]string{two, "--response", "y", "--factor", "g", "--direction", "lower"}, "--direction lower: is for a one-sided test"},
		{[]string{two, "--response", "y", "--factor", "g", "--blocks", "mixed"}, "--blocks mixed: must be fixed or random"},
	}
	for _, tt := range tests {
		t.Run(tt.want, func(t *testing.T) {
			code, _, errs := runArgs(t, append([]string{"analyze"}, tt.args...)...)
			if code != exitUsage || !strings.Contains(errs, tt.want) {
				t.Errorf("exit %d, stderr %q; want 2 and %q", code, errs, tt.want)
			}
		})
	}
	// A block left with one unit is analysed, as the simulation does, and
	// said so.
	code, out, errs := runArgs(t, "analyze", blocks, "--response", "y", "--factor", "g", "--block", "b")
	if code != 0 || !strings.Contains(out, "b 3 hold(s) a single unit") {
		t.Errorf("single-unit block: exit %d, %s%s", code, out, errs)
	}
}

// Constant-within-group data: the residual SS is exactly zero (exact
// fractions), so F is undefined, no comparison or check runs, and the
// command exits 1 (an analysis that ran and found a problem).
func TestAnalyzeExactFit(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "flat.csv")
	os.WriteFile(p, []byte("g,y\na,1.1\na,1.1\nb,2.3\nb,2.3\nc,0.7\nc,0.7\n"), 0o644)
	code, out, errs := runArgs(t, "analyze", p, "--response", "y", "--factor", "g")
	if code != exitFailed || !strings.Contains(errs, "no F test is defined") {
		t.Fatalf("exit %d, stderr %q", code, errs)
	}
	for _, want := range []string{"undefined", "exactly zero", "The residual checks were not run"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	if strings.Contains(out, "Tukey HSD comparisons") || strings.Contains(out, "Shapiro–Wilk") {
		t.Errorf("comparisons or checks ran on an exact fit:\n%s", out)
	}
}

func TestAnalyzeRefusesErrors(t *testing.T) {
	dir := t.TempDir()
	layoutFiles(t, dir)
	code, _, errs := runArgs(t, "analyze", filepath.Join(dir, "trial.xlsx"))
	if code != exitUsage || !strings.Contains(errs, `response "height_cm" has no values yet`) {
		t.Errorf("empty workbook: exit %d, %q", code, errs)
	}
}

func TestAnalyzeSubsamples(t *testing.T) {
	dir := t.TempDir()
	wb := filepath.Join(dir, "sub.xlsx")
	code, _, errs := runArgs(t, "layout", "--factor", "feed=F0,F1,F2", "--design", "rcbd", "--blocks", "3", "--seed", "5",
		"--response", "leaf_mm", "--subsamples", "2", "-o", wb)
	if code != 0 {
		t.Fatal(errs)
	}
	f, err := excelize.OpenFile(wb)
	if err != nil {
		t.Fatal(err)
	}
	rows, _ := f.GetRows("Entry")
	for r := 2; r <= len(rows); r++ {
		treat := rows[r-1][3]
		base := map[string]float64{"F0": 20, "F1": 24, "F2": 29}[treat]
		f.SetCellFloat("Entry", "F"+strconv.Itoa(r), base+float64(r%3)*0.4, -1, 64)
	}
	f.Save()
	code, out, errs := runArgs(t, "analyze", wb)
	if code != 0 || !strings.Contains(out, "Subsamples: 18 measurements on 9 units (2 per unit) were averaged to the unit") {
		t.Errorf("exit %d %s\n%s", code, errs, out)
	}
}

func TestAnalyzeReportAndPlots(t *testing.T) {
	wb := demoFilled(t)
	dir := t.TempDir()
	rep := filepath.Join(dir, "r.html")
	plots := filepath.Join(dir, "plots")
	code, _, errs := runArgs(t, "analyze", wb, "--report", rep, "--plots", plots, "--unit", "mg")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	b, _ := os.ReadFile(rep)
	if !strings.Contains(string(b), "<svg") || !strings.Contains(string(b), "allot analyze --plots") {
		t.Error("report lacks figures or the command")
	}
	entries, _ := os.ReadDir(plots)
	if len(entries) != 6 {
		t.Errorf("%d figure files, want 6", len(entries))
	}
	code, _, errs = runArgs(t, "analyze", wb, "--report", rep)
	if code != exitUsage || !strings.Contains(errs, "--force") {
		t.Errorf("second run: exit %d %s", code, errs)
	}
	code, _, errs = runArgs(t, "analyze", wb, "--report", filepath.Join(dir, "r.pdf"))
	if code != exitUsage || !strings.Contains(errs, "must end in .html") {
		t.Errorf("pdf: exit %d %s", code, errs)
	}
}

func TestLayoutMap(t *testing.T) {
	dir := t.TempDir()
	for _, ext := range []string{"svg", "png"} {
		p := filepath.Join(dir, "map."+ext)
		code, _, errs := runArgs(t, "layout", "--factor", "feed=A,B,C", "--design", "rcbd", "--blocks", "3", "--grid", "1x3", "--seed", "2", "--map", p)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, errs)
		}
		if st, err := os.Stat(p); err != nil || st.Size() < 1000 {
			t.Errorf("%s: %v", p, err)
		}
	}
}

// A plain CSV table with every treatment twice in every block gets the
// generalised block model, as the same data through its plan would, and
// says so.
func TestAnalyzePlainCSVReplicatedBlocks(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "rep.csv")
	var b strings.Builder
	b.WriteString("v,bench,y\n")
	vals := []string{"5.1", "5.4", "6.0", "6.3", "4.9", "5.0", "6.2", "6.6", "5.3", "5.8", "6.1", "6.9"}
	k := 0
	for _, bench := range []string{"1", "2", "3"} {
		for _, v := range []string{"A", "A", "B", "B"} {
			b.WriteString(v + "," + bench + "," + vals[k] + "\n")
			k++
		}
	}
	os.WriteFile(p, []byte(b.String()), 0o644)
	code, out, errs := runArgs(t, "analyze", p, "--response", "y", "--factor", "v", "--block", "bench")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	for _, want := range []string{"bench × v", "generalised randomised block design", "Every treatment appears at least twice in every bench"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
}
