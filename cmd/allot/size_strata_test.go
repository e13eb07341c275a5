package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"strings"
	"testing"
)

// TestSizeSplitPlotReference evaluates allot size --design split-plot at
// the cases of testdata/reference/splitplot_power.json (scipy.stats.ncf,
// gen_splitplot_power.py) and compares each test's df, noncentrality and
// power.
func TestSizeSplitPlotReference(t *testing.T) {
	b, err := os.ReadFile("../../testdata/reference/splitplot_power.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			A, B    int
			Means   []float64
			SDMain  float64 `json:"sd_main"`
			SDSub   float64 `json:"sd_sub"`
			Blocked bool
			R       int
			Tests   []struct {
				DF1, DF2, Lambda, Power float64
			}
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	for i, c := range ref.Cases {
		var ms []string
		for _, m := range c.Means {
			ms = append(ms, fmt.Sprint(m))
		}
		args := []string{"size", "--design", "split-plot", "--whole-plot", fmt.Sprintf("A=%d", c.A), "--sub-plot", fmt.Sprintf("B=%d", c.B),
			"--means", strings.Join(ms, ","), "--sd-main", fmt.Sprint(c.SDMain), "--sd-sub", fmt.Sprint(c.SDSub), "--n", fmt.Sprint(c.R), "--json"}
		if c.Blocked {
			args = append(args, "--in-blocks")
		}
		code, out, errs := runArgs(t, args...)
		if code != 0 {
			t.Fatalf("case %d: exit %d: %s", i, code, errs)
		}
		var got struct {
			Tests []struct {
				DF1, DF2, Power float64
				Lambda          float64 `json:"noncentrality"`
			}
		}
		if err := json.Unmarshal([]byte(out), &got); err != nil {
			t.Fatal(err)
		}
		for j, w := range c.Tests {
			g := got.Tests[j]
			if g.DF1 != w.DF1 || g.DF2 != w.DF2 {
				t.Errorf("case %d test %d: df %g, %g; reference %g, %g", i, j, g.DF1, g.DF2, w.DF1, w.DF2)
			}
			near(t, fmt.Sprintf("case %d test %d noncentrality", i, j), g.Lambda, w.Lambda, 1e-12)
			near(t, fmt.Sprintf("case %d test %d power", i, j), g.Power, w.Power, 1e-8)
		}
	}
}

func TestSizeSplitPlotSolve(t *testing.T) {
	code, out, errs := runArgs(t, "size", "--design", "split-plot", "--whole-plot", "light=low,high", "--sub-plot", "variety=3",
		"--means", "10,11,12,12,13,14", "--sd-main", "1.5", "--sd-sub", "1", "--whole-plot-name", "chamber")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	golden(t, "size_split_plot", out)
	// The solved r is the least reaching the target: r − 1 falls short.
	code, out, _ = runArgs(t, "size", "--design", "split-plot", "--whole-plot", "light=low,high", "--sub-plot", "variety=3",
		"--means", "10,11,12,12,13,14", "--sd-main", "1.5", "--sd-sub", "1", "--n", "11", "--json")
	var got struct{ Tests []struct{ Power float64 } }
	if code != 0 || json.Unmarshal([]byte(out), &got) != nil || got.Tests[0].Power >= 0.8 {
		t.Errorf("r = 11: exit %d, %s", code, out)
	}
}

func TestSizeSplitPlotBadInput(t *testing.T) {
	base := []string{"size", "--design", "split-plot", "--whole-plot", "A=2", "--sub-plot", "B=3", "--sd-main", "1", "--sd-sub", "1"}
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"--means", "1,2,3"}, "--means: 3 values for the 2 × 3 = 6 cells of A × B"},
		{[]string{"--means", "1,2,3,4,5,6", "--f", "0.25"}, "--f is not available with --design split-plot"},
		{[]string{"--means", "1,2,3,4,5,6", "--term", "C"}, "--term C: give A (the whole-plot test, the default), B or A,B"},
		{[]string{"--means", "1,2,3,4,5,6", "--n", "1"}, "--n 1: give at least 2"},
		{[]string{"--means", "1,2,3,4,5,6", "--justify"}, "--justify is not available"},
	}
	for _, tt := range tests {
		t.Run(tt.want, func(t *testing.T) {
			code, _, errs := runArgs(t, append(base, tt.args...)...)
			if code != exitUsage || !strings.Contains(errs, tt.want) {
				t.Errorf("exit %d, %q; want 2 and %q", code, errs, tt.want)
			}
		})
	}
}

// TestSizeSplitPlotSimulate: without losses the simulated power of each
// test (allot's own analysis on simulated split plots) is within 3 MC SE of
// the exact noncentral-F power.
func TestSizeSplitPlotSimulate(t *testing.T) {
	sims := "2000"
	if testing.Short() {
		sims = "400"
	}
	code, out, errs := runArgs(t, "size", "--design", "split-plot", "--whole-plot", "light=2", "--sub-plot", "variety=3",
		"--means", "20,22,21,23.5,25.5,24", "--sd-main", "1", "--sd-sub", "1.2", "--n", "3", "--simulate", "--sims", sims, "--seed", "11", "--json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	var got struct {
		Tests     []struct{ Power float64 }
		Simulated struct {
			Sims  int
			Terms []struct {
				P  float64 `json:"power"`
				SE float64 `json:"mc_se"`
			}
		}
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Simulated.Terms) != 3 || fmt.Sprint(got.Simulated.Sims) != sims {
		t.Fatalf("simulated %+v", got.Simulated)
	}
	for i, e := range got.Simulated.Terms {
		se := math.Max(e.SE, 0.005)
		if math.Abs(e.P-got.Tests[i].Power) > 3*se {
			t.Errorf("test %d: simulated %.4f ± %.4f, exact %.4f", i, e.P, e.SE, got.Tests[i].Power)
		}
	}
}
