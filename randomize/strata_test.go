package randomize

import (
	"encoding/json"
	"fmt"
	"os"
	"testing"

	"github.com/allotproject/allot/design"
)

func levels(prefix string, n int) []string {
	var l []string
	for i := 0; i < n; i++ {
		l = append(l, fmt.Sprintf("%s%d", prefix, i+1))
	}
	return l
}

// strataPlan builds a split-plot or Latin plan as design.Spec.Resolve does.
func strataPlan(t testing.TB, kind design.Kind, whole, sub, reps, blocks, latinT int, order bool, seed uint64) design.Plan {
	t.Helper()
	st := design.SeedText(seed)
	s := design.Spec{Design: string(kind), Seed: &st, Order: order, Response: []string{"y"}}
	if kind == design.Latin {
		s.Factor = []string{"t=" + join(levels("T", latinT))}
		s.Squares = blocks
	} else {
		s.WholePlot = []string{"A=" + join(levels("A", whole))}
		s.SubPlot = []string{"B=" + join(levels("B", sub))}
		s.Reps = fmt.Sprint(reps)
		if blocks > 1 {
			s.Blocks = blocks
		}
		s.WholePlotName = "chamber"
	}
	p, err := s.Resolve(nil)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

func join(l []string) string {
	out := ""
	for i, s := range l {
		if i > 0 {
			out += ","
		}
		out += s
	}
	return out
}

// TestStrataIndependentImplementation compares split plots (step 9) and
// Latin squares (step 10) with testdata/reference/allot_pcg_v1.py, written
// from the documentation alone, unit for unit.
func TestStrataIndependentImplementation(t *testing.T) {
	b, err := os.ReadFile("../testdata/reference/layouts_strata.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			Name                     string
			Seed                     uint64
			Design                   string
			Whole, Sub, Reps, Blocks int
			T, Squares               int
			Order                    bool
			Units                    []struct {
				Block, Position, Treatment, Order, Row, Col int
				MainPlot                                    int `json:"main_plot"`
			}
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) < 6 {
		t.Fatalf("%d reference cases; regenerate with testdata/reference/allot_pcg_v1.py", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		blocks := c.Blocks
		if c.Design == string(design.Latin) {
			blocks = c.Squares
		}
		p := strataPlan(t, design.Kind(c.Design), c.Whole, c.Sub, c.Reps, blocks, c.T, c.Order, c.Seed)
		l, err := Assign(p)
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		if len(l.Units) != len(c.Units) {
			t.Fatalf("%s: %d units, reference %d", c.Name, len(l.Units), len(c.Units))
		}
		for i, u := range l.Units {
			w := c.Units[i]
			if u.Block != w.Block || u.Position != w.Position || u.Treatment != w.Treatment || u.Order != w.Order || u.Row != w.Row || u.Col != w.Col || u.MainPlot != w.MainPlot {
				t.Errorf("%s unit %d: %+v, reference %+v", c.Name, i, u, w)
				break
			}
		}
	}
}

// TestLatinUniformSmall draws many 3 × 3 squares: all 12 Latin squares of
// order 3 must appear about equally often (the method is uniform for t ≤ 3).
func TestLatinUniformSmall(t *testing.T) {
	n := 6000
	if testing.Short() {
		n = 1200
	}
	count := map[string]int{}
	for seed := uint64(0); seed < uint64(n); seed++ {
		l, err := Assign(strataPlan(t, design.Latin, 0, 0, 0, 1, 3, false, seed))
		if err != nil {
			t.Fatal(err)
		}
		key := ""
		for _, u := range l.Units {
			key += fmt.Sprint(u.Treatment)
		}
		count[key]++
	}
	if len(count) != 12 {
		t.Fatalf("%d distinct 3 × 3 squares drawn, want all 12", len(count))
	}
	// Chi-square with 11 df: the 0.999 quantile is 31.26 (scipy.stats.chi2.ppf(0.999, 11)).
	exp := float64(n) / 12
	chi := 0.0
	for _, c := range count {
		chi += (float64(c) - exp) * (float64(c) - exp) / exp
	}
	if chi > 31.26 {
		t.Errorf("chi-square %.1f over 12 squares: not uniform", chi)
	}
}

// TestSplitPlotStreamsIndependent: the sub-plot order of a main plot does
// not change when another block is added.
func TestSplitPlotStreamsIndependent(t *testing.T) {
	a, err := Assign(strataPlan(t, design.SplitPlot, 3, 4, 1, 3, 0, false, 99))
	if err != nil {
		t.Fatal(err)
	}
	b, err := Assign(strataPlan(t, design.SplitPlot, 3, 4, 1, 4, 0, false, 99))
	if err != nil {
		t.Fatal(err)
	}
	for i := range a.Units {
		if a.Units[i].Treatment != b.Units[i].Treatment || a.Units[i].MainPlot != b.Units[i].MainPlot {
			t.Fatalf("unit %d changed with a fourth block: %+v vs %+v", i, a.Units[i], b.Units[i])
		}
	}
	if err := b.Check(); err != nil {
		t.Fatal(err)
	}
	// A unit moved to another main plot is caught by Check.
	b.Units[0].MainPlot = 2
	if err := b.Check(); err == nil {
		t.Error("Check accepts a unit in the wrong main plot")
	}
}

// BenchmarkAssignSplitPlot lays out 100 blocks of 10 main plots with 10
// sub-plots each (10,000 units).
func BenchmarkAssignSplitPlot(b *testing.B) {
	p := strataPlan(b, design.SplitPlot, 10, 10, 1, 100, 0, false, 1)
	for b.Loop() {
		if _, err := Assign(p); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkAssignLatin lays out 10 squares of 30 × 30 (9,000 units).
func BenchmarkAssignLatin(b *testing.B) {
	p := strataPlan(b, design.Latin, 0, 0, 0, 10, 30, false, 1)
	for b.Loop() {
		if _, err := Assign(p); err != nil {
			b.Fatal(err)
		}
	}
}
