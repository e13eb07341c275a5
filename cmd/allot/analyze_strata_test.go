package main

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

// strataRef is testdata/reference/splitplot.json (gen_splitplot.py:
// statsmodels OLS strata and MixedLM REML).
type strataRef struct {
	Cases []struct {
		Name    string
		Blocked bool
		Data    struct{ Y, A, B, Mp, Block []string }
		// Classical is the balanced two-stratum table, nil with missing
		// sub-plots.
		Classical *struct {
			FA   float64 `json:"f_A"`
			PA   float64 `json:"p_A"`
			FB   float64 `json:"f_B"`
			FAB  float64 `json:"f_AB"`
			SE   []float64
			Satt float64
		}
		REML struct {
			SigmaE2 float64 `json:"sigma_e2"`
			SigmaM2 float64 `json:"sigma_m2"`
		}
	}
}

func distinct(v []string) []string {
	seen := map[string]bool{}
	var out []string
	for _, s := range v {
		if !seen[s] {
			seen[s] = true
			out = append(out, s)
		}
	}
	sort.Strings(out)
	return out
}

func near(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Max(1, math.Abs(want)) {
		t.Errorf("%s = %.12g, reference %.12g", what, got, want)
	}
}

// TestAnalyzeSplitPlotReference lays out a split plot with allot layout,
// writes the reference data sets into its CSV (each reference main plot on
// a laid-out main plot of the same whole-plot level and block), runs allot
// analyze --plan and compares with statsmodels (testdata/reference/
// splitplot.json): the two-stratum F tests and SEs of the complete data,
// and the REML variance components when three sub-plots are missing.
func TestAnalyzeSplitPlotReference(t *testing.T) {
	b, err := os.ReadFile("../../testdata/reference/splitplot.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref strataRef
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for ci, c := range ref.Cases {
		t.Run(c.Name, func(t *testing.T) {
			dir := t.TempDir()
			d := c.Data
			aL, bL, blocks := distinct(d.A), distinct(d.B), distinct(d.Block)
			// Reference main plots of each (block, A level), in label order.
			refMP := map[string][]string{}
			for _, mp := range distinct(d.Mp) {
				for i := range d.Mp {
					if d.Mp[i] == mp {
						k := d.A[i]
						if c.Blocked {
							k = d.Block[i] + "/" + k
						}
						refMP[k] = append(refMP[k], mp)
						break
					}
				}
			}
			value := map[string]string{}
			for i := range d.Y {
				value[d.Mp[i]+"/"+d.B[i]] = d.Y[i]
			}
			args := []string{"layout", "--design", "split-plot", "--whole-plot", "A=" + strings.Join(aL, ","), "--sub-plot", "B=" + strings.Join(bL, ","),
				"--whole-plot-name", "chamber", "--response", "y", "--seed", fmt.Sprint(ci + 1)}
			if c.Blocked {
				args = append(args, "--blocks", fmt.Sprint(len(blocks)))
			} else {
				args = append(args, "--reps", fmt.Sprint(len(refMP[aL[0]])))
			}
			lay, csvPath := filepath.Join(dir, "plan.json"), filepath.Join(dir, "data.csv")
			for _, out := range []string{lay, csvPath} {
				if code, _, errs := runArgs(t, append(args, "-o", out)...); code != 0 {
					t.Fatalf("layout: exit %d: %s", code, errs)
				}
			}
			f, _ := os.Open(csvPath)
			rows, err := csv.NewReader(f).ReadAll()
			f.Close()
			if err != nil {
				t.Fatal(err)
			}
			col := map[string]int{}
			for j, h := range rows[0] {
				col[h] = j
			}
			used := map[string]int{}
			ours := map[string]string{} // our main plot → reference main plot
			for _, r := range rows[1:] {
				mp := r[col["Chamber"]]
				if _, ok := ours[mp]; !ok {
					k := r[col["A"]]
					if c.Blocked {
						k = blocks[atoi(t, r[col["Block"]])-1] + "/" + k
					}
					ours[mp] = refMP[k][used[k]]
					used[k]++
				}
				r[col["y"]] = value[ours[mp]+"/"+r[col["B"]]]
			}
			var sb strings.Builder
			w := csv.NewWriter(&sb)
			w.WriteAll(rows)
			os.WriteFile(csvPath, []byte(sb.String()), 0o644)
			for _, format := range []string{"text", "markdown"} {
				code, out, errs := runArgs(t, "analyze", csvPath, "--plan", lay, "--format", format)
				if code != 0 {
					t.Fatalf("analyze --format %s: exit %d: %s", format, code, errs)
				}
				golden(t, fmt.Sprintf("analyze_split_plot_%d_%s", ci+1, format), out)
			}
			code, out, errs := runArgs(t, "analyze", csvPath, "--plan", lay, "--json")
			if code != 0 {
				t.Fatalf("analyze: exit %d: %s", code, errs)
			}
			var got struct {
				Method    string
				SplitPlot *struct {
					Terms []struct {
						Source string
						F, P   float64
					}
					Diffs []struct{ SE, DF float64 } `json:"difference_ses"`
				} `json:"split_plot"`
				REML *struct {
					SigmaE2 float64 `json:"var_residual"`
					SigmaM2 float64 `json:"var_main_plot"`
				} `json:"mixed_model"`
			}
			if err := json.Unmarshal(strataResponse(t, out), &got); err != nil {
				t.Fatalf("%v: %s", err, out)
			}
			if w := c.Classical; w != nil {
				if got.SplitPlot == nil {
					t.Fatalf("no two-stratum table: %s", out)
				}
				f := map[string]float64{}
				for _, tm := range got.SplitPlot.Terms {
					f[tm.Source] = tm.F
					if tm.Source == "A" {
						near(t, "p A", tm.P, w.PA, 1e-8)
					}
				}
				near(t, "F A", f["A"], w.FA, 1e-9)
				near(t, "F B", f["B"], w.FB, 1e-9)
				near(t, "F A × B", f["A × B"], w.FAB, 1e-9)
				for i, se := range w.SE {
					near(t, fmt.Sprintf("SE %d", i+1), got.SplitPlot.Diffs[i].SE, se, 1e-10)
				}
				near(t, "Satterthwaite df", got.SplitPlot.Diffs[3].DF, w.Satt, 1e-10)
				return
			}
			if got.REML == nil || !strings.Contains(got.Method, "3 sub-plot value(s) are missing") || !strings.Contains(got.Method, "REML") {
				t.Fatalf("missing sub-plots: method %q, %s", got.Method, out)
			}
			near(t, "σ²_e", got.REML.SigmaE2, c.REML.SigmaE2, 5e-5) // statsmodels' optimiser tolerance
			near(t, "σ²_m", got.REML.SigmaM2, c.REML.SigmaM2, 5e-4)
		})
	}
}

func atoi(t *testing.T, s string) int {
	t.Helper()
	var n int
	if _, err := fmt.Sscan(s, &n); err != nil {
		t.Fatal(err)
	}
	return n
}

// TestAnalyzeLatinReference lays out the 4 × 4 square of seed 7 (the square
// testdata/reference/allot_pcg_v1.py derives), fills in the data of
// latin_layout.json and compares allot analyze with statsmodels' OLS
// (gen_latin_layout.py), complete and with two cells missing.
func TestAnalyzeLatinReference(t *testing.T) {
	b, err := os.ReadFile("../../testdata/reference/latin_layout.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Y     []string
		Cases []struct {
			Name    string
			Missing []int
			Row     struct{ DF, F, P float64 }
			Column  struct{ DF, F, P float64 }
			Feed    struct{ DF, F, P float64 }
			ResidDF float64 `json:"resid_df"`
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	lay, csvPath := filepath.Join(dir, "plan.json"), filepath.Join(dir, "data.csv")
	args := []string{"layout", "--design", "latin", "--factor", "feed=T0,T1,T2,T3", "--response", "gain", "--seed", "7"}
	for _, out := range []string{lay, csvPath} {
		if code, _, errs := runArgs(t, append(args, "-o", out)...); code != 0 {
			t.Fatalf("layout: exit %d: %s", code, errs)
		}
	}
	blank, _ := os.ReadFile(csvPath)
	for _, c := range ref.Cases {
		t.Run(c.Name, func(t *testing.T) {
			rows, err := csv.NewReader(strings.NewReader(string(blank))).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			miss := map[int]bool{}
			for _, m := range c.Missing {
				miss[m] = true
			}
			for i, r := range rows[1:] {
				if !miss[i+1] {
					r[5] = ref.Y[i] // the gain column
				}
			}
			var sb strings.Builder
			w := csv.NewWriter(&sb)
			w.WriteAll(rows)
			os.WriteFile(csvPath, []byte(sb.String()), 0o644)
			code, out, errs := runArgs(t, "analyze", csvPath, "--plan", lay, "--json")
			if code != 0 {
				t.Fatalf("analyze: exit %d: %s", code, errs)
			}
			var got struct {
				Latin struct {
					Terms []struct {
						Source string
						DF     int
						F, P   float64
					}
					Residual struct{ DF int }
					Missing  int `json:"missing_cells"`
				}
			}
			if err := json.Unmarshal(strataResponse(t, out), &got); err != nil {
				t.Fatal(err)
			}
			want := map[string]struct{ DF, F, P float64 }{"row": c.Row, "column": c.Column, "feed": c.Feed}
			for _, tm := range got.Latin.Terms {
				w, ok := want[tm.Source]
				if !ok {
					t.Errorf("unexpected term %q", tm.Source)
					continue
				}
				delete(want, tm.Source)
				if float64(tm.DF) != w.DF {
					t.Errorf("%s df %d, reference %g", tm.Source, tm.DF, w.DF)
				}
				near(t, tm.Source+" F", tm.F, w.F, 1e-9)
				near(t, tm.Source+" p", tm.P, w.P, 1e-8)
			}
			if len(want) > 0 || float64(got.Latin.Residual.DF) != c.ResidDF || got.Latin.Missing != len(c.Missing) {
				t.Errorf("terms left %v, residual df %d (reference %g), missing %d", want, got.Latin.Residual.DF, c.ResidDF, got.Latin.Missing)
			}
			// The treatment means, in the text, the HTML report and the
			// figure (with intervals in complete squares only).
			html, figs := filepath.Join(dir, c.Name+".html"), filepath.Join(dir, c.Name+"-figs")
			code, out, errs = runArgs(t, "analyze", csvPath, "--plan", lay, "--report", html, "--plots", figs)
			if code != 0 {
				t.Fatalf("analyze --report: exit %d: %s", code, errs)
			}
			title, fig := "Means of feed", "Mean gain by feed"
			if len(c.Missing) > 0 {
				fig = "LS mean gain by feed"
			}
			page, _ := os.ReadFile(html)
			for _, w := range []string{title, "<svg", fig, "Tukey HSD comparisons of feed", "Checks of the residuals", "Shapiro–Wilk"} {
				if !strings.Contains(out+string(page), w) || !strings.Contains(string(page), w) {
					t.Errorf("text or report lacks %q", w)
				}
			}
			if hasLS := strings.Contains(out, "LS mean"); !strings.Contains(out, "95% CI") || hasLS != (len(c.Missing) > 0) {
				t.Errorf("%d cells missing: intervals or LS means missing from the means table:\n%s", len(c.Missing), out)
			}
			if files, _ := os.ReadDir(figs); len(files) != 2 {
				t.Errorf("%d figure files, want the means as SVG and PNG", len(files))
			}
		})
	}
}

// TestAnalyzeSplitPlotWorkbook: a filled .xlsx with two pots lost runs the
// REML mixed model and says why; complete, the two-stratum table.
func TestAnalyzeSplitPlotWorkbook(t *testing.T) {
	dir := t.TempDir()
	wb := filepath.Join(dir, "trial.xlsx")
	if code, _, errs := runArgs(t, "layout", "--design", "split-plot", "--whole-plot", "light=low,high", "--sub-plot", "variety=V1,V2,V3",
		"--blocks", "3", "--block-name", "room", "--whole-plot-name", "chamber", "--response", "dry_g", "--seed", "5", "-o", wb); code != 0 {
		t.Fatal(errs)
	}
	for _, lost := range []int{0, 2} {
		vals := make([]float64, 18)
		for i := range vals {
			// Test inputs: a room, chamber and pot pattern without a scenario.
			vals[i] = 10 + float64(i/6) + 0.7*float64((i*7)%5) + 0.3*float64((i*3)%4)
		}
		for k := 0; k < lost; k++ {
			vals[4+7*k] = math.NaN()
		}
		filled := filepath.Join(dir, fmt.Sprintf("filled%d.xlsx", lost))
		if err := workbookFill(wb, filled, vals); err != nil {
			t.Fatal(err)
		}
		code, out, errs := runArgs(t, "analyze", filled)
		if code != 0 {
			t.Fatalf("exit %d: %s", code, errs)
		}
		want := "two-stratum analysis of variance"
		if lost > 0 {
			want = "2 sub-plot value(s) are missing, so the two-stratum ANOVA (which needs every sub-plot) does not apply: a linear mixed model fitted by REML"
		}
		if !strings.Contains(strings.ToLower(strings.Join(strings.Fields(out), " ")), strings.ToLower(want)) {
			t.Errorf("lost %d: output lacks %q:\n%s", lost, want, out)
		}
		// The HTML report and the figures: the same sections, and the
		// interaction plot of the cell means; never over a file without
		// --force.
		html, figs := filepath.Join(dir, fmt.Sprintf("r%d.html", lost)), filepath.Join(dir, fmt.Sprintf("figs%d", lost))
		if code, _, errs := runArgs(t, "analyze", filled, "--report", html, "--plots", figs); code != 0 {
			t.Fatalf("lost %d: --report --plots: exit %d: %s", lost, code, errs)
		}
		page, err := os.ReadFile(html)
		if err != nil {
			t.Fatal(err)
		}
		section := "Two-stratum analysis of variance: dry_g"
		if lost > 0 {
			section = "Mixed model (REML, chamber random): dry_g"
		}
		for _, w := range []string{section, "<svg", "Mean dry_g by variety and light", "split-plot design", "Cautions"} {
			if !strings.Contains(string(page), w) {
				t.Errorf("lost %d: report lacks %q", lost, w)
			}
		}
		files, _ := os.ReadDir(figs)
		if len(files) != 2 {
			t.Errorf("lost %d: %d figure files, want the interaction plot as SVG and PNG", lost, len(files))
		}
		if code, _, errs := runArgs(t, "analyze", filled, "--report", html); code == 0 || !strings.Contains(errs, "--force") {
			t.Errorf("lost %d: an existing report was replaced without --force (exit %d: %s)", lost, code, errs)
		}
		if again, _ := os.ReadFile(html); string(again) != string(page) {
			t.Errorf("lost %d: the existing report changed", lost)
		}
	}
}

// strataResponse returns the one response of a split-plot or Latin-square
// analysis document (format allot.strata-analysis/v1).
func strataResponse(t *testing.T, out string) []byte {
	t.Helper()
	var doc struct {
		Format    string
		Responses []json.RawMessage
	}
	if err := json.Unmarshal([]byte(out), &doc); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	if doc.Format != "allot.strata-analysis/v1" || len(doc.Responses) != 1 {
		t.Fatalf("format %q, %d responses; want allot.strata-analysis/v1 and one", doc.Format, len(doc.Responses))
	}
	return doc.Responses[0]
}
