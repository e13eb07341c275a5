package bench

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/randomize"

	"golang.org/x/exp/rand"
)

// analyzeCSV is `allot analyze FILE.csv --response y --factor f1 …
// [--block block]` without the rendering: read, fit, follow up, check.
func analyzeCSV(tb testing.TB, path string, t Table, opt analyze.RunOptions) *analyze.Result {
	f, err := os.Open(path)
	if err != nil {
		tb.Fatal(err)
	}
	defer f.Close()
	roles := workbook.Roles{Response: "y", Factors: t.factorNames(), Unit: "unit"}
	if t.Blocks > 0 {
		roles.Block = "block"
	}
	obs, _, err := workbook.ReadRoles(f, path, roles, false)
	if err != nil {
		tb.Fatal(err)
	}
	d := analyze.Data{Response: "y", Values: obs.Values, Units: obs.Units, Where: obs.Cells}
	for i, n := range roles.Factors {
		d.Factors = append(d.Factors, analyze.Column{Name: n, Values: obs.Levels[i]})
	}
	if t.Blocks > 0 {
		d.Block = &analyze.Column{Name: "block", Values: obs.Blocks}
	}
	res, err := analyze.Run(d, opt)
	if err != nil {
		tb.Fatal(err)
	}
	return res
}

func benchCSV(b *testing.B, t Table, opt analyze.RunOptions) {
	path := filepath.Join(b.TempDir(), "t.csv")
	if err := t.WriteCSV(path); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		analyzeCSV(b, path, t, opt)
	}
}

// Target: ≤ 0.3 s (issue 15).
func BenchmarkOneWayCSV1e6(b *testing.B) {
	benchCSV(b, Table{Rows: 1_000_000, Levels: []int{5}, Seed: 1}, analyze.RunOptions{})
}

// Target: ≤ 0.3 s (issue 15).
func BenchmarkFactorial3x4x2Blocks5CSV1e5(b *testing.B) {
	benchCSV(b, Table{Rows: 100_000, Levels: []int{3, 4, 2}, Blocks: 5, Seed: 2}, analyze.RunOptions{Options: analyze.Options{SSType: 3}})
}

// Target: ≤ 30 ms (issue 15).
func BenchmarkTukeyK10CSV1000(b *testing.B) {
	benchCSV(b, Table{Rows: 1000, Levels: []int{10}, Seed: 3}, analyze.RunOptions{})
}

// Target: ≤ 2 s (issue 23): 100,000 units in 25,000 blocks of 4.
func BenchmarkBlocks25000x4CSV(b *testing.B) {
	benchCSV(b, Table{Rows: 100_000, Levels: []int{4}, Blocks: 25_000, Seed: 4}, analyze.RunOptions{})
}

// bigPlan is an RCBD of 10 treatments in units/10 blocks with one response.
func bigPlan(units int) design.Plan {
	lo, hi := 0.0, 1000.0
	return design.Plan{Title: "bench", Design: design.RCBD,
		Factors: []design.Factor{{Name: "t", Levels: []string{"a", "b", "c", "d", "e", "f", "g", "h", "i", "j"}}},
		Reps:    []int{1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, Blocks: units / 10, BlockName: "bench",
		Responses: []design.Response{{Name: "y", Min: &lo, Max: &hi}}, Seed: 1}
}

var meta = workbook.Meta{Version: "bench", Created: time.Date(2026, 12, 1, 0, 0, 0, 0, time.UTC)}

// Target: ≤ 1.5 s (issue 15): `allot layout` of 100,000 units to .xlsx.
func BenchmarkLayoutXLSX1e5(b *testing.B) {
	p := bigPlan(100_000)
	dir := b.TempDir()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		l, err := randomize.Assign(p)
		if err != nil {
			b.Fatal(err)
		}
		if err := workbook.Write(filepath.Join(dir, fmt.Sprintf("w%d.xlsx", i)), l, meta, false); err != nil {
			b.Fatal(err)
		}
	}
}

// FilledWorkbook writes a filled 100,000-unit workbook to path.
func FilledWorkbook(tb testing.TB, path string, units int) {
	p := bigPlan(units)
	l, err := randomize.Assign(p)
	if err != nil {
		tb.Fatal(err)
	}
	blank := path + ".blank.xlsx"
	if err := workbook.Write(blank, l, meta, true); err != nil {
		tb.Fatal(err)
	}
	r := rand.New(rand.NewSource(5))
	vals := make([]float64, len(l.Units))
	for i := range vals {
		vals[i] = math.Round((500+10*r.NormFloat64())*10) / 10
	}
	if err := workbook.Fill(blank, path, [][]float64{vals}, "", true); err != nil {
		tb.Fatal(err)
	}
	os.Remove(blank)
}

// Target: ≤ 1.5 s and ≤ 150 MiB (issue 15): `allot check` of 100,000 units.
func BenchmarkCheck1e5(b *testing.B) {
	path := filepath.Join(b.TempDir(), "filled.xlsx")
	FilledWorkbook(b, path, 100_000)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		fl, err := workbook.Read(path, workbook.ReadOptions{})
		if err != nil {
			b.Fatal(err)
		}
		if fl.Errors() != 0 {
			b.Fatal(fl.Problems[0])
		}
	}
}
