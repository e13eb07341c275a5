package power

import (
	"fmt"
	"testing"

	"github.com/allotproject/allot/prob"
)

func BenchmarkNoncentralFSurvival(b *testing.B) {
	for _, lam := range []float64{5, 50, 500} {
		b.Run(fmt.Sprintf("lambda=%g", lam), func(b *testing.B) {
			b.ReportAllocs()
			d := prob.NoncentralF{D1: 3, D2: 60, Lambda: lam}
			for i := 0; i < b.N; i++ {
				d.Survival(2.76)
			}
		})
	}
}

// BenchmarkSolve is the sample-size solve the issue sets a target for:
// k = 4, f = 0.25, alpha 0.05, power 0.90 (target: under 100 µs).
func BenchmarkSolve(b *testing.B) {
	d := Design{Factors: []Factor{{Name: "g", Levels: 4}}}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := d.Solve(0.25, 0.05, 0.90); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkSolveTTest(b *testing.B) {
	g := TwoGroups{Ratio: 1, Sides: 1}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := g.Solve(0.5, 0.05, 0.9); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSolveEffect solves from expected means with non-integer
// allocation ratios (the noncentrality is recomputed from the group sizes
// at every n) and from a least-favourable difference.
func BenchmarkSolveEffect(b *testing.B) {
	d := Design{Factors: []Factor{{Name: "g", Levels: 4}}, Ratios: []float64{1.5, 1, 1, 1}}
	for _, c := range []struct {
		name string
		e    Effect
	}{{"means", Effect{Means: []float64{10, 11, 12, 13}, SD: 3}}, {"diff", Effect{Diff: 2, SD: 3}}} {
		b.Run(c.name, func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, err := d.SolveEffect(c.e, 0.05, 0.9); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkSolveHugeEffect: effects far beyond any plan (f = 10^6; means
// 10 and 20 with SD 2·10^-5) answer n = 2 at once (milliseconds at most).
func BenchmarkSolveHugeEffect(b *testing.B) {
	for _, c := range []struct {
		name string
		r    Request
	}{{"f=1e6", Request{Groups: 3, F: 1e6}}, {"means-sd-2e-5", Request{Means: []float64{10, 20}, SD: 0.00002}}} {
		b.Run(c.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				if _, err := Compute(c.r); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
