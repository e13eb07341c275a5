package analyze

import (
	"encoding/json"
	"math"
	"os"
	"regexp"
	"sort"
	"strconv"
	"testing"

	//lint:ignore SA1019 allot-pcg-v1 is defined by this package's PCG stream; go.mod pins it
	"golang.org/x/exp/rand"

	"github.com/allotproject/allot/column"
)

type splitRef struct {
	Cases []struct {
		Name    string
		Blocked bool
		Data    struct {
			Y, A, B, Mp, Block []string
		}
		Classical *struct {
			SS      map[string]float64
			DFA     int     `json:"df_a"`
			DFB     int     `json:"df_b"`
			FA      float64 `json:"f_A"`
			PA      float64 `json:"p_A"`
			FB      float64 `json:"f_B"`
			PB      float64 `json:"p_B"`
			FAB     float64 `json:"f_AB"`
			PAB     float64 `json:"p_AB"`
			SE      []float64
			Satt    float64
			NaivePA float64 `json:"naive_p_A"`
		}
		REML struct {
			SigmaE2 float64 `json:"sigma_e2"`
			SigmaM2 float64 `json:"sigma_m2"`
			FE      []float64
			FENames []string `json:"fe_names"`
		}
		Checks struct {
			Resid, Deleted []float64
			W              float64 `json:"shapiro_w"`
			P              float64 `json:"shapiro_p"`
			DF             int
		}
	}
}

func loadSplit(t *testing.T) splitRef {
	t.Helper()
	b, err := os.ReadFile("../testdata/reference/splitplot.json")
	if err != nil {
		t.Fatal(err)
	}
	var r splitRef
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	return r
}

func splitData(c struct{ Y, A, B, Mp, Block []string }, blocked bool) SplitPlot {
	// Levels in sorted order, as patsy codes them (first appearance
	// changes when a sub-plot is missing).
	d := SplitPlot{Response: "y", Values: c.Y, Whole: Column{Name: "A", Values: column.Of(c.A), Levels: sortedLevels(c.A)},
		Sub: Column{Name: "B", Values: column.Of(c.B), Levels: sortedLevels(c.B)}, MainPlot: Column{Name: "main plot", Values: column.Of(c.Mp)}}
	if blocked {
		d.Block = &Column{Name: "block", Values: column.Of(c.Block), Levels: sortedLevels(c.Block)}
	}
	return d
}

// TestSplitPlotReference compares with testdata/reference/splitplot.json
// (gen_splitplot.py: nested statsmodels OLS fits for the strata, Gomez and
// Gomez's formulas in numpy, statsmodels MixedLM REML).
func TestSplitPlotReference(t *testing.T) {
	for _, c := range loadSplit(t).Cases {
		if c.Classical == nil {
			continue
		}
		t.Run(c.Name, func(t *testing.T) {
			r, err := SplitPlotANOVA(splitData(c.Data, c.Blocked))
			if err != nil {
				t.Fatal(err)
			}
			w := c.Classical
			rows := map[string]StratumTerm{}
			for _, tm := range r.Terms {
				rows[tm.Source] = tm
			}
			refNear(t, "SS A", rows["A"].SS, w.SS["A"], 1e-9)
			refNear(t, "SS B", rows["B"].SS, w.SS["B"], 1e-9)
			refNear(t, "SS A × B", rows["A × B"].SS, w.SS["AB"], 1e-9)
			refNear(t, "error (b)", r.MSb*float64(r.DFb), w.SS["Eb"], 1e-9)
			refNear(t, "error (a)", r.MSa*float64(r.DFa), w.SS["Ea"], 1e-9)
			if r.DFa != w.DFA || r.DFb != w.DFB {
				t.Errorf("error df %d, %d; want %d, %d", r.DFa, r.DFb, w.DFA, w.DFB)
			}
			refNear(t, "F A", rows["A"].F, w.FA, 1e-9)
			refNear(t, "p A", rows["A"].P, w.PA, 1e-8)
			refNear(t, "F B", rows["B"].F, w.FB, 1e-9)
			refNear(t, "F A × B", rows["A × B"].F, w.FAB, 1e-9)
			refNear(t, "p A × B", rows["A × B"].P, w.PAB, 1e-8)
			for i, se := range w.SE {
				refNear(t, r.Diffs[i].Kind, r.Diffs[i].SE, se, 1e-10)
			}
			refNear(t, "Satterthwaite df", r.Diffs[3].DF, w.Satt, 1e-10)
			refNear(t, "naive p", r.NaiveWholeP, w.NaivePA, 1e-8)
			if r.NaiveWholeP >= rows["A"].P {
				t.Logf("naive p %.4g not below the right one %.4g in this data set", r.NaiveWholeP, rows["A"].P)
			}
		})
	}
}

var feName = regexp.MustCompile(`S\.[ab](\d+)\]`)

// TestSplitPlotREMLReference: variance components and fixed effects agree
// with statsmodels' MixedLM (REML); for balanced data the REML F tests and
// Satterthwaite df equal the two-stratum ones (a known identity).
func TestSplitPlotREMLReference(t *testing.T) {
	for _, c := range loadSplit(t).Cases {
		t.Run(c.Name, func(t *testing.T) {
			d := splitData(c.Data, c.Blocked)
			r, err := SplitPlotREML(d)
			if err != nil {
				t.Fatal(err)
			}
			refNear(t, "σ²_e", r.SigmaE2, c.REML.SigmaE2, 5e-5) // statsmodels' optimiser tolerance
			refNear(t, "σ²_m", r.SigmaM2, c.REML.SigmaM2, 5e-5)
			// Map statsmodels' names (first factor fastest in
			// interactions) to allot's columns (first factor slowest).
			nb := 0
			if c.Blocked {
				nb = distinct(c.Data.Block) - 1
			}
			na, nbb := distinct(c.Data.A)-1, distinct(c.Data.B)-1
			for k, name := range c.REML.FENames {
				idx := k
				if m := feName.FindAllStringSubmatch(name, -1); len(m) == 2 {
					i, _ := strconv.Atoi(m[0][1])
					j, _ := strconv.Atoi(m[1][1])
					idx = 1 + nb + na + nbb + (i-1)*nbb + (j - 1)
				}
				refNear(t, name, r.Beta[idx], c.REML.FE[k], 1e-5)
			}
			if c.Classical != nil {
				cl, err := SplitPlotANOVA(d)
				if err != nil {
					t.Fatal(err)
				}
				rows := map[string]StratumTerm{}
				for _, tm := range cl.Terms {
					rows[tm.Source] = tm
				}
				for _, tm := range r.Terms {
					want, ok := rows[tm.Source]
					if !ok || tm.Source == "block" {
						continue
					}
					refNear(t, tm.Source+" F (REML vs strata)", tm.F, want.F, 1e-5)
					wdf := float64(cl.DFb)
					if tm.Source == "A" {
						wdf = float64(cl.DFa)
					}
					if math.Abs(tm.DDF-wdf) > 1e-3*wdf {
						t.Errorf("%s Satterthwaite df %.5g, want %g", tm.Source, tm.DDF, wdf)
					}
				}
			}
			t.Logf("%s: σ²_e %.5g σ²_m %.5g; %v", c.Name, r.SigmaE2, r.SigmaM2, r.Terms)
		})
	}
}

func sortedLevels(v []string) []string {
	m := map[string]bool{}
	var out []string
	for _, s := range v {
		if !m[s] {
			m[s] = true
			out = append(out, s)
		}
	}
	sort.Strings(out)
	return out
}

func distinct(v []string) int {
	m := map[string]bool{}
	for _, s := range v {
		m[s] = true
	}
	return len(m)
}

// TestSplitPlotTypeI: with no whole-plot effect and main plots that vary
// (SD 2 against a sub-plot SD of 1), the whole-plot F against error (a)
// rejects at about alpha (within 3 Monte-Carlo SE), while the naive
// one-stratum F, which treats every pot as randomised on its own, rejects
// far more often: the reason the design's strata matter.
func TestSplitPlotTypeI(t *testing.T) {
	sims := 2000
	if testing.Short() {
		sims = 400
	}
	r := rand.New(rand.NewSource(20261206))
	var right, naive int
	const a, b, reps = 3, 4, 4
	for s := 0; s < sims; s++ {
		var d SplitPlot
		d.Response = "y"
		d.Whole.Name, d.Sub.Name, d.MainPlot.Name = "A", "B", "mp"
		blk := Column{Name: "block"}
		mp := 0
		for rep := 0; rep < reps; rep++ {
			be := r.NormFloat64()
			for i := 0; i < a; i++ {
				mp++
				me := 2 * r.NormFloat64()
				for j := 0; j < b; j++ {
					y := 10 + be + me + 0.5*float64(j) + r.NormFloat64()
					d.Values = append(d.Values, strconv.FormatFloat(y, 'g', -1, 64))
					d.Whole.Values = d.Whole.Values.Append(strconv.Itoa(i))
					d.Sub.Values = d.Sub.Values.Append(strconv.Itoa(j))
					d.MainPlot.Values = d.MainPlot.Values.Append(strconv.Itoa(mp))
					blk.Values = blk.Values.Append(strconv.Itoa(rep))
				}
			}
		}
		d.Block = &blk
		res, err := SplitPlotANOVA(d)
		if err != nil {
			t.Fatal(err)
		}
		for _, tm := range res.Terms {
			if tm.Source == "A" && tm.P < 0.05 {
				right++
			}
		}
		if res.NaiveWholeP < 0.05 {
			naive++
		}
	}
	pr, pn := float64(right)/float64(sims), float64(naive)/float64(sims)
	se := math.Sqrt(0.05 * 0.95 / float64(sims))
	if math.Abs(pr-0.05) > 3*se {
		t.Errorf("whole-plot test rejects %.3f of null data sets, want 0.05 ± %.3f", pr, 3*se)
	}
	if pn < 0.15 {
		t.Errorf("naive test rejects only %.3f: expected far above alpha", pn)
	}
	t.Logf("type I error: whole-plot F %.3f (SE %.3f), naive one-stratum F %.3f", pr, se, pn)
}

// TestSplitPlotFactorialWholePlots: 2 × 2 whole-plot treatments are split
// into their main effects and interaction in the whole-plot stratum, and
// their interactions with the sub-plot factor in the sub-plot stratum,
// as nested statsmodels OLS fits give them
// (testdata/reference/splitplot_factorial.json, gen_splitplot_factorial.py).
func TestSplitPlotFactorialWholePlots(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/splitplot_factorial.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Data struct{ Y, Light, Co2, Variety, Mp []string }
		SS   map[string]float64
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	var whole []string
	for i := range ref.Data.Light {
		whole = append(whole, ref.Data.Light[i]+" × "+ref.Data.Co2[i])
	}
	d := SplitPlot{Response: "y", Values: ref.Data.Y, Whole: Column{Name: "light × co2", Values: column.Of(whole)},
		Sub: Column{Name: "variety", Values: column.Of(ref.Data.Variety)}, MainPlot: Column{Name: "main plot", Values: column.Of(ref.Data.Mp)},
		WholeFactors: []Column{{Name: "light", Values: column.Of(ref.Data.Light), Levels: []string{"12h", "16h"}}, {Name: "co2", Values: column.Of(ref.Data.Co2), Levels: []string{"low", "high"}}},
		SubFactors:   []Column{{Name: "variety", Values: column.Of(ref.Data.Variety)}}}
	res, err := SplitPlotANOVA(d)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]StratumTerm{}
	for _, tm := range res.Terms {
		got[tm.Source] = tm
	}
	for name, w := range ref.SS {
		g, ok := got[name]
		if !ok {
			t.Fatalf("no row %q (rows %v)", name, res.Terms)
		}
		refNear(t, name+" SS", g.SS, w, 1e-9)
		wantErr := "error (b)"
		if name == "light" || name == "co2" || name == "light × co2" {
			wantErr = "error (a)"
		}
		if g.Error != wantErr {
			t.Errorf("%s tested against %s, want %s", name, g.Error, wantErr)
		}
	}
}

// TestSplitPlotCellMeans: the cell means are the averages of each whole ×
// sub cell's values (computed here from the texts), whole-plot level
// slowest, with every cell once.
func TestSplitPlotCellMeans(t *testing.T) {
	for _, c := range loadSplit(t).Cases {
		t.Run(c.Name, func(t *testing.T) {
			d := splitData(c.Data, c.Blocked)
			cells, err := SplitPlotCellMeans(d)
			if err != nil {
				t.Fatal(err)
			}
			sum, n := map[[2]string]float64{}, map[[2]string]int{}
			for i, v := range d.Values {
				x, err := strconv.ParseFloat(v, 64)
				if err != nil {
					t.Fatal(err)
				}
				k := [2]string{d.Whole.Values.At(i), d.Sub.Values.At(i)}
				sum[k] += x
				n[k]++
			}
			if len(cells) != len(n) {
				t.Fatalf("%d cells, want %d", len(cells), len(n))
			}
			for i, cl := range cells {
				k := [2]string{cl.A, cl.B}
				if cl.N != n[k] || math.Abs(cl.Mean-sum[k]/float64(n[k])) > 1e-12*math.Abs(cl.Mean) {
					t.Errorf("cell %s × %s: n %d mean %.15g, want %d %.15g", cl.A, cl.B, cl.N, cl.Mean, n[k], sum[k]/float64(n[k]))
				}
				if i > 0 && cells[i-1].A != cl.A {
					// The whole-plot level varies slowest: one run each.
					for _, prev := range cells[:i] {
						if prev.A == cl.A {
							t.Errorf("whole-plot level %s comes in two runs", cl.A)
						}
					}
				}
			}
		})
	}
}

// TestSplitPlotChecksReference: the sub-plot residual checks against
// testdata/reference/splitplot.json ("checks": the residuals of the
// statsmodels OLS fit within main plots, its externally studentized
// residuals, scipy's Shapiro–Wilk), balanced and with sub-plots missing.
func TestSplitPlotChecksReference(t *testing.T) {
	flagged := 0
	for _, c := range loadSplit(t).Cases {
		t.Run(c.Name, func(t *testing.T) {
			d := splitData(c.Data, c.Blocked)
			for i := range c.Data.Y {
				d.Units = append(d.Units, "u"+strconv.Itoa(i))
			}
			a := SplitPlotChecks(d, 0.05)
			w := c.Checks
			flagged += checkResiduals(t, a, w.W, w.P, w.Resid, w.Deleted)
		})
	}
	if flagged == 0 {
		t.Error("no case flags a unit: the outlier check is not tested")
	}
}
