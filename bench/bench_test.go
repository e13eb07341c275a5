package bench

import (
	"fmt"
	"os"
	"path/filepath"
	"syscall"
	"testing"
	"time"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design/workbook"
	"github.com/allotproject/allot/randomize"
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
	peak := startPeak()
	b.ResetTimer()
	cpu := cpuTime()
	for i := 0; i < b.N; i++ {
		analyzeCSV(b, path, t, opt)
	}
	reportCPU(b, cpu)
	peak.report(b)
}

// cpuTime returns the process's user and system CPU time. The benchmarks
// report it per operation beside the wall time (cpu-ns/op), which on a
// shared machine says more about the work done than the wall clock.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	syscall.Getrusage(syscall.RUSAGE_SELF, &ru)
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func reportCPU(b *testing.B, start time.Duration) {
	b.ReportMetric(float64(cpuTime()-start)/float64(b.N), "cpu-ns/op")
}

// Target: ≤ 0.3 s and ≤ 100 MiB peak (issue 15).
func BenchmarkOneWayCSV1e6(b *testing.B) {
	benchCSV(b, Inputs()["oneway1e6"], analyze.RunOptions{})
}

// Target: ≤ 0.3 s (issue 15).
func BenchmarkFactorial3x4x2Blocks5CSV1e5(b *testing.B) {
	benchCSV(b, Inputs()["factorial1e5"], analyze.RunOptions{Options: analyze.Options{SSType: 3}})
}

// Target: ≤ 30 ms (issue 15).
func BenchmarkTukeyK10CSV1000(b *testing.B) {
	benchCSV(b, Inputs()["tukey1000"], analyze.RunOptions{})
}

// Target: ≤ 2 s (issue 23): 100,000 units in 25,000 blocks of 4.
func BenchmarkBlocks25000x4CSV(b *testing.B) {
	benchCSV(b, Inputs()["blocks25000"], analyze.RunOptions{})
}

// Target: ≤ 1.5 s (issue 15): `allot layout` of 100,000 units to .xlsx.
func BenchmarkLayoutXLSX1e5(b *testing.B) {
	p := BigPlan(100_000)
	dir := b.TempDir()
	b.ReportAllocs()
	peak := startPeak()
	b.ResetTimer()
	cpu := cpuTime()
	defer peak.report(b)
	defer reportCPU(b, cpu)
	for i := 0; i < b.N; i++ {
		l, err := randomize.Assign(p)
		if err != nil {
			b.Fatal(err)
		}
		if err := workbook.Write(filepath.Join(dir, fmt.Sprintf("w%d.xlsx", i)), l, Meta(), false); err != nil {
			b.Fatal(err)
		}
	}
}

// Target: ≤ 1.5 s and ≤ 150 MiB (issue 15): `allot check` of 100,000 units.
func BenchmarkCheck1e5(b *testing.B) {
	path := filepath.Join(b.TempDir(), "filled.xlsx")
	if err := WriteFilledWorkbook(path, 100_000); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	peak := startPeak()
	b.ResetTimer()
	cpu := cpuTime()
	defer peak.report(b)
	defer reportCPU(b, cpu)
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
