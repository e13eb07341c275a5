package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/allotproject/allot/design/workbook"
)

// methodsCSV is an invented rendering fixture (not a reference): germinated
// seeds out of 20, lesion counts, height and a start height per pot.
const methodsCSV = `pot,mix,bench,germ,lesions,h,start
1,a,1,12,3,10.2,5.1
2,b,1,15,5,12.5,5.5
3,c,1,9,1,9.1,4.8
4,a,2,11,4,10.8,5.3
5,b,2,16,6,13.1,5.9
6,c,2,10,2,9.5,4.7
7,a,3,13,2,11.0,5.4
8,b,3,14,7,12.2,5.6
9,c,3,8,1,8.9,4.6
10,a,4,12,3,10.5,5.0
11,b,4,17,5,13.4,6.0
12,c,4,9,2,9.0,4.9
`

func TestAnalyzeMethodsPlainCSV(t *testing.T) {
	path := filepath.Join(t.TempDir(), "m.csv")
	if err := os.WriteFile(path, []byte(methodsCSV), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		want []string
	}{
		{[]string{"--response", "h", "--factor", "mix", "--method", "welch"}, []string{"Welch's test of mix", "Games–Howell"}},
		{[]string{"--response", "h", "--factor", "mix", "--method", "rank"}, []string{"Kruskal–Wallis test of mix", "Dunn"}},
		{[]string{"--response", "h", "--factor", "mix", "--block", "bench", "--method", "rank"}, []string{"Friedman test (within bench)", "Conover"}},
		{[]string{"--response", "germ", "--factor", "mix", "--block", "bench", "--family", "binomial", "--trials", "20"}, []string{"Binomial model (logit link)", "odds ratio"}},
		{[]string{"--response", "lesions", "--factor", "mix", "--family", "poisson"}, []string{"Poisson model (log link)", "rate ratio"}},
		{[]string{"--response", "h", "--factor", "mix", "--covariate", "start"}, []string{"Analysis of covariance: h adjusted for start", "Equal slopes"}},
		{[]string{"--response", "h", "--factor", "mix", "--transform", "log"}, []string{"Analysed on the log scale", "Analysis of variance"}},
	} {
		t.Run(strings.Join(tc.args, " "), func(t *testing.T) {
			code, out, errs := runArgs(t, append([]string{"analyze", path}, tc.args...)...)
			if code != 0 {
				t.Fatalf("exit %d: %s", code, errs)
			}
			for _, w := range tc.want {
				if !strings.Contains(out, w) {
					t.Errorf("output lacks %q:\n%s", w, out)
				}
			}
		})
	}
	// JSON: one document with the method under "methods".
	code, out, errs := runArgs(t, "analyze", path, "--response", "h", "--factor", "mix", "--method", "welch", "--json")
	var doc struct {
		Format  string
		Methods []struct{ Response, Method string }
	}
	if code != 0 || json.Unmarshal([]byte(out), &doc) != nil || doc.Format != "allot.analysis/v1" || len(doc.Methods) != 1 || doc.Methods[0].Method != "welch" {
		t.Fatalf("json: exit %d %s\n%s", code, errs, out)
	}
	for _, bad := range [][]string{
		{"--method", "magic"}, {"--family", "gamma"}, {"--transform", "cube"}, {"--family", "poisson", "--method", "welch"},
		{"--method", "rank", "--transform", "log"}, {"--family", "binomial"},
	} {
		code, _, errs := runArgs(t, append([]string{"analyze", path, "--response", "germ", "--factor", "mix"}, bad...)...)
		if code != exitUsage || !strings.Contains(errs, "--") {
			t.Errorf("%v: exit %d %s", bad, code, errs)
		}
	}
}

// TestAnalyzeDeclaredKindsAndTimes: a workbook's count response is analysed
// by the Poisson GLM by itself, and responses at several times by the split
// plot in time or a summary.
func TestAnalyzeDeclaredKindsAndTimes(t *testing.T) {
	dir := t.TempDir()
	wb, filled := filepath.Join(dir, "c.xlsx"), filepath.Join(dir, "c-filled.xlsx")
	if code, _, errs := runArgs(t, "layout", "--factor", "diet=chow,fat", "--reps", "5", "--response", "lesions:count", "--seed", "3", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	if err := workbook.Fill(wb, filled, [][]float64{{2, 5, 3, 6, 1, 7, 2, 8, 3, 6}}, "", false); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runArgs(t, "analyze", filled)
	if code != 0 || !strings.Contains(out, "Poisson model (log link) of lesions") {
		t.Fatalf("count kind: exit %d %s\n%s", code, errs, out)
	}
	wb, filled = filepath.Join(dir, "t.xlsx"), filepath.Join(dir, "t-filled.xlsx")
	if code, _, errs := runArgs(t, "layout", "--factor", "diet=chow,fat", "--reps", "4", "--covariate", "start_g", "--response", "w", "--times", "0,7,14", "--seed", "3", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	start := []float64{20, 21, 19, 22, 20, 23, 21, 20}
	w0 := []float64{20, 21, 19, 22, 20, 23, 21, 20}
	w7 := []float64{24, 26, 23, 27, 25, 29, 26, 24}
	w14 := []float64{28, 32, 27, 33, 29, 36, 31, 28}
	if err := workbook.Fill(wb, filled, [][]float64{start, w0, w7, w14}, "", false); err != nil {
		t.Fatal(err)
	}
	code, out, errs = runArgs(t, "analyze", filled)
	if code != 0 || !strings.Contains(out, "Repeated measurements of w") || !strings.Contains(out, "Mauchly") {
		t.Fatalf("times: exit %d %s\n%s", code, errs, out)
	}
	page := filepath.Join(dir, "rm.html")
	if code, _, errs := runArgs(t, "analyze", filled, "--report", page); code != 0 {
		t.Fatalf("--report: %s", errs)
	}
	if b, _ := os.ReadFile(page); !strings.Contains(string(b), "<svg") || !strings.Contains(string(b), "Mauchly") || strings.Contains(string(b), "<script") {
		t.Errorf("report page lacks the profile plot or the sphericity line, or has a script")
	}
	code, out, errs = runArgs(t, "analyze", filled, "--summary", "slope")
	if code != 0 || !strings.Contains(out, "w (slope)") {
		t.Fatalf("summary: exit %d %s\n%s", code, errs, out)
	}
}

// TestMatchedBlocksSaySo: blocks formed by matching on a covariate are
// named as such in the analysis, beside any --covariate adjustment.
func TestMatchedBlocksSaySo(t *testing.T) {
	dir := t.TempDir()
	list := filepath.Join(dir, "mice.csv")
	os.WriteFile(list, []byte("id,weight\nm1,20.1\nm2,21.4\nm3,19.8\nm4,22.0\nm5,20.5\nm6,23.1\n"), 0o644)
	wb, filled := filepath.Join(dir, "w.xlsx"), filepath.Join(dir, "w-filled.xlsx")
	if code, _, errs := runArgs(t, "layout", "--factor", "diet=chow,fat", "--units", list, "--match-on", "weight", "--response", "gain", "--seed", "2", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	if err := workbook.Fill(wb, filled, [][]float64{{1.2, 2.1, 1.0, 2.4, 1.4, 2.2}}, "", false); err != nil {
		t.Fatal(err)
	}
	code, out, errs := runArgs(t, "analyze", filled)
	if code != 0 || !strings.Contains(out, "formed by matching units on a covariate") {
		t.Fatalf("exit %d %s\n%s", code, errs, out)
	}
}
