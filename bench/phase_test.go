package bench

import (
	"os"
	"testing"
	"time"

	"github.com/allotproject/allot/analyze"
	"github.com/allotproject/allot/design/workbook"
)

func TestPhases(t *testing.T) {
	path := os.Getenv("PHASE_CSV")
	if path == "" {
		t.Skip()
	}
	t0 := time.Now()
	c0 := cpuTime()
	f, _ := os.Open(path)
	obs, _, err := workbook.ReadRoles(f, path, workbook.Roles{Response: "y", Factors: []string{"f1"}}, false)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("read %v cpu %v", time.Since(t0), cpuTime()-c0)
	t0, c0 = time.Now(), cpuTime()
	d := analyze.Data{Response: "y", Values: obs.Values, Units: obs.Units, Where: obs.Cells, Factors: []analyze.Column{{Name: "f1", Values: obs.Levels[0]}}}
	tb, err := analyze.Fit(d, analyze.Options{})
	t.Logf("fit %v cpu %v", time.Since(t0), cpuTime()-c0)
	t0, c0 = time.Now(), cpuTime()
	_, err = analyze.Run(d, analyze.RunOptions{})
	t.Logf("run %v cpu %v %v", time.Since(t0), cpuTime()-c0, tb.N)
}

func BenchmarkReadRoles(b *testing.B) {
	path := os.Getenv("PHASE_CSV")
	if path == "" {
		b.Skip()
	}
	for i := 0; i < b.N; i++ {
		f, _ := os.Open(path)
		workbook.ReadRoles(f, path, workbook.Roles{Response: "y", Factors: []string{"f1"}}, false)
		f.Close()
	}
}
