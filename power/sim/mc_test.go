package sim

import (
	"context"
	"math"
	"strconv"
	"strings"
	"testing"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/power"
	"github.com/allotproject/allot/randomize"
)

func layout(t testing.TB, kind design.Kind, blocks int, reps []int, factors ...design.Factor) design.Layout {
	t.Helper()
	p := design.Plan{Title: "sim", Design: kind, Factors: factors, Reps: reps, Blocks: blocks, BlockName: "block", Seed: 1}
	l, err := randomize.Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

var feed4 = design.Factor{Name: "feed", Levels: []string{"a", "b", "c", "d"}}

func ones(k, r int) []int {
	out := make([]int, k)
	for i := range out {
		out[i] = r
	}
	return out
}

// Balanced designs: simulated power agrees with the exact noncentral-F
// power within 3 Monte-Carlo standard errors.
func TestAgreesWithExactPower(t *testing.T) {
	means := []float64{10, 11, 12, 13}
	tests := []struct {
		name   string
		l      design.Layout
		exact  power.Design
		n      int
		termIx int
	}{
		{"crd one-way", layout(t, design.CRD, 1, ones(4, 5), feed4), power.Design{Factors: []power.Factor{{Name: "feed", Levels: 4}}}, 5, 0},
		{"rcbd", layout(t, design.RCBD, 6, ones(4, 1), feed4), power.Design{Factors: []power.Factor{{Name: "feed", Levels: 4}}, Blocked: true}, 6, 1},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sd := 1.6
			f, _ := power.FFromMeans(means, nil, sd)
			want := tt.exact.Evaluate(tt.n, f, 0.05).Power
			res, err := Run(context.Background(), Spec{Layout: tt.l, Means: means, SDs: []float64{sd}, BlockSD: 2, Alpha: 0.05, Sims: 20000, Seed: 9})
			if err != nil {
				t.Fatal(err)
			}
			got := res.Terms[tt.termIx]
			if math.Abs(got.P-want) > 3*got.SE || !res.FastPath {
				t.Errorf("simulated %.4f ± %.4f, exact %.4f (fast path %v)", got.P, got.SE, want, res.FastPath)
			}
		})
	}
	t.Run("factorial interaction in blocks", func(t *testing.T) {
		n := design.Factor{Name: "N", Levels: []string{"0", "1"}}
		k := design.Factor{Name: "K", Levels: []string{"0", "1", "2"}}
		l := layout(t, design.RCBD, 5, ones(6, 1), n, k)
		cm := []float64{10, 11, 12, 10, 10.5, 10}
		sd := 1.0
		// Exact: f² = Σ (interaction effects)² / (6 σ²).
		var grand float64
		for _, v := range cm {
			grand += v / 6
		}
		row := []float64{(cm[0] + cm[1] + cm[2]) / 3, (cm[3] + cm[4] + cm[5]) / 3}
		col := []float64{(cm[0] + cm[3]) / 2, (cm[1] + cm[4]) / 2, (cm[2] + cm[5]) / 2}
		var ss float64
		for i := 0; i < 2; i++ {
			for j := 0; j < 3; j++ {
				e := cm[3*i+j] - row[i] - col[j] + grand
				ss += e * e / 6
			}
		}
		f := math.Sqrt(ss) / sd
		d := power.Design{Factors: []power.Factor{{Name: "N", Levels: 2}, {Name: "K", Levels: 3}}, Term: []string{"N", "K"}, Blocked: true}
		want := d.Evaluate(5, f, 0.05).Power
		res, err := Run(context.Background(), Spec{Layout: l, Means: cm, SDs: []float64{sd}, BlockSD: 1, Alpha: 0.05, Sims: 20000, Seed: 3})
		if err != nil {
			t.Fatal(err)
		}
		got := res.Terms[3] // block, N, K, N × K
		if got.Name != "N × K" || math.Abs(got.P-want) > 3*got.SE {
			t.Errorf("%s: simulated %.4f ± %.4f, exact %.4f", got.Name, got.P, got.SE, want)
		}
	})
}

func TestTypeIError(t *testing.T) {
	for _, dropout := range []float64{0, 0.15} {
		l := layout(t, design.RCBD, 5, ones(4, 1), feed4)
		res, err := Run(context.Background(), Spec{Layout: l, Means: []float64{5, 5, 5, 5}, SDs: []float64{1}, BlockSD: 1, Dropout: dropout, Alpha: 0.05, Sims: 20000, Seed: 11, SSType: 3})
		if err != nil {
			t.Fatal(err)
		}
		got := res.Terms[1]
		se := math.Sqrt(0.05 * 0.95 / float64(res.Sims-res.Failed))
		if math.Abs(got.P-0.05) > 3*se+float64(res.Failed)/float64(res.Sims) {
			t.Errorf("dropout %g: rejection rate %.4f with equal means (SE %.4f, %d failed)", dropout, got.P, se, res.Failed)
		}
	}
}

func TestReproducibleAcrossWorkers(t *testing.T) {
	l := layout(t, design.CRD, 1, []int{6, 4, 4, 4}, feed4)
	s := Spec{Layout: l, Means: []float64{10, 11, 11, 12}, SDs: []float64{1, 1, 2, 1}, Dropout: 0.1, Alpha: 0.05, Sims: 3000, Seed: 5, PostHoc: "dunnett"}
	s.Workers = 1
	a, err := Run(context.Background(), s)
	if err != nil {
		t.Fatal(err)
	}
	s.Workers = 2
	b, _ := Run(context.Background(), s)
	if a.Terms[0].Hits != b.Terms[0].Hits || a.AnyPair.Hits != b.AnyPair.Hits || a.MeanLost != b.MeanLost {
		t.Errorf("1 worker %+v, 2 workers %+v", a.Terms[0], b.Terms[0])
	}
}

func TestFastPathEqualsEngine(t *testing.T) {
	n := design.Factor{Name: "N", Levels: []string{"0", "1"}}
	k := design.Factor{Name: "K", Levels: []string{"0", "1", "2"}}
	l := layout(t, design.RCBD, 3, ones(6, 1), n, k)
	s := Spec{Layout: l, Means: []float64{1, 2, 3, 4, 5, 7}, SDs: []float64{1}, BlockSD: 1, Alpha: 0.05, Sims: 1, Seed: 1, SSType: 3}
	d := designData(l)
	eng, _ := analyzeEngine(d)
	w := newWorker(s, eng, eng.Terms, nil, true)
	c := counts{terms: make([]int, len(eng.Terms))}
	w.one(0, &c)
	fast := w.sufficient()
	slow, err := eng.Fit(w.y, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i := range fast.SS {
		if math.Abs(fast.SS[i]-slow.SS[i]) > 1e-9*math.Max(1, slow.SS[i]) || fast.DF[i] != slow.DF[i] {
			t.Errorf("term %d: fast %g/%d, QR %g/%d", i, fast.SS[i], fast.DF[i], slow.SS[i], slow.DF[i])
		}
	}
	if math.Abs(fast.ResSS-slow.ResSS) > 1e-9*slow.ResSS || fast.ResDF != slow.ResDF {
		t.Errorf("residual fast %g/%d, QR %g/%d", fast.ResSS, fast.ResDF, slow.ResSS, slow.ResDF)
	}
}

func TestCancel(t *testing.T) {
	l := layout(t, design.RCBD, 6, ones(4, 1), feed4)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	res, err := Run(ctx, Spec{Layout: l, Means: []float64{1, 2, 3, 4}, SDs: []float64{1}, Alpha: 0.05, Sims: 1000000, Seed: 1})
	if err != nil || !res.Cancelled || res.Sims >= 1000000 {
		t.Errorf("cancelled run: %+v %v", res.Sims, err)
	}
}

func BenchmarkRCBD4x6(b *testing.B) {
	l := layout(b, design.RCBD, 6, ones(4, 1), feed4)
	s := Spec{Layout: l, Means: []float64{10, 11, 12, 13}, SDs: []float64{1.5}, BlockSD: 1, Alpha: 0.05, Sims: 10000, Seed: 1}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := Run(context.Background(), s); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFactorial3x2Blocks4Dropout(b *testing.B) {
	a := design.Factor{Name: "A", Levels: []string{"1", "2", "3"}}
	c := design.Factor{Name: "B", Levels: []string{"1", "2"}}
	l := layout(b, design.RCBD, 4, ones(6, 1), a, c)
	s := Spec{Layout: l, Means: []float64{10, 11, 12, 10, 12, 14}, SDs: []float64{1.5}, BlockSD: 1, Dropout: 0.1, Alpha: 0.05, SSType: 3, Sims: 10000, Seed: 1}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := Run(context.Background(), s); err != nil {
			b.Fatal(err)
		}
	}
}

// analyzeEngine builds the engine of a design (Type III).
func analyzeEngine(d analyze.Data) (*analyze.Engine, error) { return analyze.NewEngine(d, 3) }

// Too few survivors for the model (2 units per group, each lost with
// probability 0.5) count as not analysable instead of reaching the QR
// factorisation with fewer rows than columns.
func TestFewSurvivorsNotAnalysable(t *testing.T) {
	a, err := Ask(context.Background(), Question{Request: power.Request{Means: []float64{1, 2}, SD: 1, N: 2, Dropout: 0.5}, Sims: 500, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	r := a.Result
	if r.Failed == 0 || r.Failed >= r.Sims || r.Terms[0].Hits > r.Sims-r.Failed {
		t.Errorf("failed %d of %d, hits %d", r.Failed, r.Sims, r.Terms[0].Hits)
	}
	// In blocks too: 2 blocks of 3 treatments lose units independently.
	a, err = Ask(context.Background(), Question{Request: power.Request{Means: []float64{1, 2, 3}, SD: 1, N: 2, Blocked: true, Dropout: 0.6}, BlockSD: 1, Sims: 300, Seed: 2})
	if err != nil || a.Result.Failed == 0 {
		t.Errorf("blocks: %v, failed %d", err, a.Result.Failed)
	}
}

// The exact comparison printed beside a simulated factorial term is that
// term's own noncentral-F power: for A×B of the cell means 10, 10, 10, 14
// with SD 2 and 10 per cell, λ = 10 and power 0.8680 (scipy ncf, df 1, 36;
// testdata/reference/plan_checks.json).
func TestAskExactUsesTermComponent(t *testing.T) {
	q := Question{Request: power.Request{Factors: []power.Factor{{Name: "A", Levels: 2}, {Name: "B", Levels: 2}}, Term: []string{"A", "B"},
		Means: []float64{10, 10, 10, 14}, SD: 2, N: 10}, Sims: 4000, Seed: 4}
	a, err := Ask(context.Background(), q)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(a.Exact-0.8679842825948999) > 1e-9 || a.Term != "A × B" {
		t.Fatalf("exact %.10f for %q, want 0.8679842826", a.Exact, a.Term)
	}
	for _, e := range a.Result.Terms {
		if e.Name == "A × B" && math.Abs(e.P-a.Exact) > 4*e.SE {
			t.Errorf("simulated %.4f ± %.4f, exact %.4f", e.P, e.SE, a.Exact)
		}
	}
}

// One-sided Dunnett in the expected direction has more power than
// two-sided, and the opposite direction almost none; comparisons are
// counted whatever the F test says.
func TestDunnettDirection(t *testing.T) {
	base := power.Request{Means: []float64{10, 9, 8}, SD: 1.5, N: 6}
	run := func(sides int, dir string) Answer {
		r := base
		r.Sides, r.Direction = sides, dir
		a, err := Ask(context.Background(), Question{Request: r, PostHoc: "dunnett", Sims: 3000, Seed: 8})
		if err != nil {
			t.Fatal(err)
		}
		return a
	}
	two, lower, higher := run(2, ""), run(1, "lower"), run(1, "higher")
	if !(lower.Result.AnyPair.P > two.Result.AnyPair.P && higher.Result.AnyPair.P < 0.05) {
		t.Errorf("any comparison: two-sided %.3f, lower %.3f, higher %.3f", two.Result.AnyPair.P, lower.Result.AnyPair.P, higher.Result.AnyPair.P)
	}
	if !strings.Contains(lower.PostHocRule, "whatever the F test says") || !strings.Contains(lower.PostHocRule, "lower") {
		t.Errorf("rule %q", lower.PostHocRule)
	}
}

// With units lost from complete blocks, the simulated comparisons use the
// least-squares means and model-based SEs that allot analyze reports
// (analyze.Fit, Table.LSMeans and DiffSE), not the raw means.
func TestLSDiffsMatchAnalysis(t *testing.T) {
	l := layout(t, design.RCBD, 4, ones(4, 1), feed4)
	s := Spec{Layout: l, Means: []float64{10, 11, 12, 13}, SDs: []float64{1}, BlockSD: 2, Dropout: 0.2, Alpha: 0.05, Sims: 1, Seed: 1, SSType: 3, PostHoc: "tukey"}
	eng, _ := analyzeEngine(designData(l))
	w := newWorker(s, eng, eng.Terms, nil, false)
	checked := 0
	for i := 0; checked < 5 && i < 200; i++ {
		c := counts{terms: make([]int, len(eng.Terms))}
		w.one(i, &c)
		if c.failed > 0 || !w.analysable() {
			continue
		}
		lost := false
		d := designData(l)
		var keepIdx []int
		for u, k := range w.keep {
			if k {
				keepIdx = append(keepIdx, u)
			} else {
				lost = true
			}
		}
		if !lost {
			continue
		}
		sub := analyze.Data{Response: "y", Factors: []analyze.Column{{Name: "feed", Levels: d.Factors[0].Levels}}, Block: &analyze.Column{Name: "block"}}
		for _, u := range keepIdx {
			sub.Values = sub.Values.Append(strconv.FormatFloat(w.y[u], 'g', -1, 64))
			sub.Factors[0].Values = sub.Factors[0].Values.Append(d.Factors[0].Values.At(u))
			sub.Block.Values = sub.Block.Values.Append(d.Block.Values.At(u))
		}
		tab, err := analyze.Fit(sub, analyze.Options{SSType: 3})
		if err != nil {
			t.Fatal(err)
		}
		est, cov, ok := w.lsDiffs()
		if !ok {
			t.Fatal("lsDiffs failed")
		}
		ls := tab.LSMeans(0)
		mse := tab.Residual.MS
		for a := 0; a < 4; a++ {
			for b := a + 1; b < 4; b++ {
				got, want := est[a]-est[b], ls[a].Mean-ls[b].Mean
				gotSE := math.Sqrt(mse * (cov.At(a, a) + cov.At(b, b) - 2*cov.At(a, b)))
				if math.Abs(got-want) > 1e-9 || math.Abs(gotSE-tab.DiffSE(0, a, b)) > 1e-9 {
					t.Errorf("data set %d, %d−%d: diff %g SE %g; analyze %g SE %g", i, a, b, got, gotSE, want, tab.DiffSE(0, a, b))
				}
			}
		}
		checked++
	}
	if checked == 0 {
		t.Fatal("no data set with losses checked")
	}
}
