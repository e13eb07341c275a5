package prob

import (
	"math"
	"testing"
)

// Upper tails: one Tukey or Dunnett adjusted p-value, and the QMC
// integration of a general-correlation Dunnett p-value.
func BenchmarkUpperTails(b *testing.B) {
	b.Run("range/k=6/nu=30", func(b *testing.B) {
		b.ReportAllocs()
		d := StudentizedRange{K: 6, Nu: 30}
		for i := 0; i < b.N; i++ {
			d.Survival(4.3)
		}
	})
	b.Run("dunnett/p=4/nu=30", func(b *testing.B) {
		b.ReportAllocs()
		d := Dunnett{Lambda: []float64{0.6, 0.7, 0.5, 0.65}, Nu: 30, Sides: 2}
		for i := 0; i < b.N; i++ {
			d.Survival(2.6)
		}
	})
	b.Run("mvt/p=4/nu=30", func(b *testing.B) {
		b.ReportAllocs()
		r := [][]float64{{1, 0.5, 0.45, 0.52}, {0.5, 1, 0.48, 0.5}, {0.45, 0.48, 1, 0.47}, {0.52, 0.5, 0.47, 1}}
		for i := 0; i < b.N; i++ {
			NewMVT(r, 30, 2).Survival(2.6)
		}
	})
	b.Run("F", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			FSurvival(35.4+math.Mod(float64(i), 3), 3, 1000)
		}
	})
}
